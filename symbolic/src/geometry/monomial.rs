//! Recognising an expression as a monomial in the metric's atoms.
//!
//! A 2×2 block's determinant g_tt g_φφ − g_tφ² is a sum of products that often equals one
//! product of the pieces the declaration names: for Kerr in Boyer-Lindquist form it is
//! −Δ sin²θ. Canonical forms do not see that (it takes sin² + cos² = 1 and a common
//! denominator), but the values do: log|det| is then linear in the logarithms of the atoms.
//! A least-squares fit at the engine's sample points proposes integer exponents and a small
//! rational coefficient; the exact rational-function prover then decides, so a proposal that
//! is wrong is never used.

use num_traits::Zero;

use super::sample::SamplePoints;
use crate::expr::{proves_zero, ExprId, Node, Store, Q};

/// Most atoms a fit considers: beyond this the normal equations grow ill-conditioned on 12
/// points.
const MAX_ATOMS: usize = 9;

/// Largest exponent magnitude and coefficient denominator accepted.
const MAX_EXPONENT: f64 = 4.0;
const MAX_DENOMINATOR: i64 = 16;

/// The atoms of `roots` that a monomial may be built from: named pieces, function calls,
/// non-integer powers and symbols, without looking inside them. Sorted by id.
pub(super) fn atoms(s: &Store, roots: &[ExprId]) -> Vec<ExprId> {
    let mut found = std::collections::BTreeSet::new();
    let mut stack: Vec<ExprId> = roots.to_vec();
    let mut seen = std::collections::HashSet::new();
    while let Some(e) = stack.pop() {
        if !seen.insert(e) {
            continue;
        }
        match s.node(e) {
            Node::Num(_) | Node::Constant(_) => {}
            Node::Add(_, ts) | Node::Mul(ts) => stack.extend(ts.iter().map(|(t, _)| *t)),
            Node::Symbol(_) | Node::Call(..) | Node::Pow(..) | Node::Bound(_) => {
                found.insert(e);
            }
        }
    }
    found.into_iter().collect()
}

/// `e` as k·Π atomᵢ^nᵢ with small integer nᵢ and a small rational k, proven equal to `e`;
/// `None` when no such form is found or proven.
pub(super) fn as_monomial(s: &mut Store, e: ExprId, atoms: &[ExprId]) -> Option<ExprId> {
    if atoms.is_empty() || atoms.len() > MAX_ATOMS || s.is_zero(e) {
        return None;
    }
    if let Node::Mul(_) | Node::Symbol(_) | Node::Bound(_) = s.node(e) {
        return None; // already a product
    }
    let points = SamplePoints::standard();
    let n = atoms.len() + 1;
    let mut rows: Vec<Vec<f64>> = Vec::new();
    let mut rhs: Vec<f64> = Vec::new();
    let mut roots = atoms.to_vec();
    roots.push(e);
    let mut samples = Vec::new();
    for k in 0..points.len() {
        let v = points.eval(s, &roots, k);
        if v.iter().any(|x| !x.is_finite() || *x == 0.0) {
            continue;
        }
        let mut row: Vec<f64> = v[..atoms.len()].iter().map(|x| x.abs().ln()).collect();
        row.push(1.0);
        rows.push(row);
        rhs.push(v[atoms.len()].abs().ln());
        samples.push(v);
    }
    if rows.len() < n + 2 {
        return None;
    }
    let fit = least_squares(&rows, &rhs, n)?;
    let exponents: Vec<i64> = fit[..atoms.len()]
        .iter()
        .map(|x| {
            let r = x.round();
            ((x - r).abs() < 1e-6 && r.abs() <= MAX_EXPONENT).then_some(r as i64)
        })
        .collect::<Option<_>>()?;
    // The coefficient, the same at every point.
    let coefficient = |v: &[f64]| {
        let product: f64 = v[..atoms.len()]
            .iter()
            .zip(&exponents)
            .map(|(x, n)| x.powi(*n as i32))
            .product();
        v[atoms.len()] / product
    };
    let k0 = coefficient(&samples[0]);
    if samples
        .iter()
        .any(|v| (coefficient(v) - k0).abs() > 1e-9 * k0.abs())
    {
        return None;
    }
    let k = small_rational(k0)?;
    let mut factors: Vec<(ExprId, Q)> = atoms
        .iter()
        .zip(&exponents)
        .filter(|(_, n)| **n != 0)
        .map(|(a, n)| (*a, Q::from_integer((*n).into())))
        .collect();
    let kid = s.num(k);
    factors.push((kid, Q::from_integer(1.into())));
    let candidate = s.mul_pow(&factors);
    let difference = s.sub(e, candidate);
    (s.is_zero(difference) || proves_zero(s, difference)).then_some(candidate)
}

