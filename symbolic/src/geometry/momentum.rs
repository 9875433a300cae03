//! The geodesic equations through the momentum p_d = g_dc u^c.
//!
//! With u held constant, Γ_dbc u^b u^c = u^b ∂_b p_d − ½ u^c ∂_d p_c: both halves read the
//! Jacobian M[b][d] = ∂_b p_d. Differentiating p after the common factors of its sum have been
//! pulled out lets the product rule act on a short product: for a metric of Kerr-Schild form
//! p_d = η_dc u^c + f l_d (l·u), so each ∂_b p_d is three products, where differentiating the
//! components first gives sums that no later pass folds back. Likewise ½ ∂_a (u·g·u) with
//! u = g⁻¹p for Hamilton's equations.
//!
//! Which route is cheaper depends on the metric (for Boyer-Lindquist Kerr, whose p has little
//! to factor, differentiating the components wins by a few operations), so these are
//! offered as alternatives and the scheduler keeps the program with fewer operations.

use std::collections::HashMap;

use num_traits::{One, Zero};

use super::dot;
use crate::expr::{ExprId, Node, Store, Q};

/// p_d = g_dc u^c with common factors pulled out (after multiplying out the components, so
/// that `(1 + f·l_x²)·u^x` shows its factors), and its Jacobian.
pub(super) struct Momentum {
    /// p_d over velocity symbols.
    pub p: Vec<ExprId>,
    /// M[b][d] = ∂_b p_d, u constant.
    pub jacobian: Vec<Vec<ExprId>>,
}

impl Momentum {
    /// The factored momentum of metric `g` over coordinates `xs` and velocity symbols `u`.
    pub fn new(s: &mut Store, g: &[Vec<ExprId>], xs: &[ExprId], u: &[ExprId]) -> Momentum {
        let p: Vec<ExprId> = g
            .iter()
            .map(|row| {
                let e = expanded_dot(s, row, u);
                s.collect_common(e)
            })
            .collect();
        let jacobian = xs
            .iter()
            .map(|&xb| p.iter().map(|&pd| s.diff(pd, xb)).collect())
            .collect();
        Momentum { p, jacobian }
    }

    /// ½ u^c ∂_d p_c = ½ ∂_d (u·g·u), for each d.
    pub fn half_gradient_of_norm(&self, s: &mut Store, u: &[ExprId]) -> Vec<ExprId> {
        let half = Q::new(1.into(), 2.into());
        self.jacobian
            .iter()
            .map(|row| {
                let e = dot(s, u, row);
                s.scale(e, half.clone())
            })
            .collect()
    }

    /// w_d = Γ_dbc u^b u^c = u^b M[b][d] − ½ u^c M[d][c].
    pub fn lowered_accel(&self, s: &mut Store, u: &[ExprId]) -> Vec<ExprId> {
        let half = Q::new(1.into(), 2.into());
        let n = u.len();
        let m = &self.jacobian;
        (0..n)
            .map(|d| {
                let mut parts = Vec::new();
                for b in 0..n {
                    if !s.is_zero(m[b][d]) {
                        parts.push((s.mul(&[u[b], m[b][d]]), Q::one()));
                    }
                    if !s.is_zero(m[d][b]) {
                        parts.push((s.mul(&[u[b], m[d][b]]), -half.clone()));
                    }
                }
                s.lincomb(&parts)
            })
            .collect()
    }

    /// dp_a/dλ = ½ ∂_a g_bc u^b u^c with u = g⁻¹p: the gradient over velocity symbols `u`,
    /// then each u^c replaced by `dx[c]`.
    pub fn hamilton_dp(&self, s: &mut Store, u: &[ExprId], dx: &[ExprId]) -> Vec<ExprId> {
        let over_u = self.half_gradient_of_norm(s, u);
        let map: HashMap<ExprId, ExprId> = u.iter().copied().zip(dx.iter().copied()).collect();
        over_u.iter().map(|&e| s.substitute(e, &map)).collect()
    }
}

/// Σ_c m_c u^c with every sum m_c multiplied out, so that the factors inside the components
/// are visible to [`Store::collect_common`].
fn expanded_dot(s: &mut Store, m: &[ExprId], u: &[ExprId]) -> ExprId {
    let mut parts: Vec<(ExprId, Q)> = Vec::new();
    for (&mc, &uc) in m.iter().zip(u) {
        if s.is_zero(mc) || s.is_zero(uc) {
            continue;
        }
        match s.node(mc).clone() {
            Node::Add(c0, ts) => {
                if !c0.is_zero() {
                    parts.push((uc, c0));
                }
                for (t, k) in ts.iter() {
                    let p = s.mul(&[*t, uc]);
                    parts.push((p, k.clone()));
                }
            }
            _ => {
                let p = s.mul(&[mc, uc]);
                parts.push((p, Q::one()));
            }
        }
    }
    s.lincomb(&parts)
}
