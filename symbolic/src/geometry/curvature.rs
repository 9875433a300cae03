//! Curvature from the connection: Riemann, Ricci, the Ricci scalar, Einstein, Kretschmann and
//! the geodesic-deviation right-hand side, all exact expressions in the metric's store.
//!
//! R^a_bcd = ∂_c Γ^a_db − ∂_d Γ^a_cb + Γ^a_ce Γ^e_db − Γ^a_de Γ^e_cb (the sign convention
//! of Misner, Thorne & Wheeler, eq. 11.12; from memory). Only c < d is derived; the
//! antisymmetry in the last pair fills in the rest, and every derivative of Γ is taken once.

use num_traits::One;

use super::sample::SamplePoints;
use super::{Derivation, MetricModel};
use crate::expr::{ExprId, Store, SymbolKind, Q};

/// Curvature expressions of one metric.
#[derive(Clone, Debug)]
pub struct Curvature {
    /// R^a_bcd, `[a][b][c][d]`.
    pub riemann: Vec<Vec<Vec<Vec<ExprId>>>>,
    /// R_bd = R^a_bad, symmetric.
    pub ricci: Vec<Vec<ExprId>>,
    /// R = g^bd R_bd.
    pub ricci_scalar: ExprId,
    /// G_ab = R_ab − ½ g_ab R.
    pub einstein: Vec<Vec<ExprId>>,
    /// R_abcd R^abcd.
    pub kretschmann: ExprId,
    /// −R^a_bcd u^b ξ^c u^d over velocity (`u`) and separation (`v`) symbols.
    pub deviation: Vec<ExprId>,
}

/// Derives every curvature quantity from the connection in `d`.
pub fn derive_curvature(model: &mut MetricModel, d: &Derivation) -> Curvature {
    let n = model.dim();
    let xs: Vec<ExprId> = (0..n).map(|i| model.coord(i)).collect();
    let u = model.vector("u", SymbolKind::Velocity);
    let xi = model.vector("v", SymbolKind::Vector);
    let g = model.metric.clone();
    let s = &mut model.store;
    let gam = &d.christoffel;
    let zero = s.int(0);

    let mut riemann = vec![vec![vec![vec![zero; n]; n]; n]; n];
    for a in 0..n {
        for b in 0..n {
            for c in 0..n {
                for dd in c + 1..n {
                    let t1 = s.diff(gam[a][dd][b], xs[c]);
                    let t2 = s.diff(gam[a][c][b], xs[dd]);
                    let mut parts = vec![(t1, Q::one()), (t2, -Q::one())];
                    for e in 0..n {
                        let p = s.sum_of_products(&[(gam[a][c][e], gam[e][dd][b])]);
                        let q = s.sum_of_products(&[(gam[a][dd][e], gam[e][c][b])]);
                        parts.push((p, Q::one()));
                        parts.push((q, -Q::one()));
                    }
                    let r = s.lincomb(&parts);
                    riemann[a][b][c][dd] = r;
                    riemann[a][b][dd][c] = s.neg(r);
                }
            }
        }
    }

    let mut ricci = vec![vec![zero; n]; n];
    for b in 0..n {
        for dd in b..n {
            let terms: Vec<ExprId> = (0..n).map(|a| riemann[a][b][a][dd]).collect();
            let r = s.add(&terms);
            ricci[b][dd] = r;
            ricci[dd][b] = r;
        }
    }
    let pairs: Vec<(ExprId, ExprId)> = (0..n)
        .flat_map(|b| (0..n).map(move |dd| (b, dd)))
        .map(|(b, dd)| (d.inverse[b][dd], ricci[b][dd]))
        .collect();
    let ricci_scalar = s.sum_of_products(&pairs);
    let half = Q::new(1.into(), 2.into());
    let mut einstein = vec![vec![zero; n]; n];
    for a in 0..n {
        for b in a..n {
            let gr = s.mul(&[g[a][b], ricci_scalar]);
            let e = s.lincomb(&[(ricci[a][b], Q::one()), (gr, -half.clone())]);
            einstein[a][b] = e;
            einstein[b][a] = e;
        }
    }

    // K = R_abcd R^abcd: lower the first index, raise the other three one at a time.
    let mut lowered = vec![vec![vec![vec![zero; n]; n]; n]; n];
    let mut raised = riemann.clone();
    for a in 0..n {
        for b in 0..n {
            for c in 0..n {
                for dd in 0..n {
                    let p: Vec<(ExprId, ExprId)> =
                        (0..n).map(|e| (g[a][e], riemann[e][b][c][dd])).collect();
                    lowered[a][b][c][dd] = s.sum_of_products(&p);
                }
            }
        }
    }
    for slot in 1..4 {
        let prev = raised.clone();
        for a in 0..n {
            for b in 0..n {
                for c in 0..n {
                    for dd in 0..n {
                        let idx = [a, b, c, dd];
                        let p: Vec<(ExprId, ExprId)> = (0..n)
                            .map(|e| {
                                let mut j = idx;
                                j[slot] = e;
                                (d.inverse[idx[slot]][e], prev[j[0]][j[1]][j[2]][j[3]])
                            })
                            .collect();
                        raised[a][b][c][dd] = s.sum_of_products(&p);
                    }
                }
            }
        }
    }
    // Both factors are antisymmetric in (a, b) and in (c, d): K = 4 Σ_{a<b, c<d}.
    let mut kp: Vec<(ExprId, ExprId)> = Vec::new();
    for a in 0..n {
        for b in a + 1..n {
            for c in 0..n {
                for dd in c + 1..n {
                    kp.push((lowered[a][b][c][dd], raised[a][b][c][dd]));
                }
            }
        }
    }
    let quarter = s.sum_of_products(&kp);
    let kretschmann = s.scale(quarter, Q::from_integer(4.into()));

    // −R^a_bcd u^b ξ^c u^d = −Σ_b Σ_{c<d} R^a_bcd u^b (ξ^c u^d − ξ^d u^c), by the antisymmetry
    // in (c, d); the bivector ξ∧u is shared by every component.
    let mut wedge = vec![vec![zero; n]; n];
    for c in 0..n {
        for dd in c + 1..n {
            let p = s.mul(&[xi[c], u[dd]]);
            let q = s.mul(&[xi[dd], u[c]]);
            wedge[c][dd] = s.sub(p, q);
        }
    }
    let deviation = (0..n)
        .map(|a| {
            let mut p: Vec<(ExprId, Q)> = Vec::new();
            for b in 0..n {
                let mut inner: Vec<(ExprId, ExprId)> = Vec::new();
                for c in 0..n {
                    for dd in c + 1..n {
                        inner.push((riemann[a][b][c][dd], wedge[c][dd]));
                    }
                }
                let t = s.sum_of_products(&inner);
                if !s.is_zero(t) {
                    p.push((s.mul(&[u[b], t]), -Q::one()));
                }
            }
            s.lincomb(&p)
        })
        .collect();

    Curvature {
        riemann,
        ricci,
        ricci_scalar,
        einstein,
        kretschmann,
        deviation,
    }
}

