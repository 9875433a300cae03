//! Hand-written metrics standing in for generated ones.
//!
//! - [`Schwarzschild`]: every kernel in closed form (Christoffel symbols as listed in
//!   S. Carroll, *Spacetime and Geometry*, 2004, eq. (5.15), from memory).
//! - [`Derived`]: any metric given by its components g_ab(x); the kernels are computed from
//!   them with forward-mode dual numbers (exact first derivatives) and a numerical inverse.
//!   Used for Kerr in Boyer-Lindquist coordinates (R. Kerr 1963; R. Boyer & R. Lindquist,
//!   J. Math. Phys. 8 (1967) 265), with Carter's constant as an invariant.
//! - [`FlatPolar`]: the Euclidean plane in polar coordinates; its geodesics are straight lines
//!   known in closed form.
#![allow(dead_code)]

use geokern_runtime::MetricKernels;
use std::ops::{Add, Div, Mul, Neg, Sub};

/// A value with one directional derivative.
#[derive(Clone, Copy, Debug)]
pub struct D {
    pub v: f64,
    pub d: f64,
}

impl Add for D {
    type Output = D;
    fn add(self, o: D) -> D {
        D {
            v: self.v + o.v,
            d: self.d + o.d,
        }
    }
}
impl Sub for D {
    type Output = D;
    fn sub(self, o: D) -> D {
        D {
            v: self.v - o.v,
            d: self.d - o.d,
        }
    }
}
impl Mul for D {
    type Output = D;
    fn mul(self, o: D) -> D {
        D {
            v: self.v * o.v,
            d: self.d * o.v + self.v * o.d,
        }
    }
}
impl Div for D {
    type Output = D;
    fn div(self, o: D) -> D {
        D {
            v: self.v / o.v,
            d: (self.d * o.v - self.v * o.d) / (o.v * o.v),
        }
    }
}
impl Neg for D {
    type Output = D;
    fn neg(self) -> D {
        D {
            v: -self.v,
            d: -self.d,
        }
    }
}
impl D {
    pub fn c(v: f64) -> D {
        D { v, d: 0.0 }
    }
    pub fn sin(self) -> D {
        D {
            v: self.v.sin(),
            d: self.d * self.v.cos(),
        }
    }
    pub fn cos(self) -> D {
        D {
            v: self.v.cos(),
            d: -self.d * self.v.sin(),
        }
    }
}

/// Components g_ab(x) over dual numbers, plus which coordinates are cyclic.
pub trait Components<const N: usize> {
    fn names(&self) -> &'static [&'static str];
    fn g(&self, x: &[D; N]) -> [[D; N]; N];
    /// Indices of coordinates the metric does not depend on.
    fn cyclic(&self) -> &'static [usize];
    /// Names of their momenta.
    fn cyclic_names(&self) -> &'static [&'static str];
    /// Named invariants of (x, u) beyond the conserved momenta.
    fn invariant_names(&self) -> &'static [&'static str] {
        &[]
    }
    fn invariants(&self, _x: &[f64; N], _u: &[f64; N], _out: &mut [f64]) {}
}

/// Inverse by Gauss-Jordan elimination with partial pivoting.
pub fn invert<const N: usize>(m: &[[f64; N]; N]) -> [[f64; N]; N] {
    let mut a = *m;
    let mut inv = [[0.0; N]; N];
    for (i, row) in inv.iter_mut().enumerate() {
        row[i] = 1.0;
    }
    for col in 0..N {
        let pivot = (col..N)
            .max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))
            .unwrap();
        a.swap(col, pivot);
        inv.swap(col, pivot);
        let p = a[col][col];
        for j in 0..N {
            a[col][j] /= p;
            inv[col][j] /= p;
        }
        for i in 0..N {
            if i != col {
                let f = a[i][col];
                for j in 0..N {
                    a[i][j] -= f * a[col][j];
                    inv[i][j] -= f * inv[col][j];
                }
            }
        }
    }
    inv
}

/// Kernels computed from [`Components`].
pub struct Derived<C>(pub C);

fn g_f64<C: Components<N>, const N: usize>(c: &C, x: &[f64; N]) -> [[f64; N]; N] {
    c.g(&x.map(D::c)).map(|row| row.map(|e| e.v))
}

/// ∂_k g_ab, indexed [k][a][b].
fn dg<C: Components<N>, const N: usize>(c: &C, x: &[f64; N]) -> [[[f64; N]; N]; N] {
    core::array::from_fn(|k| {
        let xd: [D; N] = core::array::from_fn(|i| D {
            v: x[i],
            d: if i == k { 1.0 } else { 0.0 },
        });
        c.g(&xd).map(|row| row.map(|e| e.d))
    })
}

