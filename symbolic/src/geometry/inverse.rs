//! The inverse metric, exploiting structure.
//!
//! The nonzero pattern of g splits the coordinates into connected blocks (a diagonal metric
//! is N blocks of one, Boyer-Lindquist Kerr is {t, φ}, {r}, {θ}). Each block is inverted on
//! its own: 1×1 and 2×2 in closed form; a larger block that is a constant matrix plus a
//! rank-one term (g = C + f·l lᵀ, the Kerr-Schild form) by the Sherman-Morrison formula;
//! other blocks by the adjugate over memoised minors (every cofactor shares its
//! sub-minors), and blocks beyond eight coordinates by straight-line Gauss-Jordan
//! elimination.

use std::collections::HashMap;

use num_traits::{One, Zero};

use super::sample::SamplePoints;
use crate::expr::{ExprId, Store, Q};

/// Why a metric has no inverse.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum InverseError {
    /// The determinant of a block is zero in canonical form or at every sample point.
    #[error("the metric's determinant is identically zero")]
    SingularBlock {
        /// The coordinate numbers of the singular block.
        coords: Vec<usize>,
    },
}

/// Largest block inverted by the adjugate; beyond it, elimination is cheaper to build.
const ADJUGATE_LIMIT: usize = 8;

/// g⁻¹ for a symmetric `g`, block by block.
pub fn invert(s: &mut Store, g: &[Vec<ExprId>]) -> Result<Vec<Vec<ExprId>>, InverseError> {
    let n = g.len();
    let zero = s.int(0);
    let mut inv = vec![vec![zero; n]; n];
    let all: Vec<ExprId> = g.iter().flatten().copied().collect();
    // The metric's atoms, gathered once and only if a 2×2 block needs them.
    let mut atoms: Option<Vec<ExprId>> = None;
    for block in blocks(s, g) {
        let m: Vec<Vec<ExprId>> = block
            .iter()
            .map(|&i| block.iter().map(|&j| g[i][j]).collect())
            .collect();
        if block.len() > 2 {
            if let Some((den, sub)) = rank_one_update(s, &m) {
                check_nonsingular(s, den, &block)?;
                for (bi, &i) in block.iter().enumerate() {
                    for (bj, &j) in block.iter().enumerate() {
                        inv[i][j] = sub[bi][bj];
                    }
                }
                continue;
            }
        }
        let (det, adj) = match block.len() {
            1 => (m[0][0], vec![vec![s.int(1)]]),
            2 => {
                let ad = s.mul(&[m[0][0], m[1][1]]);
                let bc = s.mul(&[m[0][1], m[1][0]]);
                let det = s.sub(ad, bc);
                // A determinant that is one product of the metric's pieces (Kerr: −Δ sin²θ)
                // is cheaper to compute and cancels against the entries it divides.
                let atoms = atoms.get_or_insert_with(|| super::monomial::atoms(s, &all));
                let det = super::monomial::as_monomial(s, det, atoms).unwrap_or(det);
                let off = s.neg(m[0][1]);
                (det, vec![vec![m[1][1], off], vec![off, m[0][0]]])
            }
            k if k <= ADJUGATE_LIMIT => adjugate(s, &m),
            _ => {
                let det_check = gauss_jordan_det(s, &m);
                check_nonsingular(s, det_check, &block)?;
                let sub = gauss_jordan(s, &m);
                for (bi, &i) in block.iter().enumerate() {
                    for (bj, &j) in block.iter().enumerate() {
                        inv[i][j] = sub[bi][bj];
                    }
                }
                continue;
            }
        };
        check_nonsingular(s, det, &block)?;
        let rdet = s.powi(det, -1);
        for (bi, &i) in block.iter().enumerate() {
            for (bj, &j) in block.iter().enumerate().skip(bi) {
                let e = s.mul(&[adj[bi][bj], rdet]);
                inv[i][j] = e;
                inv[j][i] = e;
            }
        }
    }
    Ok(inv)
}

fn check_nonsingular(s: &Store, det: ExprId, block: &[usize]) -> Result<(), InverseError> {
    let singular = s.is_zero(det) || SamplePoints::standard().all_zero(s, det);
    if singular {
        Err(InverseError::SingularBlock {
            coords: block.to_vec(),
        })
    } else {
        Ok(())
    }
}

