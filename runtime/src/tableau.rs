//! Butcher tableaus, held exactly.
//!
//! Every coefficient of the explicit methods is a [`Rational`]; the Gauss-Legendre tableaus are
//! exact elements of Q(√3) and Q(√15) ([`QuadraticSurd`]). Integrators call
//! [`ButcherTableau::to_f64`] once when they are built. The tests check every tableau against
//! the rooted-tree order conditions (Hairer, Nørsett & Wanner, *Solving Ordinary Differential
//! Equations I*, 2nd ed., Sec. II.2) in exact arithmetic. The coefficients below were written
//! from memory of the cited sources; those tests are what vouches for them.
//!
//! The eighth-order pair of Dormand and Prince has irrational nodes and is published only in
//! decimals; it lives in [`crate::dop853`].

use crate::rational::{Coefficient, QuadraticSurd, Rational};

/// An `S`-stage Runge-Kutta method: `k_i = f(y + h Σ_j a_ij k_j)`, `y₁ = y + h Σ_i b_i k_i`,
/// stage `i` sitting at `λ + c_i h`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ButcherTableau<C, const S: usize> {
    /// The stage matrix `a[i][j]`; strictly lower triangular for explicit methods.
    pub a: [[C; S]; S],
    /// The weights of the propagated solution.
    pub b: [C; S],
    /// The nodes (row sums of `a`).
    pub c: [C; S],
    /// The classical order of the propagated solution.
    pub order: u32,
}

/// Converts an array of exact coefficients to `f64`.
pub fn coefficients_to_f64<C: Coefficient, const S: usize>(v: &[C; S]) -> [f64; S] {
    core::array::from_fn(|i| v[i].to_f64())
}

impl<C: Coefficient, const S: usize> ButcherTableau<C, S> {
    /// The same tableau with every coefficient rounded to `f64`.
    pub fn to_f64(&self) -> ButcherTableau<f64, S> {
        ButcherTableau {
            a: core::array::from_fn(|i| coefficients_to_f64(&self.a[i])),
            b: coefficients_to_f64(&self.b),
            c: coefficients_to_f64(&self.c),
            order: self.order,
        }
    }
}

const fn r(n: i64, d: i64) -> Rational {
    Rational::new(n, d)
}

const Z: Rational = Rational::ZERO;

/// The classical fourth-order Runge-Kutta method (Kutta 1901; Hairer, Nørsett & Wanner,
/// *Solving ODEs I*, Sec. II.1).
pub const CLASSIC_RK4: ButcherTableau<Rational, 4> = ButcherTableau {
    a: [
        [Z, Z, Z, Z],
        [r(1, 2), Z, Z, Z],
        [Z, r(1, 2), Z, Z],
        [Z, Z, r(1, 1), Z],
    ],
    b: [r(1, 6), r(1, 3), r(1, 3), r(1, 6)],
    c: [Z, r(1, 2), r(1, 2), r(1, 1)],
    order: 4,
};

/// The Dormand-Prince 5(4) pair (Dormand & Prince, J. Comput. Appl. Math. 6 (1980) 19-26;
/// Hairer, Nørsett & Wanner, *Solving ODEs I*, Sec. II.5). The seventh stage is evaluated at
/// the new solution, so it is the first stage of the next step ("first same as last").
pub const DORMAND_PRINCE_54: ButcherTableau<Rational, 7> = ButcherTableau {
    a: [
        [Z, Z, Z, Z, Z, Z, Z],
        [r(1, 5), Z, Z, Z, Z, Z, Z],
        [r(3, 40), r(9, 40), Z, Z, Z, Z, Z],
        [r(44, 45), r(-56, 15), r(32, 9), Z, Z, Z, Z],
        [
            r(19372, 6561),
            r(-25360, 2187),
            r(64448, 6561),
            r(-212, 729),
            Z,
            Z,
            Z,
        ],
        [
            r(9017, 3168),
            r(-355, 33),
            r(46732, 5247),
            r(49, 176),
            r(-5103, 18656),
            Z,
            Z,
        ],
        [
            r(35, 384),
            Z,
            r(500, 1113),
            r(125, 192),
            r(-2187, 6784),
            r(11, 84),
            Z,
        ],
    ],
    b: [
        r(35, 384),
        Z,
        r(500, 1113),
        r(125, 192),
        r(-2187, 6784),
        r(11, 84),
        Z,
    ],
    c: [Z, r(1, 5), r(3, 10), r(4, 5), r(8, 9), r(1, 1), r(1, 1)],
    order: 5,
};