impl<C: Components<N>, const N: usize> MetricKernels<f64, N> for Derived<C> {
    fn coordinate_names(&self) -> &[&str] {
        self.0.names()
    }
    fn metric(&self, x: &[f64; N]) -> [[f64; N]; N] {
        g_f64(&self.0, x)
    }
    fn inverse_metric(&self, x: &[f64; N]) -> [[f64; N]; N] {
        invert(&g_f64(&self.0, x))
    }
    fn christoffel(&self, x: &[f64; N]) -> [[[f64; N]; N]; N] {
        // Γ^a_bc = ½ g^ad (∂_b g_dc + ∂_c g_db - ∂_d g_bc)
        let gi = self.inverse_metric(x);
        let dg = dg(&self.0, x);
        core::array::from_fn(|a| {
            core::array::from_fn(|b| {
                core::array::from_fn(|c| {
                    0.5 * (0..N)
                        .map(|d| gi[a][d] * (dg[b][d][c] + dg[c][d][b] - dg[d][b][c]))
                        .sum::<f64>()
                })
            })
        })
    }
    fn geodesic_accel(&self, x: &[f64; N], u: &[f64; N]) -> [f64; N] {
        let gamma = self.christoffel(x);
        core::array::from_fn(|a| {
            -(0..N)
                .map(|b| (0..N).map(|c| gamma[a][b][c] * u[b] * u[c]).sum::<f64>())
                .sum::<f64>()
        })
    }
    fn hamilton_rhs(&self, x: &[f64; N], p: &[f64; N]) -> ([f64; N], [f64; N]) {
        // dx^a = g^ab p_b; dp_k = -½ ∂_k g^ab p_a p_b = ½ ∂_k g_cd u^c u^d with u = g⁻¹p.
        let gi = self.inverse_metric(x);
        let u: [f64; N] = core::array::from_fn(|a| (0..N).map(|b| gi[a][b] * p[b]).sum());
        let dg = dg(&self.0, x);
        let dp = core::array::from_fn(|k| {
            0.5 * (0..N)
                .map(|c| (0..N).map(|d| dg[k][c][d] * u[c] * u[d]).sum::<f64>())
                .sum::<f64>()
        });
        (u, dp)
    }
    fn parallel_transport(&self, x: &[f64; N], u: &[f64; N], v: &[f64; N]) -> [f64; N] {
        let gamma = self.christoffel(x);
        core::array::from_fn(|a| {
            -(0..N)
                .map(|b| (0..N).map(|c| gamma[a][b][c] * u[b] * v[c]).sum::<f64>())
                .sum::<f64>()
        })
    }
    fn norm(&self, x: &[f64; N], u: &[f64; N]) -> f64 {
        let g = g_f64(&self.0, x);
        (0..N)
            .map(|a| (0..N).map(|b| g[a][b] * u[a] * u[b]).sum::<f64>())
            .sum()
    }
    fn conserved_names(&self) -> &[&str] {
        self.0.cyclic_names()
    }
    fn conserved(&self, x: &[f64; N], u: &[f64; N], out: &mut [f64]) {
        let g = g_f64(&self.0, x);
        for (o, k) in out.iter_mut().zip(self.0.cyclic()) {
            *o = (0..N).map(|b| g[*k][b] * u[b]).sum();
        }
    }
    fn invariant_names(&self) -> &[&str] {
        self.0.invariant_names()
    }
    fn invariants(&self, x: &[f64; N], u: &[f64; N], out: &mut [f64]) {
        self.0.invariants(x, u, out)
    }
}

/// Kerr in Boyer-Lindquist coordinates (t, r, θ, φ), mass `m`, spin `a`.
pub struct KerrComponents {
    pub m: f64,
    pub a: f64,
}

pub type Kerr = Derived<KerrComponents>;

pub fn kerr(m: f64, a: f64) -> Kerr {
    Derived(KerrComponents { m, a })
}