/// Connected components of the off-diagonal nonzero pattern, each sorted, ordered by their
/// first coordinate.
fn blocks(s: &Store, g: &[Vec<ExprId>]) -> Vec<Vec<usize>> {
    let n = g.len();
    let mut parent: Vec<usize> = (0..n).collect();
    fn find(p: &mut [usize], i: usize) -> usize {
        let mut r = i;
        while p[r] != r {
            r = p[r];
        }
        p[i] = r;
        r
    }
    for i in 0..n {
        for j in i + 1..n {
            if !s.is_zero(g[i][j]) {
                let (a, b) = (find(&mut parent, i), find(&mut parent, j));
                parent[a.max(b)] = a.min(b);
            }
        }
    }
    let mut out: Vec<Vec<usize>> = Vec::new();
    let mut root_index: Vec<Option<usize>> = vec![None; n];
    for i in 0..n {
        let r = find(&mut parent, i);
        match root_index[r] {
            Some(k) => out[k].push(i),
            None => {
                root_index[r] = Some(out.len());
                out.push(vec![i]);
            }
        }
    }
    out
}

/// For M = C + f·l lᵀ with C a constant invertible matrix (read off as the numeric part of
/// each entry) and the rest of rank one in canonical form, `(1 + f·lᵀC⁻¹l, M⁻¹)` by the
/// Sherman-Morrison formula (Sherman and Morrison 1950):
/// M⁻¹ = C⁻¹ − f·(C⁻¹l)(C⁻¹l)ᵀ / (1 + f·lᵀC⁻¹l). M is singular exactly where the first
/// element vanishes (det M = det C·(1 + f·lᵀC⁻¹l)). `None` if M has no such form.
fn rank_one_update(s: &mut Store, m: &[Vec<ExprId>]) -> Option<(ExprId, Vec<Vec<ExprId>>)> {
    let n = m.len();
    let zero = s.int(0);
    let mut constant = vec![vec![Q::zero(); n]; n];
    let mut rest = vec![vec![zero; n]; n];
    for a in 0..n {
        for b in 0..n {
            let (c, r) = match s.node(m[a][b]).clone() {
                crate::expr::Node::Num(q) => (q, zero),
                crate::expr::Node::Add(q, ts) => (q, s.lincomb(&ts)),
                _ => (Q::zero(), m[a][b]),
            };
            constant[a][b] = c;
            rest[a][b] = r;
        }
    }
    let pivot = (0..n).find(|&a| !s.is_zero(rest[a][a]))?;
    let f = rest[pivot][pivot];
    let f_inv = s.powi(f, -1);
    let l: Vec<ExprId> = (0..n).map(|a| s.mul(&[rest[a][pivot], f_inv])).collect();
    for a in 0..n {
        for b in a..n {
            let term = s.mul(&[f, l[a], l[b]]);
            let diff = s.sub(term, rest[a][b]);
            if !s.is_zero(diff) {
                return None;
            }
        }
    }
    let c_inv = rational_inverse(&constant)?;
    // h = C⁻¹ l, then 1 + f·(l·h).
    let h: Vec<ExprId> = (0..n)
        .map(|a| {
            let parts: Vec<(ExprId, Q)> = (0..n).map(|b| (l[b], c_inv[a][b].clone())).collect();
            s.lincomb(&parts)
        })
        .collect();
    let pairs: Vec<(ExprId, ExprId)> = (0..n).map(|a| (l[a], h[a])).collect();
    let lh = s.sum_of_products(&pairs);
    let f_lh = s.mul(&[f, lh]);
    let one = s.int(1);
    let den = s.add(&[one, f_lh]);
    let scale = s.mul_pow(&[(f, Q::one()), (den, -Q::one())]);
    let mut inv = vec![vec![zero; n]; n];
    for a in 0..n {
        for b in a..n {
            let c = s.num(c_inv[a][b].clone());
            let t = s.mul(&[scale, h[a], h[b]]);
            let e = s.sub(c, t);
            inv[a][b] = e;
            inv[b][a] = e;
        }
    }
    Some((den, inv))
}

