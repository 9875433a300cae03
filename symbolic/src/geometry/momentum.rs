//! The geodesic equations through the momentum p_d = g_dc u^c.
//!
//! With u held constant, Γ_dbc u^b u^c = u^b ∂_b p_d − ½ u^c ∂_d p_c: both halves read the
//! Jacobian M[b][d] = ∂_b p_d. Differentiating p after the common factors of its sum have been
//! pulled out lets the product rule act on a short product: for a metric of Kerr-Schild form
//! p_d = η_dc u^c + f l_d (l·u), so each ∂_b p_d is three products, where differentiating the
//! components first gives sums that no later pass folds back. Likewise ½ ∂_a (u·g·u) with
//! u = g⁻¹p for Hamilton's equations.
//!
//! The factored form matters: Boyer-Lindquist Kerr's t-φ block is a diagonal part plus
//! F·l lᵀ with l = (1, −a sin²θ), and p_t = −u^t + F·L, p_φ = (r² + a²) sin²θ u^φ − a sin²θ F·L
//! share L = u^t − a sin²θ u^φ once common factors are pulled out by the group that saves the
//! most ([`Store::factor_groups`]) rather than by the most frequent single base. The
//! derivatives are factored again, so ∂_r p_t is one product K·L, not a sum of two.
//!
//! For Hamilton's equations the norm u·p is itself factored before it is differentiated: the
//! same L then appears squared (F·L²), and ½ ∂_a (u·g·u) is a few products instead of the
//! contraction of a whole Jacobian row.
//!
//! Which route is cheaper still depends on the metric, so these are offered as alternatives
//! and the scheduler keeps the program with fewer operations.

use std::collections::HashMap;

use num_traits::{One, Zero};

use crate::expr::{ExprId, Node, Store, Q};

/// The Jacobian of p_d = g_dc u^c, taken after common factors were pulled out of p (with the
/// components multiplied out first, so that `(1 + f·l_x²)·u^x` shows its factors), and the
/// factored norm u·p.
pub(super) struct Momentum {
    /// M[b][d] = ∂_b p_d, u constant.
    pub jacobian: Vec<Vec<ExprId>>,
    /// u·p = u·g·u with common factors pulled out.
    pub norm: ExprId,
}

impl Momentum {
    /// The factored momentum of metric `g` over coordinates `xs` and velocity symbols `u`.
    pub fn new(s: &mut Store, g: &[Vec<ExprId>], xs: &[ExprId], u: &[ExprId]) -> Momentum {
        let p: Vec<ExprId> = g
            .iter()
            .map(|row| {
                let e = expanded_dot(s, row, u);
                // Two factorings, the cheaper by a rough count: grouping finds the shared
                // contraction (Kerr's L), the plain pass keeps a factor common to every term
                // outside (Kerr-Newman's 1/Σ) where grouping would split it.
                let plain = s.collect_common(e);
                let spread = s.distribute_single_sums(e);
                let grouped = s.factor_groups(spread);
                if s.tree_cost(plain) < s.tree_cost(grouped) {
                    plain
                } else {
                    grouped
                }
            })
            .collect();
        let jacobian = xs
            .iter()
            .map(|&xb| {
                p.iter()
                    .map(|&pd| {
                        let d = s.diff(pd, xb);
                        s.factor_groups(d)
                    })
                    .collect()
            })
            .collect();
        let norm = expanded_dot(s, &p, u);
        let norm = s.factor_groups(norm);
        Momentum { jacobian, norm }
    }

    /// ½ ∂_d (u·g·u) for each d, by differentiating the factored norm.
    pub fn half_gradient_of_factored_norm(&self, s: &mut Store, xs: &[ExprId]) -> Vec<ExprId> {
        let half = Q::new(1.into(), 2.into());
        xs.iter()
            .map(|&x| {
                let d = s.diff(self.norm, x);
                let d = s.factor_groups(d);
                s.scale(d, half.clone())
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

    /// dp_a/dλ = ½ ∂_a g_bc u^b u^c with u = g⁻¹p: the gradient of the factored norm over
    /// velocity symbols `u`, then each u^c replaced by `dx[c]`.
    pub fn hamilton_dp(
        &self,
        s: &mut Store,
        xs: &[ExprId],
        u: &[ExprId],
        dx: &[ExprId],
    ) -> Vec<ExprId> {
        let over_u = self.half_gradient_of_factored_norm(s, xs);
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
