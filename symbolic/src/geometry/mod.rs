//! From a metric to its connection: derivatives, inverse, Christoffel symbols and the
//! right-hand sides of the geodesic equations, all as expressions in one [`Store`].
//!
//! Every kernel is built the cheap way before any scheduling happens: the geodesic
//! acceleration contracts with the velocity before raising the index, so it never sums a
//! full Γ array, and Hamilton's equations reuse the same contraction with u = g⁻¹p. Both are
//! built two ways, from the contracted metric derivatives and from the derivative of the
//! factored momentum p = g·u (the `momentum` module), and the scheduler keeps the cheaper.

mod curvature;
mod inverse;
pub(crate) mod momentum;
mod monomial;
mod sample;

pub use curvature::{derive_curvature, zero_status, Curvature, ZeroStatus};
pub use inverse::{invert, InverseError};
pub use sample::SamplePoints;

use num_traits::One;

use crate::expr::{ExprId, Node, Store, SymbolKind, Q};

/// A metric ready for derivation: its components as expressions over coordinate and
/// parameter symbols of `store`.
#[derive(Clone, Debug)]
pub struct MetricModel {
    /// Struct name, e.g. `Kerr`.
    pub name: String,
    /// Doc lines of the declaration.
    pub docs: Vec<String>,
    /// Coordinate names in declared order.
    pub coords: Vec<String>,
    /// Parameter names in declared order.
    pub params: Vec<String>,
    /// The expression store holding every expression of this metric.
    pub store: Store,
    /// g_ab, symmetric, `dim × dim`.
    pub metric: Vec<Vec<ExprId>>,
    /// A closed-form inverse declared by the user (already proven by the lowering step).
    pub declared_inverse: Option<Vec<Vec<ExprId>>>,
    /// User invariants over coordinate, parameter, velocity and momentum symbols.
    pub invariants: Vec<(String, ExprId)>,
    /// Whether curvature kernels were asked for.
    pub curvature: bool,
    /// Whether to attempt exact proofs that Ricci components vanish (slower than sampling;
    /// the command-line `check --curvature` asks for it, the macro does not).
    pub prove_zeros: bool,
}

impl MetricModel {
    /// Number of coordinates.
    pub fn dim(&self) -> usize {
        self.coords.len()
    }

    /// The coordinate symbol x^i (created on first use).
    pub fn coord(&mut self, i: usize) -> ExprId {
        let name = self.coords[i].clone();
        self.store.symbol(&name, SymbolKind::Coordinate(i))
    }

    /// The parameter symbol number i.
    pub fn param(&mut self, i: usize) -> ExprId {
        let name = self.params[i].clone();
        self.store.symbol(&name, SymbolKind::Parameter(i))
    }

    /// A vector of symbols of one kind (`u`, `p` or `v`), named `NAME_coord`.
    pub fn vector(&mut self, prefix: &str, kind: fn(usize) -> SymbolKind) -> Vec<ExprId> {
        (0..self.dim())
            .map(|i| {
                let name = format!("{prefix}_{}", self.coords[i]);
                self.store.symbol(&name, kind(i))
            })
            .collect()
    }
}

/// Everything derived from a metric, as expressions in the model's store.
#[derive(Clone, Debug)]
pub struct Derivation {
    /// `dg[k][a][b]` = ∂_k g_ab.
    pub dg: Vec<Vec<Vec<ExprId>>>,
    /// g^ab.
    pub inverse: Vec<Vec<ExprId>>,
    /// Γ^a_bc, `[a][b][c]`.
    pub christoffel: Vec<Vec<Vec<ExprId>>>,
    /// −Γ^a_bc u^b u^c over velocity symbols, through the factored momentum.
    pub accel: Vec<ExprId>,
    /// The same, from the contracted metric derivatives: the scheduler keeps whichever
    /// lowers to fewer operations.
    pub accel_by_components: Vec<ExprId>,
    /// dx/dλ of Hamilton's equations, over momentum symbols.
    pub hamilton_dx: Vec<ExprId>,
    /// dp/dλ of Hamilton's equations, over momentum symbols.
    pub hamilton_dp: Vec<ExprId>,
    /// The same through the factored momentum (the cheaper one is kept).
    pub hamilton_dp_by_momentum: Vec<ExprId>,
    /// −Γ^a_bc u^b v^c over velocity and vector symbols.
    pub transport: Vec<ExprId>,
    /// g_ab u^a u^b.
    pub norm: ExprId,
    /// The same as u·p with common factors pulled out (the cheaper one is kept).
    pub norm_by_momentum: ExprId,
    /// (coordinate, p_k = g_kb u^b) for each coordinate the metric does not depend on.
    pub conserved: Vec<(usize, ExprId)>,
    /// The user's invariants with p_a replaced by g_ab u^b.
    pub invariants: Vec<(String, ExprId)>,
}