impl Components<4> for KerrComponents {
    fn names(&self) -> &'static [&'static str] {
        &["t", "r", "theta", "phi"]
    }
    fn g(&self, x: &[D; 4]) -> [[D; 4]; 4] {
        let (m, a) = (D::c(self.m), D::c(self.a));
        let (r, th) = (x[1], x[2]);
        let (s, c) = (th.sin(), th.cos());
        let sigma = r * r + a * a * c * c;
        let delta = r * r - D::c(2.0) * m * r + a * a;
        let two = D::c(2.0);
        let z = D::c(0.0);
        let gtt = -(D::c(1.0) - two * m * r / sigma);
        let gtp = -(two * m * a * r * s * s / sigma);
        let grr = sigma / delta;
        let gthth = sigma;
        let gpp = (r * r + a * a + two * m * a * a * r * s * s / sigma) * s * s;
        [
            [gtt, z, z, gtp],
            [z, grr, z, z],
            [z, z, gthth, z],
            [gtp, z, z, gpp],
        ]
    }
    fn cyclic(&self) -> &'static [usize] {
        &[0, 3]
    }
    fn cyclic_names(&self) -> &'static [&'static str] {
        &["p_t", "p_phi"]
    }
    fn invariant_names(&self) -> &'static [&'static str] {
        &["carter"]
    }
    fn invariants(&self, x: &[f64; 4], u: &[f64; 4], out: &mut [f64]) {
        // Carter's constant Q = p_θ² + cos²θ (a² (μ² - E²) + L²/sin²θ) (B. Carter, Phys. Rev.
        // 174 (1968) 1559; from memory), with μ² = -g(u,u), E = -p_t, L = p_φ.
        let k = kerr(self.m, self.a);
        let g = k.metric(x);
        let p: [f64; 4] = core::array::from_fn(|a| (0..4).map(|b| g[a][b] * u[b]).sum());
        let mu2 = -k.norm(x, u);
        let (s, c) = x[2].sin_cos();
        let q =
            p[2] * p[2] + c * c * (self.a * self.a * (mu2 - p[0] * p[0]) + p[3] * p[3] / (s * s));
        if let Some(o) = out.first_mut() {
            *o = q;
        }
    }
}

/// Schwarzschild in Schwarzschild coordinates (t, r, θ, φ), every kernel by hand.
pub struct Schwarzschild {
    pub m: f64,
}

impl MetricKernels<f64, 4> for Schwarzschild {
    fn coordinate_names(&self) -> &[&str] {
        &["t", "r", "theta", "phi"]
    }
    fn metric(&self, x: &[f64; 4]) -> [[f64; 4]; 4] {
        let (r, s) = (x[1], x[2].sin());
        let f = 1.0 - 2.0 * self.m / r;
        [
            [-f, 0.0, 0.0, 0.0],
            [0.0, 1.0 / f, 0.0, 0.0],
            [0.0, 0.0, r * r, 0.0],
            [0.0, 0.0, 0.0, r * r * s * s],
        ]
    }
    fn inverse_metric(&self, x: &[f64; 4]) -> [[f64; 4]; 4] {
        let (r, s) = (x[1], x[2].sin());
        let f = 1.0 - 2.0 * self.m / r;
        [
            [-1.0 / f, 0.0, 0.0, 0.0],
            [0.0, f, 0.0, 0.0],
            [0.0, 0.0, 1.0 / (r * r), 0.0],
            [0.0, 0.0, 0.0, 1.0 / (r * r * s * s)],
        ]
    }
    fn christoffel(&self, x: &[f64; 4]) -> [[[f64; 4]; 4]; 4] {
        let m = self.m;
        let (r, (s, c)) = (x[1], x[2].sin_cos());
        let f = 1.0 - 2.0 * m / r;
        let mut g = [[[0.0; 4]; 4]; 4];
        g[0][0][1] = m / (r * r * f);
        g[0][1][0] = g[0][0][1];
        g[1][0][0] = m * f / (r * r);
        g[1][1][1] = -m / (r * r * f);
        g[1][2][2] = -r * f;
        g[1][3][3] = -r * f * s * s;
        g[2][1][2] = 1.0 / r;
        g[2][2][1] = 1.0 / r;
        g[2][3][3] = -s * c;
        g[3][1][3] = 1.0 / r;
        g[3][3][1] = 1.0 / r;
        g[3][2][3] = c / s;
        g[3][3][2] = c / s;
        g
    }
    fn geodesic_accel(&self, x: &[f64; 4], u: &[f64; 4]) -> [f64; 4] {
        let g = self.christoffel(x);
        core::array::from_fn(|a| {
            -(0..4)
                .map(|b| (0..4).map(|c| g[a][b][c] * u[b] * u[c]).sum::<f64>())
                .sum::<f64>()
        })
    }
    fn hamilton_rhs(&self, x: &[f64; 4], p: &[f64; 4]) -> ([f64; 4], [f64; 4]) {
        let m = self.m;
        let (r, (s, c)) = (x[1], x[2].sin_cos());
        let f = 1.0 - 2.0 * m / r;
        let gi = self.inverse_metric(x);
        let dx = [
            gi[0][0] * p[0],
            gi[1][1] * p[1],
            gi[2][2] * p[2],
            gi[3][3] * p[3],
        ];
        // -½ ∂_r g^ab p_a p_b with ∂_r(-1/f) = 2m/(r² f²), ∂_r f = 2m/r²,
        // ∂_r r⁻² = -2/r³; and -½ ∂_θ (r sin θ)⁻² p_φ² = p_φ² cos θ / (r² sin³ θ).
        let dpr = -0.5
            * (2.0 * m / (r * r * f * f) * p[0] * p[0] + 2.0 * m / (r * r) * p[1] * p[1]
                - 2.0 / (r * r * r) * (p[2] * p[2] + p[3] * p[3] / (s * s)));
        let dpth = p[3] * p[3] * c / (r * r * s * s * s);
        (dx, [0.0, dpr, dpth, 0.0])
    }
    fn parallel_transport(&self, x: &[f64; 4], u: &[f64; 4], v: &[f64; 4]) -> [f64; 4] {
        let g = self.christoffel(x);
        core::array::from_fn(|a| {
            -(0..4)
                .map(|b| (0..4).map(|c| g[a][b][c] * u[b] * v[c]).sum::<f64>())
                .sum::<f64>()
        })
    }
    fn norm(&self, x: &[f64; 4], u: &[f64; 4]) -> f64 {
        let g = self.metric(x);
        (0..4).map(|a| g[a][a] * u[a] * u[a]).sum()
    }
    fn conserved_names(&self) -> &[&str] {
        &["p_t", "p_phi"]
    }
    fn conserved(&self, x: &[f64; 4], u: &[f64; 4], out: &mut [f64]) {
        let g = self.metric(x);
        for (o, k) in out.iter_mut().zip([0usize, 3]) {
            *o = g[k][k] * u[k];
        }
    }
    fn invariant_names(&self) -> &[&str] {
        &[]
    }
    fn invariants(&self, _x: &[f64; 4], _u: &[f64; 4], _out: &mut [f64]) {}
}