/// The exact inverse of a rational matrix by Gauss-Jordan elimination with pivoting, `None`
/// if it is singular.
fn rational_inverse(m: &[Vec<Q>]) -> Option<Vec<Vec<Q>>> {
    let n = m.len();
    let mut a: Vec<Vec<Q>> = m.to_vec();
    let mut b: Vec<Vec<Q>> = (0..n)
        .map(|i| {
            (0..n)
                .map(|j| if i == j { Q::one() } else { Q::zero() })
                .collect()
        })
        .collect();
    for k in 0..n {
        let p = (k..n).find(|&i| !a[i][k].is_zero())?;
        a.swap(k, p);
        b.swap(k, p);
        let r = a[k][k].recip();
        for j in 0..n {
            a[k][j] = &a[k][j] * &r;
            b[k][j] = &b[k][j] * &r;
        }
        for i in 0..n {
            if i == k || a[i][k].is_zero() {
                continue;
            }
            let f = a[i][k].clone();
            for j in 0..n {
                let ta = &f * &a[k][j];
                a[i][j] = &a[i][j] - &ta;
                let tb = &f * &b[k][j];
                b[i][j] = &b[i][j] - &tb;
            }
        }
    }
    Some(b)
}

/// (det M, adj M) by Laplace expansion with memoised minors keyed by (row set, column set).
fn adjugate(s: &mut Store, m: &[Vec<ExprId>]) -> (ExprId, Vec<Vec<ExprId>>) {
    let n = m.len();
    let full: u32 = (1u32 << n) - 1;
    let mut memo: HashMap<(u32, u32), ExprId> = HashMap::new();
    let mut cof = vec![vec![s.int(0); n]; n];
    for i in 0..n {
        for j in i..n {
            let minor = minor_det(s, m, full & !(1 << i), full & !(1 << j), &mut memo);
            let c = if (i + j) % 2 == 0 {
                minor
            } else {
                s.neg(minor)
            };
            cof[i][j] = c;
            cof[j][i] = c;
        }
    }
    // det = Σ_j M_0j C_0j; the adjugate is the transposed cofactor matrix (symmetric here).
    let pairs: Vec<(ExprId, ExprId)> = (0..n).map(|j| (m[0][j], cof[0][j])).collect();
    let det = s.sum_of_products(&pairs);
    (det, cof)
}

fn minor_det(
    s: &mut Store,
    m: &[Vec<ExprId>],
    rows: u32,
    cols: u32,
    memo: &mut HashMap<(u32, u32), ExprId>,
) -> ExprId {
    if rows == 0 {
        return s.int(1);
    }
    if let Some(&d) = memo.get(&(rows, cols)) {
        return d;
    }
    let r = rows.trailing_zeros() as usize;
    let rest = rows & !(1 << r);
    let mut parts: Vec<(ExprId, Q)> = Vec::new();
    let mut sign = Q::one();
    for c in 0..m.len() {
        if cols & (1 << c) == 0 {
            continue;
        }
        if !s.is_zero(m[r][c]) {
            let sub = minor_det(s, m, rest, cols & !(1 << c), memo);
            if !s.is_zero(sub) {
                let t = s.mul(&[m[r][c], sub]);
                parts.push((t, sign.clone()));
            }
        }
        sign = -sign;
    }
    let d = s.lincomb(&parts);
    memo.insert((rows, cols), d);
    d
}

/// Determinant by elimination without pivoting: the product of the pivots.
fn gauss_jordan_det(s: &mut Store, m: &[Vec<ExprId>]) -> ExprId {
    let n = m.len();
    let mut a: Vec<Vec<ExprId>> = m.to_vec();
    let mut pivots = Vec::with_capacity(n);
    for k in 0..n {
        let piv = a[k][k];
        pivots.push(piv);
        let rp = s.powi(piv, -1);
        for i in k + 1..n {
            if s.is_zero(a[i][k]) {
                continue;
            }
            let f = s.mul(&[a[i][k], rp]);
            for j in k..n {
                let t = s.mul(&[f, a[k][j]]);
                a[i][j] = s.sub(a[i][j], t);
            }
        }
    }
    s.mul(&pivots)
}

