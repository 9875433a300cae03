//! The inverse metric, exploiting structure.
//!
//! The nonzero pattern of g splits the coordinates into connected blocks (a diagonal metric
//! is N blocks of one, Boyer-Lindquist Kerr is {t, φ}, {r}, {θ}). Each block is inverted on
//! its own: 1×1 and 2×2 in closed form, larger blocks by the adjugate over memoised minors
//! (every cofactor shares its sub-minors), and blocks beyond eight coordinates by
//! straight-line Gauss-Jordan elimination.

use std::collections::HashMap;

use num_traits::One;

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
    for block in blocks(s, g) {
        let m: Vec<Vec<ExprId>> = block
            .iter()
            .map(|&i| block.iter().map(|&j| g[i][j]).collect())
            .collect();
        let (det, adj) = match block.len() {
            1 => (m[0][0], vec![vec![s.int(1)]]),
            2 => {
                let ad = s.mul(&[m[0][0], m[1][1]]);
                let bc = s.mul(&[m[0][1], m[1][0]]);
                let det = s.sub(ad, bc);
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
