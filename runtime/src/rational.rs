//! Exact coefficients for Butcher tableaus.
//!
//! Published tableaus are exact numbers: rationals for the explicit Runge-Kutta pairs, and
//! elements of a quadratic field Q(√d) for Gauss-Legendre collocation. Holding them exactly
//! lets the tests check the order conditions with no rounding at all; integrators convert them
//! to `f64` once, when they are built.

/// A rational number `numer / denom` in lowest terms with a positive denominator.
///
/// Built in `const` context so that tableaus are compile-time tables:
///
/// ```
/// use geokern_runtime::Rational;
/// const HALF: Rational = Rational::new(-3, -6);
/// assert_eq!((HALF.numer(), HALF.denom()), (1, 2));
/// assert_eq!(HALF.to_f64(), 0.5);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Rational {
    numer: i64,
    denom: i64,
}

/// Greatest common divisor of two magnitudes (Euclid), usable in `const` context.
const fn gcd(mut a: u64, mut b: u64) -> u64 {
    while b != 0 {
        let r = a % b;
        a = b;
        b = r;
    }
    a
}

impl Rational {
    /// Zero.
    pub const ZERO: Rational = Rational { numer: 0, denom: 1 };
    /// One.
    pub const ONE: Rational = Rational { numer: 1, denom: 1 };

    /// The rational `numer / denom`, reduced to lowest terms.
    ///
    /// # Panics
    ///
    /// If `denom` is zero, or if a magnitude is `i64::MIN` (whose negation does not fit). In a
    /// `const` item both are compile errors; use [`Rational::checked_new`] for values that come
    /// from outside the program.
    pub const fn new(numer: i64, denom: i64) -> Rational {
        match Rational::checked_new(numer, denom) {
            Some(r) => r,
            None => panic!("Rational::new: zero denominator or i64::MIN"),
        }
    }

    /// The rational `numer / denom` in lowest terms, or `None` when `denom` is zero or a
    /// magnitude is `i64::MIN`.
    pub const fn checked_new(numer: i64, denom: i64) -> Option<Rational> {
        if denom == 0 || numer == i64::MIN || denom == i64::MIN {
            return None;
        }
        let g = gcd(numer.unsigned_abs(), denom.unsigned_abs()) as i64;
        let (mut n, mut d) = (numer / g, denom / g);
        if d < 0 {
            n = -n;
            d = -d;
        }
        Some(Rational { numer: n, denom: d })
    }

    /// The integer `n` as a rational.
    pub const fn integer(n: i64) -> Rational {
        Rational::new(n, 1)
    }

    /// The numerator (carries the sign).
    pub const fn numer(self) -> i64 {
        self.numer
    }

    /// The denominator (always positive).
    pub const fn denom(self) -> i64 {
        self.denom
    }

    /// Whether this is zero.
    pub const fn is_zero(self) -> bool {
        self.numer == 0
    }

    /// The nearest `f64` when numerator and denominator are both below 2^53 in magnitude
    /// (one correctly rounded division), and within a few ulps otherwise.
    pub fn to_f64(self) -> f64 {
        self.numer as f64 / self.denom as f64
    }
}

/// A number `rational + radical · √radicand` of a quadratic field Q(√d), held exactly.
///
/// The nodes and weights of Gauss-Legendre collocation live in such fields (Q(√3) for two
/// stages, Q(√15) for three).
///
/// ```
/// use geokern_runtime::{QuadraticSurd, Rational};
/// // c1 of the two-stage Gauss method: 1/2 - √3/6
/// let c1 = QuadraticSurd::new(Rational::new(1, 2), Rational::new(-1, 6), 3);
/// assert!((c1.to_f64() - (0.5 - 3f64.sqrt() / 6.0)).abs() < 1e-16);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct QuadraticSurd {
    /// The rational part.
    pub rational: Rational,
    /// The coefficient of √radicand.
    pub radical: Rational,
    /// The square-free integer d under the root.
    pub radicand: u32,
}

impl QuadraticSurd {
    /// `rational + radical · √radicand`.
    pub const fn new(rational: Rational, radical: Rational, radicand: u32) -> QuadraticSurd {
        QuadraticSurd {
            rational,
            radical,
            radicand,
        }
    }

    /// A rational number viewed as an element of Q(√radicand).
    pub const fn from_rational(rational: Rational, radicand: u32) -> QuadraticSurd {
        QuadraticSurd::new(rational, Rational::ZERO, radicand)
    }

    /// The value as `f64` (the root and the sum are each rounded once).
    pub fn to_f64(self) -> f64 {
        self.rational.to_f64() + self.radical.to_f64() * libm::sqrt(self.radicand as f64)
    }
}

/// A tableau coefficient that can be converted to `f64` when an integrator is built.
pub trait Coefficient: Copy {
    /// The value as `f64`.
    fn to_f64(self) -> f64;
}

impl Coefficient for Rational {
    fn to_f64(self) -> f64 {
        Rational::to_f64(self)
    }
}

impl Coefficient for QuadraticSurd {
    fn to_f64(self) -> f64 {
        QuadraticSurd::to_f64(self)
    }
}

impl Coefficient for f64 {
    fn to_f64(self) -> f64 {
        self
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reduces_and_normalises_sign() {
        let r = Rational::new(6, -4);
        assert_eq!((r.numer(), r.denom()), (-3, 2));
        assert_eq!(Rational::new(0, -7), Rational::ZERO);
        assert_eq!(Rational::checked_new(1, 0), None);
        assert_eq!(Rational::checked_new(i64::MIN, 3), None);
    }

    #[test]
    fn converts_to_nearest_f64() {
        assert_eq!(Rational::new(1, 3).to_f64(), 1.0 / 3.0);
        assert_eq!(Rational::new(-19372, 6561).to_f64(), -19372.0 / 6561.0);
        let s = QuadraticSurd::new(Rational::new(1, 2), Rational::new(1, 10), 15);
        assert!((s.to_f64() - (0.5 + 15f64.sqrt() / 10.0)).abs() <= f64::EPSILON);
    }
}
