//! The two metrics written by hand as plain Rust functions of the coordinates: all that the
//! generic run-time routes ([`DualRoute`](crate::DualRoute),
//! [`FiniteDifferenceRoute`](crate::FiniteDifferenceRoute)) are given.
//!
//! Generic over [`Scalar`] so the same code runs on `f64` and on dual numbers. Each function
//! computes the ten independent components once and mirrors them.

use geokern::Scalar;

/// A metric g_ab(x) in four dimensions, written by hand, with its parameters bound.
pub trait HandMetric {
    /// The metric g_ab at `x`.
    fn metric<T: Scalar>(&self, x: &[T; 4]) -> [[T; 4]; 4];
}

/// Kerr in Boyer-Lindquist coordinates (t, r, θ, φ), mass `m`, spin `a` (Misner, Thorne &
/// Wheeler, *Gravitation*, 1973, eq. 33.2, from memory).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct KerrBl {
    /// Mass.
    pub m: f64,
    /// Spin parameter (angular momentum per unit mass).
    pub a: f64,
}

impl HandMetric for KerrBl {
    #[inline]
    fn metric<T: Scalar>(&self, x: &[T; 4]) -> [[T; 4]; 4] {
        let (m, a) = (T::from_f64(self.m), T::from_f64(self.a));
        let (r, theta) = (x[1], x[2]);
        let (sin, cos) = theta.sin_cos();
        let two = T::from_f64(2.0);
        let sigma = r * r + a * a * cos * cos;
        let delta = r * r - two * m * r + a * a;
        let s2 = sin * sin;
        let zero = T::from_f64(0.0);
        let gtt = -(T::from_f64(1.0) - two * m * r / sigma);
        let gtp = -(two * m * a * r * s2 / sigma);
        let grr = sigma / delta;
        let gthth = sigma;
        let gpp = (r * r + a * a + two * m * r * a * a * s2 / sigma) * s2;
        [
            [gtt, zero, zero, gtp],
            [zero, grr, zero, zero],
            [zero, zero, gthth, zero],
            [gtp, zero, zero, gpp],
        ]
    }
}

/// Kerr in Cartesian Kerr-Schild coordinates (t, x, y, z), mass `m`, spin `a`:
/// g = η + f l⊗l with l null (Kerr & Schild 1965; the Cartesian form as in Visser, "The Kerr
/// spacetime: a brief introduction", arXiv:0706.0622, section 4, from memory).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct KerrSchild {
    /// Mass.
    pub m: f64,
    /// Spin parameter (angular momentum per unit mass).
    pub a: f64,
}

impl HandMetric for KerrSchild {
    #[inline]
    fn metric<T: Scalar>(&self, p: &[T; 4]) -> [[T; 4]; 4] {
        let (m, a) = (T::from_f64(self.m), T::from_f64(self.a));
        let (x, y, z) = (p[1], p[2], p[3]);
        let one = T::from_f64(1.0);
        let a2 = a * a;
        let b = x * x + y * y + z * z - a2;
        // r is the positive root of r^4 - (x^2 + y^2 + z^2 - a^2) r^2 - a^2 z^2 = 0.
        let r2 = T::from_f64(0.5) * (b + (b * b + T::from_f64(4.0) * a2 * z * z).sqrt());
        let r = r2.sqrt();
        let f = T::from_f64(2.0) * m * r * r2 / (r2 * r2 + a2 * z * z);
        let l = [
            one,
            (r * x + a * y) / (r2 + a2),
            (r * y - a * x) / (r2 + a2),
            z / r,
        ];
        let mut g = [[T::from_f64(0.0); 4]; 4];
        for i in 0..4 {
            for j in i..4 {
                let eta = match (i, j) {
                    (0, 0) => -1.0,
                    (i, j) if i == j => 1.0,
                    _ => 0.0,
                };
                let v = T::from_f64(eta) + f * l[i] * l[j];
                g[i][j] = v;
                g[j][i] = v;
            }
        }
        g
    }
}