/// How sure the engine is that an expression vanishes.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub enum ZeroStatus {
    /// Its canonical form is the number zero.
    Proved,
    /// It evaluated to zero (relative to the size of its terms) at this many sample points.
    Sampled(usize),
    /// It is nonzero at some sample point.
    Nonzero,
}

impl std::fmt::Display for ZeroStatus {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ZeroStatus::Proved => write!(f, "zero (proved)"),
            ZeroStatus::Sampled(n) => write!(f, "zero at {n} sample points"),
            ZeroStatus::Nonzero => write!(f, "nonzero"),
        }
    }
}

/// Classifies `e`: proved zero by its canonical form (or, with `prove`, as one rational
/// function), zero at every sample point (to 1e-9 of the magnitude of what cancelled there,
/// since cancellation leaves rounding of that size), or nonzero. Sampling runs first, so the
/// costly proof is only tried on what is zero at every sample point.
pub fn zero_status(s: &Store, e: ExprId, prove: bool) -> ZeroStatus {
    if s.is_zero(e) {
        return ZeroStatus::Proved;
    }
    let pts = SamplePoints::standard();
    let mut seen = 0;
    for k in 0..pts.len() {
        let (v, m) = pts.eval_with_magnitude(s, e, k);
        if !v.is_finite() || !m.is_finite() {
            continue;
        }
        if v.abs() > 1e-9 * m {
            return ZeroStatus::Nonzero;
        }
        seen += 1;
    }
    if seen == 0 {
        ZeroStatus::Nonzero
    } else if prove && crate::expr::proves_zero(s, e) {
        ZeroStatus::Proved
    } else {
        ZeroStatus::Sampled(seen)
    }
}
