//! The generic run-time routes: only g_ab(x) is given ([`HandMetric`]); everything else is
//! computed numerically at every call, as a code that accepts any metric at run time must.
//!
//! Both routes share the assembly: g^ab by LU decomposition with partial pivoting (Golub &
//! Van Loan, *Matrix Computations*, 4th ed., 2013, section 3.4, from memory), the
//! Christoffel symbols of the first kind Γ_dbc = ½ (∂_b g_dc + ∂_c g_db − ∂_d g_bc) for
//! b ≤ c, raised with g^ad (Carroll, *Spacetime and Geometry*, 2004, eq. 3.27, from
//! memory), then the contraction −Γ^a_bc u^b u^c over b ≤ c with the off-diagonal terms
//! doubled. They differ only in how ∂_d g_ab is obtained.

// Index loops mirror the tensor formulas (g^ad, ∂_b g_dc) letter for letter.
#![allow(clippy::needless_range_loop)]

use geokern::Dual;

use crate::hand::HandMetric;
use crate::Route;

/// Metric and its first derivatives at one point: `g[a][b]` and `dg[d][a][b]` = ∂_d g_ab.
type Jet = ([[f64; 4]; 4], [[[f64; 4]; 4]; 4]);

/// The inverse of `g` by LU decomposition with partial pivoting.
///
/// A singular matrix (a zero pivot) gives infinite or NaN entries, as dividing by zero does in
/// the generated kernels; nothing panics.
pub fn lu_inverse(g: &[[f64; 4]; 4]) -> [[f64; 4]; 4] {
    let mut lu = *g;
    let mut perm = [0, 1, 2, 3];
    for k in 0..4 {
        let mut p = k;
        for i in k + 1..4 {
            if lu[i][k].abs() > lu[p][k].abs() {
                p = i;
            }
        }
        lu.swap(k, p);
        perm.swap(k, p);
        let inv_pivot = 1.0 / lu[k][k];
        for i in k + 1..4 {
            let l = lu[i][k] * inv_pivot;
            lu[i][k] = l;
            for j in k + 1..4 {
                lu[i][j] -= l * lu[k][j];
            }
        }
    }
    let mut inv = [[0.0; 4]; 4];
    for col in 0..4 {
        // Solve L y = P e_col, then U z = y; z is column `col` of the inverse.
        let mut y = [0.0; 4];
        for i in 0..4 {
            let mut s = if perm[i] == col { 1.0 } else { 0.0 };
            for j in 0..i {
                s -= lu[i][j] * y[j];
            }
            y[i] = s;
        }
        for i in (0..4).rev() {
            let mut s = y[i];
            for j in i + 1..4 {
                s -= lu[i][j] * inv[j][col];
            }
            inv[i][col] = s / lu[i][i];
        }
    }
    inv
}

/// Γ^a_bc from g and ∂g by the textbook formula.
pub fn christoffel_from_jet(g: &[[f64; 4]; 4], dg: &[[[f64; 4]; 4]; 4]) -> [[[f64; 4]; 4]; 4] {
    let ginv = lu_inverse(g);
    let mut first = [[[0.0; 4]; 4]; 4];
    for d in 0..4 {
        for b in 0..4 {
            for c in b..4 {
                first[d][b][c] = 0.5 * (dg[b][d][c] + dg[c][d][b] - dg[d][b][c]);
            }
        }
    }
    let mut gamma = [[[0.0; 4]; 4]; 4];
    for a in 0..4 {
        for b in 0..4 {
            for c in b..4 {
                let mut s = 0.0;
                for d in 0..4 {
                    s += ginv[a][d] * first[d][b][c];
                }
                gamma[a][b][c] = s;
                gamma[a][c][b] = s;
            }
        }
    }
    gamma
}

/// −Γ^a_bc u^b u^c over b ≤ c, off-diagonal terms doubled.
pub fn contract(gamma: &[[[f64; 4]; 4]; 4], u: &[f64; 4]) -> [f64; 4] {
    let mut accel = [0.0; 4];
    for (out, ga) in accel.iter_mut().zip(gamma) {
        let mut s = 0.0;
        for b in 0..4 {
            s += ga[b][b] * u[b] * u[b];
            for c in b + 1..4 {
                s += 2.0 * ga[b][c] * u[b] * u[c];
            }
        }
        *out = -s;
    }
    accel
}