/// Derives every kernel's expressions.
pub fn derive(model: &mut MetricModel) -> Result<Derivation, InverseError> {
    let n = model.dim();
    let xs: Vec<ExprId> = (0..n).map(|i| model.coord(i)).collect();
    for i in 0..model.params.len() {
        model.param(i);
    }
    let u = model.vector("u", SymbolKind::Velocity);
    let p = model.vector("p", SymbolKind::Momentum);
    let v = model.vector("v", SymbolKind::Vector);
    let g = model.metric.clone();
    let s = &mut model.store;

    // ∂_k g_ab, symmetric in a, b: each distinct component is differentiated once.
    let mut dg = vec![vec![vec![s.int(0); n]; n]; n];
    for (k, &xk) in xs.iter().enumerate() {
        for a in 0..n {
            for b in a..n {
                let d = s.diff(g[a][b], xk);
                dg[k][a][b] = d;
                dg[k][b][a] = d;
            }
        }
    }

    let inverse = match &model.declared_inverse {
        Some(ginv) => ginv.clone(),
        None => invert(s, &g)?,
    };

    let half = Q::new(1.into(), 2.into());
    // Γ_dbc = ½(∂_b g_dc + ∂_c g_db − ∂_d g_bc), then Γ^a_bc = g^ad Γ_dbc.
    let mut first = vec![vec![vec![s.int(0); n]; n]; n];
    for d in 0..n {
        for b in 0..n {
            for c in b..n {
                let e = s.lincomb(&[
                    (dg[b][d][c], half.clone()),
                    (dg[c][d][b], half.clone()),
                    (dg[d][b][c], -half.clone()),
                ]);
                first[d][b][c] = e;
                first[d][c][b] = e;
            }
        }
    }
    let mut christoffel = vec![vec![vec![s.int(0); n]; n]; n];
    for a in 0..n {
        for b in 0..n {
            for c in b..n {
                let pairs: Vec<(ExprId, ExprId)> =
                    (0..n).map(|d| (inverse[a][d], first[d][b][c])).collect();
                let e = s.sum_of_products(&pairs);
                christoffel[a][b][c] = e;
                christoffel[a][c][b] = e;
            }
        }
    }

    let momentum = momentum::Momentum::new(s, &g, &xs, &u);
    let accel = {
        let w = momentum.lowered_accel(s, &u);
        raise_negated(s, &inverse, &w)
    };
    let accel_by_components = {
        let w = lowered_accel(s, &dg, &u);
        raise_negated(s, &inverse, &w)
    };

    // Hamilton: dx^a = g^ab p_b = u^a, dp_a = ½ ∂_a g_bc u^b u^c.
    let hamilton_dx = contract(s, &inverse, &p);
    let hamilton_dp: Vec<ExprId> = (0..n)
        .map(|a| {
            let du = contract(s, &dg[a], &hamilton_dx);
            let q = dot(s, &hamilton_dx, &du);
            s.scale(q, half.clone())
        })
        .collect();
    let hamilton_dp_by_momentum = momentum.hamilton_dp(s, &xs, &u, &hamilton_dx);

    // Parallel transport: w_d = Γ_dbc u^b v^c = ½[(∂_u g · v)_d + (∂_v g · u)_d − u·∂_d g·v].
    let transport = {
        let du_g = directional(s, &dg, &u);
        let dv_g = directional(s, &dg, &v);
        let a1 = contract(s, &du_g, &v);
        let a2 = contract(s, &dv_g, &u);
        let w: Vec<ExprId> = (0..n)
            .map(|d| {
                let dv = contract(s, &dg[d], &v);
                let q = dot(s, &u, &dv);
                s.lincomb(&[
                    (a1[d], half.clone()),
                    (a2[d], half.clone()),
                    (q, -half.clone()),
                ])
            })
            .collect();
        raise_negated(s, &inverse, &w)
    };

    let gu = contract(s, &g, &u);
    let norm = dot(s, &u, &gu);
    let norm_by_momentum = momentum.norm;

    let conserved: Vec<(usize, ExprId)> = (0..n)
        .filter(|&k| {
            g.iter()
                .flatten()
                .all(|&e| !s.depends_on(e, SymbolKind::Coordinate(k)))
        })
        .map(|k| (k, gu[k]))
        .collect();

    let lower_p: std::collections::HashMap<ExprId, ExprId> = p.iter().copied().zip(gu).collect();
    let invariants = model
        .invariants
        .iter()
        .map(|(name, e)| (name.clone(), s.substitute(*e, &lower_p)))
        .collect();

    Ok(Derivation {
        dg,
        inverse,
        christoffel,
        accel,
        accel_by_components,
        hamilton_dx,
        hamilton_dp,
        hamilton_dp_by_momentum,
        transport,
        norm,
        norm_by_momentum,
        conserved,
        invariants,
    })
}

