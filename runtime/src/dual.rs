//! Dual numbers: a value with its gradient with respect to `P` parameters (forward-mode
//! automatic differentiation).
//!
//! Running a generated kernel on `Dual<P>` gives the kernel's value and its exact derivatives
//! with respect to whatever the caller marks as variables: a metric's parameters (how Γ changes with the spin
//! `a`), or the coordinates. Each operation applies the chain rule (Griewank & Walther,
//! *Evaluating Derivatives*, 2nd ed., 2008, Ch. 3).

use core::ops::{Add, Div, Mul, Neg, Sub};

use crate::Scalar;

/// A value with the gradient of that value with respect to `P` independent variables.
///
/// ```
/// use geokern_runtime::{Dual, Scalar};
/// // d/dm of the Schwarzschild g_tt = -(1 - 2m/r) at r = 10: 2/r = 0.2
/// let m = Dual::<1>::variable(1.0, 0);
/// let r = Dual::constant(10.0);
/// let gtt = -(Dual::constant(1.0) - Dual::constant(2.0) * m / r);
/// assert_eq!(gtt.value, -0.8);
/// assert!((gtt.gradient[0] - 0.2).abs() < 1e-15);
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Dual<const P: usize> {
    /// The value.
    pub value: f64,
    /// The partial derivatives of the value.
    pub gradient: [f64; P],
}

impl<const P: usize> Dual<P> {
    /// A constant: zero gradient.
    pub const fn constant(value: f64) -> Self {
        Dual {
            value,
            gradient: [0.0; P],
        }
    }

    /// The independent variable number `index` (its gradient is the unit vector `index`; an
    /// index `≥ P` gives a constant).
    pub fn variable(value: f64, index: usize) -> Self {
        let mut gradient = [0.0; P];
        if let Some(g) = gradient.get_mut(index) {
            *g = 1.0;
        }
        Dual { value, gradient }
    }

    /// `f(self)` given `f(value)` and `f'(value)`.
    fn chain(self, value: f64, derivative: f64) -> Self {
        Dual {
            value,
            gradient: self.gradient.map(|g| derivative * g),
        }
    }
}

impl<const P: usize> Add for Dual<P> {
    type Output = Self;
    #[inline]
    fn add(self, o: Self) -> Self {
        Dual {
            value: self.value + o.value,
            gradient: core::array::from_fn(|i| self.gradient[i] + o.gradient[i]),
        }
    }
}

impl<const P: usize> Sub for Dual<P> {
    type Output = Self;
    #[inline]
    fn sub(self, o: Self) -> Self {
        Dual {
            value: self.value - o.value,
            gradient: core::array::from_fn(|i| self.gradient[i] - o.gradient[i]),
        }
    }
}

impl<const P: usize> Mul for Dual<P> {
    type Output = Self;
    // The product rule adds: (ab)' = a'b + ab'.
    #[allow(clippy::suspicious_arithmetic_impl)]
    #[inline]
    fn mul(self, o: Self) -> Self {
        Dual {
            value: self.value * o.value,
            gradient: core::array::from_fn(|i| {
                self.gradient[i] * o.value + self.value * o.gradient[i]
            }),
        }
    }
}

impl<const P: usize> Div for Dual<P> {
    type Output = Self;
    #[inline]
    fn div(self, o: Self) -> Self {
        let inv = 1.0 / o.value;
        let value = self.value * inv;
        Dual {
            value,
            gradient: core::array::from_fn(|i| (self.gradient[i] - value * o.gradient[i]) * inv),
        }
    }
}

impl<const P: usize> Neg for Dual<P> {
    type Output = Self;
    #[inline]
    fn neg(self) -> Self {
        Dual {
            value: -self.value,
            gradient: self.gradient.map(|g| -g),
        }
    }
}