/// Derivatives of the metric by forward-mode dual numbers ([`geokern::Dual`]): one evaluation
/// of g on four-component duals gives g and all of ∂g, exact to rounding.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DualRoute<M>(pub M);

impl<M: HandMetric> DualRoute<M> {
    fn jet(&self, x: &[f64; 4]) -> Jet {
        let xd: [Dual<4>; 4] = core::array::from_fn(|d| Dual::variable(x[d], d));
        let gd = self.0.metric(&xd);
        let g = gd.map(|row| row.map(|v| v.value));
        let dg = core::array::from_fn(|d| gd.map(|row| row.map(|v| v.gradient[d])));
        (g, dg)
    }
}

impl<M: HandMetric> Route for DualRoute<M> {
    fn christoffel(&self, x: &[f64; 4]) -> [[[f64; 4]; 4]; 4] {
        let (g, dg) = self.jet(x);
        christoffel_from_jet(&g, &dg)
    }
    fn geodesic_accel(&self, x: &[f64; 4], u: &[f64; 4]) -> [f64; 4] {
        contract(&self.christoffel(x), u)
    }
}

/// Derivatives of the metric by central differences, (g(x + h e_d) − g(x − h e_d)) / 2h: nine
/// evaluations of g per call.
///
/// The step along coordinate d is h = ε^(1/3) max(1, |x_d|), which balances the O(h²)
/// truncation error against the O(ε/h) rounding error of a central difference (Press et al.,
/// *Numerical Recipes*, 3rd ed., 2007, section 5.7, from memory).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FiniteDifferenceRoute<M>(pub M);

impl<M: HandMetric> FiniteDifferenceRoute<M> {
    fn jet(&self, x: &[f64; 4]) -> Jet {
        let g = self.0.metric(x);
        let mut dg = [[[0.0; 4]; 4]; 4];
        for (d, dgd) in dg.iter_mut().enumerate() {
            let h = f64::EPSILON.cbrt() * x[d].abs().max(1.0);
            let (mut plus, mut minus) = (*x, *x);
            plus[d] += h;
            minus[d] -= h;
            // The step actually taken, after rounding of x ± h.
            let width = plus[d] - minus[d];
            let (gp, gm) = (self.0.metric(&plus), self.0.metric(&minus));
            for a in 0..4 {
                for b in 0..4 {
                    dgd[a][b] = (gp[a][b] - gm[a][b]) / width;
                }
            }
        }
        (g, dg)
    }
}

impl<M: HandMetric> Route for FiniteDifferenceRoute<M> {
    fn christoffel(&self, x: &[f64; 4]) -> [[[f64; 4]; 4]; 4] {
        let (g, dg) = self.jet(x);
        christoffel_from_jet(&g, &dg)
    }
    fn geodesic_accel(&self, x: &[f64; 4], u: &[f64; 4]) -> [f64; 4] {
        contract(&self.christoffel(x), u)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lu_inverse_inverts_with_pivoting() {
        // A zero in the leading position forces a row exchange.
        let g = [
            [0.0, 2.0, 0.0, 1.0],
            [3.0, 0.0, 1.0, 0.0],
            [0.0, 1.0, 4.0, 0.0],
            [1.0, 0.0, 0.0, 5.0],
        ];
        let inv = lu_inverse(&g);
        for i in 0..4 {
            for j in 0..4 {
                let p: f64 = (0..4).map(|k| g[i][k] * inv[k][j]).sum();
                let want = if i == j { 1.0 } else { 0.0 };
                assert!((p - want).abs() < 1e-14, "({i},{j}): {p}");
            }
        }
    }

    #[test]
    fn contraction_doubles_off_diagonal_terms() {
        let mut gamma = [[[0.0; 4]; 4]; 4];
        gamma[1][0][2] = 3.0;
        gamma[1][2][0] = 3.0;
        gamma[2][1][1] = 0.5;
        let a = contract(&gamma, &[2.0, 5.0, 7.0, 0.0]);
        assert_eq!(a, [0.0, -2.0 * 3.0 * 2.0 * 7.0, -0.5 * 25.0, 0.0]);
    }
}