/// The nearest p/q with q ≤ [`MAX_DENOMINATOR`] within 1e-9 relative, if any.
fn small_rational(x: f64) -> Option<Q> {
    (1..=MAX_DENOMINATOR).find_map(|q| {
        let p = (x * q as f64).round();
        let close = (x - p / q as f64).abs() <= 1e-9 * x.abs().max(1e-300);
        (close && !p.is_zero() && p.abs() < 1e12).then(|| Q::new((p as i64).into(), q.into()))
    })
}

/// The least-squares solution of `rows · x = rhs` by the normal equations with partial
/// pivoting, `None` if they are singular.
fn least_squares(rows: &[Vec<f64>], rhs: &[f64], n: usize) -> Option<Vec<f64>> {
    let mut a = vec![vec![0.0; n + 1]; n];
    for (row, b) in rows.iter().zip(rhs) {
        for i in 0..n {
            for j in 0..n {
                a[i][j] += row[i] * row[j];
            }
            a[i][n] += row[i] * b;
        }
    }
    for k in 0..n {
        let p = (k..n).max_by(|&i, &j| a[i][k].abs().total_cmp(&a[j][k].abs()))?;
        if a[p][k].abs() < 1e-12 {
            return None;
        }
        a.swap(k, p);
        for i in 0..n {
            if i != k {
                let f = a[i][k] / a[k][k];
                for j in k..=n {
                    a[i][j] -= f * a[k][j];
                }
            }
        }
    }
    Some((0..n).map(|i| a[i][n] / a[i][i]).collect())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::{Func, SymbolKind};

    /// The t-φ determinant of Kerr in Boyer-Lindquist form is −Δ sin²θ (common practice):
    /// found among the atoms and proven.
    #[test]
    fn kerr_determinant_is_minus_delta_sin_squared() {
        let mut s = Store::new();
        let r = s.symbol("r", SymbolKind::Coordinate(1));
        let th = s.symbol("theta", SymbolKind::Coordinate(2));
        let m = s.symbol("m", SymbolKind::Parameter(0));
        let a = s.symbol("a", SymbolKind::Parameter(1));
        let (sin, cos) = (s.call(Func::Sin, th), s.call(Func::Cos, th));
        let q = |n: i64| Q::from_integer(n.into());
        let r2 = s.powi(r, 2);
        let a2 = s.powi(a, 2);
        let ac = s.mul(&[a, cos]);
        let ac2 = s.powi(ac, 2);
        let sigma = s.add(&[r2, ac2]);
        let sigma = s.bind(sigma);
        let mr = s.mul(&[m, r]);
        let delta = s.lincomb(&[(r2, q(1)), (mr, q(-2)), (a2, q(1))]);
        let delta = s.bind(delta);
        let s2 = s.powi(sin, 2);
        let inv_sigma = s.powi(sigma, -1);
        // g_tt = −1 + 2mr/σ, g_tφ = −2mar sin²θ/σ,
        // g_φφ = (r² + a² + 2mr a² sin²θ/σ) sin²θ.
        let one = s.int(1);
        let mr_sigma = s.mul(&[mr, inv_sigma]);
        let gtt = s.lincomb(&[(one, q(-1)), (mr_sigma, q(2))]);
        let tphi = s.mul(&[mr, a, s2, inv_sigma]);
        let gtphi = s.scale(tphi, q(-2));
        let inner_extra = s.mul(&[mr, a2, s2, inv_sigma]);
        let inner = s.lincomb(&[(r2, q(1)), (a2, q(1)), (inner_extra, q(2))]);
        let gphph = s.mul(&[inner, s2]);
        let ad = s.mul(&[gtt, gphph]);
        let bc = s.mul(&[gtphi, gtphi]);
        let det = s.sub(ad, bc);
        // Δ appears only in g_rr, so it is among the atoms of the whole metric.
        let grr = s.mul_pow(&[(sigma, q(1)), (delta, q(-1))]);
        let found = atoms(&s, &[gtt, gtphi, gphph, grr]);
        let mono = as_monomial(&mut s, det, &found).expect("recognised");
        let want = s.mul(&[delta, s2]);
        let want = s.scale(want, q(-1));
        assert_eq!(mono, want, "{}", s.display(mono));
    }

    #[test]
    fn a_sum_that_is_no_monomial_is_left_alone() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let e = s.add(&[x, y]);
        let found = atoms(&s, &[e]);
        assert_eq!(found.len(), 2);
        assert!(as_monomial(&mut s, e, &found).is_none());
    }

    #[test]
    fn small_rationals() {
        assert_eq!(small_rational(-0.5), Some(Q::new((-1).into(), 2.into())));
        assert_eq!(small_rational(3.0), Some(Q::from_integer(3.into())));
        assert_eq!(small_rational(std::f64::consts::PI), None);
    }
}