/// The fourth-order embedded weights of the Dormand-Prince 5(4) pair (same source); the
/// difference from [`DORMAND_PRINCE_54`]`.b` estimates the local error.
pub const DORMAND_PRINCE_54_EMBEDDED: [Rational; 7] = [
    r(5179, 57600),
    Z,
    r(7571, 16695),
    r(393, 640),
    r(-92097, 339200),
    r(187, 2100),
    r(1, 40),
];

/// The order of [`DORMAND_PRINCE_54_EMBEDDED`].
pub const DORMAND_PRINCE_54_EMBEDDED_ORDER: u32 = 4;

/// Shampine's continuous extension of the Dormand-Prince 5(4) pair (L. F. Shampine, Math.
/// Comp. 46 (1986) 135-150, as used in Hairer, Nørsett & Wanner, *Solving ODEs I*, Sec. II.6).
///
/// With `Δ = y₁ - y₀`, `s = h k₁ - Δ` and `θ' = 1 - θ`, the fourth-order interpolant is
/// `y(θ) = y₀ + θ(Δ + θ'(s + θ(Δ - h k₇ - s + θ' h Σ d_i k_i)))` where `d` is this array.
pub const DORMAND_PRINCE_54_DENSE: [Rational; 7] = [
    r(-12715105075, 11282082432),
    Z,
    r(87487479700, 32700410799),
    r(-10690763975, 1880347072),
    r(701980252875, 199316789632),
    r(-1453857185, 822651844),
    r(69997945, 29380423),
];

/// The order of the [`DORMAND_PRINCE_54_DENSE`] interpolant.
pub const DORMAND_PRINCE_54_DENSE_ORDER: u32 = 4;

const fn q(rn: i64, rd: i64, sn: i64, sd: i64, radicand: u32) -> QuadraticSurd {
    QuadraticSurd::new(Rational::new(rn, rd), Rational::new(sn, sd), radicand)
}

/// Two-stage Gauss-Legendre collocation, order 4, symplectic (Butcher 1964; Hairer, Nørsett &
/// Wanner, *Solving ODEs I*, Sec. II.7). Coefficients are exact in Q(√3).
pub const GAUSS_LEGENDRE_4: ButcherTableau<QuadraticSurd, 2> = ButcherTableau {
    a: [
        [q(1, 4, 0, 1, 3), q(1, 4, -1, 6, 3)],
        [q(1, 4, 1, 6, 3), q(1, 4, 0, 1, 3)],
    ],
    b: [q(1, 2, 0, 1, 3), q(1, 2, 0, 1, 3)],
    c: [q(1, 2, -1, 6, 3), q(1, 2, 1, 6, 3)],
    order: 4,
};

/// Three-stage Gauss-Legendre collocation, order 6, symplectic (Butcher 1964; Hairer, Nørsett &
/// Wanner, *Solving ODEs I*, Sec. II.7). Coefficients are exact in Q(√15).
pub const GAUSS_LEGENDRE_6: ButcherTableau<QuadraticSurd, 3> = ButcherTableau {
    a: [
        [
            q(5, 36, 0, 1, 15),
            q(2, 9, -1, 15, 15),
            q(5, 36, -1, 30, 15),
        ],
        [q(5, 36, 1, 24, 15), q(2, 9, 0, 1, 15), q(5, 36, -1, 24, 15)],
        [q(5, 36, 1, 30, 15), q(2, 9, 1, 15, 15), q(5, 36, 0, 1, 15)],
    ],
    b: [q(5, 18, 0, 1, 15), q(4, 9, 0, 1, 15), q(5, 18, 0, 1, 15)],
    c: [q(1, 2, -1, 10, 15), q(1, 2, 0, 1, 15), q(1, 2, 1, 10, 15)],
    order: 6,
};

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn explicit_tableaus_are_strictly_lower_triangular() {
        for i in 0..4 {
            for j in i..4 {
                assert!(CLASSIC_RK4.a[i][j].is_zero());
            }
        }
        for i in 0..7 {
            for j in i..7 {
                assert!(DORMAND_PRINCE_54.a[i][j].is_zero());
            }
        }
    }

    #[test]
    fn conversion_keeps_values() {
        let t = DORMAND_PRINCE_54.to_f64();
        assert_eq!(t.a[4][0], 19372.0 / 6561.0);
        assert_eq!(t.c[2], 0.3);
        let g = GAUSS_LEGENDRE_6.to_f64();
        assert!((g.c[0] - (0.5 - 15f64.sqrt() / 10.0)).abs() < 1e-16);
    }
}
