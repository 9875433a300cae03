//! The trait through which integrators and monitors drive a metric's kernels.

use crate::Scalar;

/// The kernels of one metric in `N` dimensions, as the `metric!` macro generates them.
///
/// Every integrator, event and monitor of the runtime drives a metric through this trait, so a
/// hand-written metric, or an evaluator of kernels read at run time, can stand in for a
/// generated one. Index conventions: `christoffel(x)[a][b][c]` is Gamma^a_bc; arrays are
/// indexed by coordinate in declared order.
pub trait MetricKernels<T: Scalar, const N: usize> {
    /// Coordinate names in declared order.
    fn coordinate_names(&self) -> &[&str];
    /// The metric g_ab at `x`.
    fn metric(&self, x: &[T; N]) -> [[T; N]; N];
    /// The inverse metric g^ab at `x`.
    fn inverse_metric(&self, x: &[T; N]) -> [[T; N]; N];
    /// The Christoffel symbols Gamma^a_bc at `x`, index order `[a][b][c]`.
    fn christoffel(&self, x: &[T; N]) -> [[[T; N]; N]; N];
    /// The geodesic acceleration d²x^a/dλ² = -Gamma^a_bc u^b u^c.
    fn geodesic_accel(&self, x: &[T; N], u: &[T; N]) -> [T; N];
    /// Hamilton's equations for H = g^ab p_a p_b / 2: returns (dx/dλ, dp/dλ).
    fn hamilton_rhs(&self, x: &[T; N], p: &[T; N]) -> ([T; N], [T; N]);
    /// Parallel transport of `v` along `u`: dv^a/dλ = -Gamma^a_bc u^b v^c.
    fn parallel_transport(&self, x: &[T; N], u: &[T; N], v: &[T; N]) -> [T; N];
    /// The norm g_ab u^a u^b.
    fn norm(&self, x: &[T; N], u: &[T; N]) -> T;
    /// Names of the conserved momenta, one per coordinate the metric does not depend on.
    fn conserved_names(&self) -> &[&str];
    /// The conserved momenta p_k = g_kb u^b, in the order of [`conserved_names`](Self::conserved_names);
    /// writes as many as `out` holds.
    fn conserved(&self, x: &[T; N], u: &[T; N], out: &mut [T]);
    /// Names of the user's compiled invariants.
    fn invariant_names(&self) -> &[&str];
    /// The user's invariants at (x, u), in the order of [`invariant_names`](Self::invariant_names);
    /// writes as many as `out` holds.
    fn invariants(&self, x: &[T; N], u: &[T; N], out: &mut [T]);
}

/// Operation counts of one generated kernel after common-subexpression elimination.
///
/// A sine and cosine of the same argument count as one call (they are computed together).
#[derive(Clone, Copy, PartialEq, Eq, Hash, Debug, Default)]
pub struct OpCount {
    /// Additions, subtractions and negations.
    pub add: u32,
    /// Multiplications.
    pub mul: u32,
    /// Divisions.
    pub div: u32,
    /// Calls of square roots and elementary functions.
    pub call: u32,
}

impl OpCount {
    /// All operations together.
    pub const fn total(&self) -> u32 {
        self.add + self.mul + self.div + self.call
    }
}