impl<const P: usize> Scalar for Dual<P> {
    fn from_f64(v: f64) -> Self {
        Dual::constant(v)
    }
    fn sqrt(self) -> Self {
        let s = Scalar::sqrt(self.value);
        self.chain(s, 0.5 / s)
    }
    fn sin(self) -> Self {
        let (s, c) = Scalar::sin_cos(self.value);
        self.chain(s, c)
    }
    fn cos(self) -> Self {
        let (s, c) = Scalar::sin_cos(self.value);
        self.chain(c, -s)
    }
    fn sin_cos(self) -> (Self, Self) {
        let (s, c) = Scalar::sin_cos(self.value);
        (self.chain(s, c), self.chain(c, -s))
    }
    fn tan(self) -> Self {
        let t = Scalar::tan(self.value);
        self.chain(t, 1.0 + t * t)
    }
    fn exp(self) -> Self {
        let e = Scalar::exp(self.value);
        self.chain(e, e)
    }
    fn ln(self) -> Self {
        self.chain(Scalar::ln(self.value), 1.0 / self.value)
    }
    fn sinh(self) -> Self {
        self.chain(Scalar::sinh(self.value), Scalar::cosh(self.value))
    }
    fn cosh(self) -> Self {
        self.chain(Scalar::cosh(self.value), Scalar::sinh(self.value))
    }
    fn tanh(self) -> Self {
        let t = Scalar::tanh(self.value);
        self.chain(t, 1.0 - t * t)
    }
    fn asin(self) -> Self {
        let v = self.value;
        self.chain(Scalar::asin(v), 1.0 / Scalar::sqrt(1.0 - v * v))
    }
    fn acos(self) -> Self {
        let v = self.value;
        self.chain(Scalar::acos(v), -1.0 / Scalar::sqrt(1.0 - v * v))
    }
    fn atan(self) -> Self {
        let v = self.value;
        self.chain(Scalar::atan(v), 1.0 / (1.0 + v * v))
    }
    fn powf(self, e: Self) -> Self {
        let (a, b) = (self.value, e.value);
        let value = Scalar::powf(a, b);
        // d(a^b) = b a^(b-1) da + a^b ln(a) db; the second term only where b varies, so that
        // a constant exponent on a negative base keeps a finite derivative.
        let da = b * Scalar::powf(a, b - 1.0);
        let ln_a = if e.gradient.iter().any(|g| *g != 0.0) {
            Scalar::ln(a)
        } else {
            0.0
        };
        Dual {
            value,
            gradient: core::array::from_fn(|i| {
                da * self.gradient[i] + value * ln_a * e.gradient[i]
            }),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Central difference of `f` at `x`.
    fn numeric(f: impl Fn(f64) -> f64, x: f64) -> f64 {
        let h = 1e-6;
        (f(x + h) - f(x - h)) / (2.0 * h)
    }

    #[test]
    fn derivatives_match_finite_differences() {
        type F = (fn(Dual<1>) -> Dual<1>, fn(f64) -> f64);
        let cases: [F; 13] = [
            (|d| d.sqrt(), |x| x.sqrt()),
            (|d| d.sin(), |x| x.sin()),
            (|d| d.cos(), |x| x.cos()),
            (|d| d.tan(), |x| x.tan()),
            (|d| d.exp(), |x| x.exp()),
            (|d| d.ln(), |x| x.ln()),
            (|d| d.sinh(), |x| x.sinh()),
            (|d| d.cosh(), |x| x.cosh()),
            (|d| d.tanh(), |x| x.tanh()),
            (|d| d.asin(), |x| x.asin()),
            (|d| d.acos(), |x| x.acos()),
            (|d| d.atan(), |x| x.atan()),
            (|d| d.powf(d), |x| x.powf(x)),
        ];
        for (k, (fd, ff)) in cases.iter().enumerate() {
            for x in [0.3, 0.7] {
                let d = fd(Dual::variable(x, 0));
                assert!((d.value - ff(x)).abs() < 1e-15, "case {k}");
                assert!(
                    (d.gradient[0] - numeric(ff, x)).abs() < 1e-8,
                    "case {k} at {x}"
                );
            }
        }
    }

    #[test]
    fn quotient_and_product_rules() {
        let x = Dual::<2>::variable(3.0, 0);
        let y = Dual::<2>::variable(4.0, 1);
        let q = x * x / y - y;
        assert_eq!(q.value, 9.0 / 4.0 - 4.0);
        assert_eq!(q.gradient, [6.0 / 4.0, -9.0 / 16.0 - 1.0]);
        let c = Dual::<2>::constant(-2.0).powf(Dual::constant(2.0));
        assert_eq!((c.value, c.gradient), (4.0, [0.0, 0.0]));
    }
}
