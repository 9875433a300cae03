//! [`Scalar`] for `wide::f64x4`: one kernel call evaluates four points.
//!
//! Field operations, square root, sine, cosine, tangent, exponential, inverse trigonometric
//! functions and powers use `wide`'s vectorised forms; the hyperbolic functions, which `wide`
//! lacks, and the logarithm, whose vector form is less accurate, are computed lane by lane.

use wide::f64x4;

use crate::Scalar;

/// Applies a scalar function to each lane.
#[inline]
fn lanes(v: f64x4, f: impl Fn(f64) -> f64) -> f64x4 {
    f64x4::from(v.to_array().map(f))
}

impl Scalar for f64x4 {
    #[inline]
    fn from_f64(v: f64) -> Self {
        f64x4::splat(v)
    }
    #[inline]
    fn sqrt(self) -> Self {
        f64x4::sqrt(self)
    }
    #[inline]
    fn sin(self) -> Self {
        f64x4::sin(self)
    }
    #[inline]
    fn cos(self) -> Self {
        f64x4::cos(self)
    }
    #[inline]
    fn sin_cos(self) -> (Self, Self) {
        f64x4::sin_cos(self)
    }
    #[inline]
    fn tan(self) -> Self {
        f64x4::tan(self)
    }
    #[inline]
    fn exp(self) -> Self {
        f64x4::exp(self)
    }
    #[inline]
    fn ln(self) -> Self {
        // wide's vector logarithm is off by ~1e-13 relative; the lane-wise one is exact to
        // an ulp, and logarithms are rare in metrics.
        lanes(self, <f64 as Scalar>::ln)
    }
    #[inline]
    fn sinh(self) -> Self {
        lanes(self, <f64 as Scalar>::sinh)
    }
    #[inline]
    fn cosh(self) -> Self {
        lanes(self, <f64 as Scalar>::cosh)
    }
    #[inline]
    fn tanh(self) -> Self {
        lanes(self, <f64 as Scalar>::tanh)
    }
    #[inline]
    fn asin(self) -> Self {
        f64x4::asin(self)
    }
    #[inline]
    fn acos(self) -> Self {
        f64x4::acos(self)
    }
    #[inline]
    fn atan(self) -> Self {
        f64x4::atan(self)
    }
    #[inline]
    fn powf(self, e: Self) -> Self {
        f64x4::pow_f64x4(self, e)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lanes_agree_with_f64() {
        let xs = [0.1, 0.4, 0.7, 0.95];
        let v = f64x4::from(xs);
        type F = (fn(f64x4) -> f64x4, fn(f64) -> f64);
        let cases: [F; 12] = [
            (Scalar::sqrt, Scalar::sqrt),
            (Scalar::sin, Scalar::sin),
            (Scalar::cos, Scalar::cos),
            (Scalar::tan, Scalar::tan),
            (Scalar::exp, Scalar::exp),
            (Scalar::ln, Scalar::ln),
            (Scalar::sinh, Scalar::sinh),
            (Scalar::cosh, Scalar::cosh),
            (Scalar::tanh, Scalar::tanh),
            (Scalar::asin, Scalar::asin),
            (Scalar::acos, Scalar::acos),
            (Scalar::atan, Scalar::atan),
        ];
        for (k, (fv, fs)) in cases.iter().enumerate() {
            let got = fv(v).to_array();
            for i in 0..4 {
                let want = fs(xs[i]);
                assert!(
                    (got[i] - want).abs() <= 1e-14 * want.abs().max(1.0),
                    "case {k} lane {i}: {} vs {want}",
                    got[i]
                );
            }
        }
        let p = Scalar::powf(v, f64x4::splat(2.5)).to_array();
        for i in 0..4 {
            assert!((p[i] - xs[i].powf(2.5)).abs() < 1e-14);
        }
    }
}