/// Inverse by Gauss-Jordan elimination without pivoting, as straight-line expressions.
fn gauss_jordan(s: &mut Store, m: &[Vec<ExprId>]) -> Vec<Vec<ExprId>> {
    let n = m.len();
    let mut a: Vec<Vec<ExprId>> = m.to_vec();
    let mut b: Vec<Vec<ExprId>> = (0..n)
        .map(|i| (0..n).map(|j| s.int(i64::from(i == j))).collect())
        .collect();
    for k in 0..n {
        let rp = s.powi(a[k][k], -1);
        for j in 0..n {
            a[k][j] = s.mul(&[a[k][j], rp]);
            b[k][j] = s.mul(&[b[k][j], rp]);
        }
        for i in 0..n {
            if i == k || s.is_zero(a[i][k]) {
                continue;
            }
            let f = a[i][k];
            for j in 0..n {
                let ta = s.mul(&[f, a[k][j]]);
                a[i][j] = s.sub(a[i][j], ta);
                let tb = s.mul(&[f, b[k][j]]);
                b[i][j] = s.sub(b[i][j], tb);
            }
        }
    }
    b
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::{Func, SymbolKind};

    /// η + f·l lᵀ with l = (1, x, y, sin x), f = 1/(1 + x² y²): Kerr-Schild shape with a
    /// non-null l, so the Sherman-Morrison denominator is not 1.
    fn rank_one_metric(s: &mut Store) -> Vec<Vec<ExprId>> {
        let x = s.symbol("x", SymbolKind::Coordinate(1));
        let y = s.symbol("y", SymbolKind::Coordinate(2));
        let xy = s.mul(&[x, y]);
        let xy2 = s.powi(xy, 2);
        let one = s.int(1);
        let den = s.add(&[one, xy2]);
        let f = s.powi(den, -1);
        let f = s.bind(f);
        let sx = s.call(Func::Sin, x);
        let l = [one, x, y, sx];
        let eta = [-1, 1, 1, 1];
        (0..4)
            .map(|a| {
                (0..4)
                    .map(|b| {
                        let t = s.mul(&[f, l[a], l[b]]);
                        if a == b {
                            let c = s.int(eta[a]);
                            s.add(&[c, t])
                        } else {
                            t
                        }
                    })
                    .collect()
            })
            .collect()
    }

    #[test]
    fn sherman_morrison_inverts_a_rank_one_update() {
        let mut s = Store::new();
        let g = rank_one_metric(&mut s);
        assert!(rank_one_update(&mut s, &g).is_some());
        let inv = invert(&mut s, &g).expect("invertible");
        for (xv, yv) in [(0.3, -1.2), (2.5, 0.7), (-1.1, 4.0)] {
            let at = |sym: &crate::expr::Symbol| if sym.name == "x" { xv } else { yv };
            for a in 0..4 {
                for b in 0..4 {
                    let sum: f64 = (0..4)
                        .map(|c| s.eval(g[a][c], &at) * s.eval(inv[c][b], &at))
                        .sum();
                    let want = if a == b { 1.0 } else { 0.0 };
                    assert!((sum - want).abs() < 1e-13, "({a},{b}): {sum}");
                }
            }
        }
    }

    #[test]
    fn a_full_rank_remainder_is_not_taken_for_rank_one() {
        let mut s = Store::new();
        let mut g = rank_one_metric(&mut s);
        // Disturb one off-diagonal pair: the remainder is no longer f·l lᵀ.
        let z = s.symbol("x", SymbolKind::Coordinate(1));
        let e = s.add(&[g[1][2], z]);
        g[1][2] = e;
        g[2][1] = e;
        assert!(rank_one_update(&mut s, &g).is_none());
        // The adjugate still inverts it.
        let inv = invert(&mut s, &g).expect("invertible");
        let at = |sym: &crate::expr::Symbol| if sym.name == "x" { 0.4 } else { -0.9 };
        let sum: f64 = (0..4)
            .map(|c| s.eval(g[1][c], &at) * s.eval(inv[c][1], &at))
            .sum();
        assert!((sum - 1.0).abs() < 1e-12, "{sum}");
    }

    #[test]
    fn exact_rational_inverse() {
        let q = |n: i64| Q::from_integer(n.into());
        let m = vec![vec![q(0), q(2)], vec![q(1), q(1)]];
        let inv = rational_inverse(&m).expect("invertible");
        // [[0,2],[1,1]]⁻¹ = [[-1/2, 1], [1/2, 0]]
        assert_eq!(inv[0][0], Q::new((-1).into(), 2.into()));
        assert_eq!(inv[0][1], q(1));
        assert_eq!(inv[1][0], Q::new(1.into(), 2.into()));
        assert_eq!(inv[1][1], q(0));
        assert!(rational_inverse(&[vec![q(1), q(2)], vec![q(2), q(4)]]).is_none());
    }
}