/// w_d = Γ_dbc u^b u^c = u^b (∂_b g · u)_d − ½ u · (∂_d g) · u, contracting with u first so
/// that only the coordinates the metric depends on contribute.
fn lowered_accel(s: &mut Store, dg: &[Vec<Vec<ExprId>>], u: &[ExprId]) -> Vec<ExprId> {
    let n = u.len();
    let half = Q::new(1.into(), 2.into());
    let du: Vec<Vec<ExprId>> = (0..n).map(|b| contract(s, &dg[b], u)).collect();
    (0..n)
        .map(|d| {
            let mut parts: Vec<(ExprId, Q)> = Vec::new();
            for b in 0..n {
                if !s.is_zero(du[b][d]) {
                    parts.push((s.mul(&[u[b], du[b][d]]), Q::one()));
                }
            }
            let q = dot(s, u, &du[d]);
            parts.push((q, -half.clone()));
            s.lincomb(&parts)
        })
        .collect()
}

/// −g^ad w_d, negating w before raising: −w_d keeps a positive term where w_d had a negative
/// one, so the sign costs nothing, whereas negating the raised sum costs one op a component.
///
/// An entry of g⁻¹ that is a product of the metric's pieces (Kerr's g^rr = Δ/Σ) is multiplied
/// into every term of w_d and the common factors of the whole row are pulled out again, so
/// that Δ cancels where w_d divides by it and 1/Σ is applied once to the row, not once per
/// term; an entry holding a sum (an adjugate's cofactor) keeps the cheaper product.
fn raise_negated(s: &mut Store, inverse: &[Vec<ExprId>], w: &[ExprId]) -> Vec<ExprId> {
    let minus_w: Vec<ExprId> = w.iter().map(|&e| s.neg(e)).collect();
    inverse
        .iter()
        .map(|row| {
            let mut parts = Vec::new();
            for (&m, &x) in row.iter().zip(&minus_w) {
                if !s.is_zero(m) && !s.is_zero(x) {
                    let product = if holds_sum(s, m) {
                        s.mul_distributed(m, x)
                    } else {
                        s.mul_spread(m, x)
                    };
                    parts.push((product, Q::one()));
                }
            }
            let e = s.lincomb(&parts);
            s.factor_groups(e)
        })
        .collect()
}

/// Whether `e` is a sum or a product with a sum among its factors.
fn holds_sum(s: &Store, e: ExprId) -> bool {
    match s.node(e) {
        Node::Add(..) => true,
        Node::Mul(fs) => fs.iter().any(|(b, _)| matches!(s.node(*b), Node::Add(..))),
        _ => false,
    }
}

/// (M·v)_a = Σ_b M_ab v_b, skipping structural zeros.
fn contract(s: &mut Store, m: &[Vec<ExprId>], v: &[ExprId]) -> Vec<ExprId> {
    m.iter().map(|row| dot(s, row, v)).collect()
}

/// Σ a_i b_i, skipping structural zeros.
fn dot(s: &mut Store, a: &[ExprId], b: &[ExprId]) -> ExprId {
    let pairs: Vec<(ExprId, ExprId)> = a.iter().copied().zip(b.iter().copied()).collect();
    s.sum_of_products(&pairs)
}

/// Σ_k w^k ∂_k g_ab.
fn directional(s: &mut Store, dg: &[Vec<Vec<ExprId>>], w: &[ExprId]) -> Vec<Vec<ExprId>> {
    let n = w.len();
    (0..n)
        .map(|a| {
            (0..n)
                .map(|b| {
                    let col: Vec<ExprId> = (0..n).map(|k| dg[k][a][b]).collect();
                    dot(s, &col, w)
                })
                .collect()
        })
        .collect()
}