/// The Euclidean plane in polar coordinates (r, φ).
pub struct FlatPolar;

impl MetricKernels<f64, 2> for FlatPolar {
    fn coordinate_names(&self) -> &[&str] {
        &["r", "phi"]
    }
    fn metric(&self, x: &[f64; 2]) -> [[f64; 2]; 2] {
        [[1.0, 0.0], [0.0, x[0] * x[0]]]
    }
    fn inverse_metric(&self, x: &[f64; 2]) -> [[f64; 2]; 2] {
        [[1.0, 0.0], [0.0, 1.0 / (x[0] * x[0])]]
    }
    fn christoffel(&self, x: &[f64; 2]) -> [[[f64; 2]; 2]; 2] {
        let r = x[0];
        [[[0.0, 0.0], [0.0, -r]], [[0.0, 1.0 / r], [1.0 / r, 0.0]]]
    }
    fn geodesic_accel(&self, x: &[f64; 2], u: &[f64; 2]) -> [f64; 2] {
        let r = x[0];
        [r * u[1] * u[1], -2.0 * u[0] * u[1] / r]
    }
    fn hamilton_rhs(&self, x: &[f64; 2], p: &[f64; 2]) -> ([f64; 2], [f64; 2]) {
        let r = x[0];
        ([p[0], p[1] / (r * r)], [p[1] * p[1] / (r * r * r), 0.0])
    }
    fn parallel_transport(&self, x: &[f64; 2], u: &[f64; 2], v: &[f64; 2]) -> [f64; 2] {
        let r = x[0];
        [r * u[1] * v[1], -(u[0] * v[1] + u[1] * v[0]) / r]
    }
    fn norm(&self, x: &[f64; 2], u: &[f64; 2]) -> f64 {
        u[0] * u[0] + x[0] * x[0] * u[1] * u[1]
    }
    fn conserved_names(&self) -> &[&str] {
        &["p_phi"]
    }
    fn conserved(&self, x: &[f64; 2], u: &[f64; 2], out: &mut [f64]) {
        if let Some(o) = out.first_mut() {
            *o = x[0] * x[0] * u[1];
        }
    }
    fn invariant_names(&self) -> &[&str] {
        &[]
    }
    fn invariants(&self, _x: &[f64; 2], _u: &[f64; 2], _out: &mut [f64]) {}
}

/// The straight line through Cartesian (1, 0) with velocity (vx, vy), in polar coordinates
/// at λ: exact geodesic of [`FlatPolar`].
pub fn straight_line(vx: f64, vy: f64, lambda: f64) -> [f64; 2] {
    let (x, y) = (1.0 + vx * lambda, vy * lambda);
    [x.hypot(y), y.atan2(x)]
}

/// Initial (x, u) of that line: at r = 1, φ = 0, u^r = vx, u^φ = vy.
pub fn straight_line_start(vx: f64, vy: f64) -> ([f64; 2], [f64; 2]) {
    ([1.0, 0.0], [vx, vy])
}
