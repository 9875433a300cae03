//! The state an integrator advances, and the first-order systems built from a metric.
//!
//! A geodesic is integrated either in second-order form, as the pair (x, u) with
//! `dx/dλ = u`, `du/dλ = -Γ(u, u)` ([`VelocityForm`]), or in Hamiltonian form, as the pair
//! (x, p) with `H = g^ab p_a p_b / 2` ([`MomentumForm`]). Both are a [`State`] of two arrays,
//! so every method works on either without allocating.

use crate::MetricKernels;

/// A point of phase space: position `x` and a second array `v`, which is the velocity `u^a`
/// in [`VelocityForm`] and the covariant momentum `p_a` in [`MomentumForm`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct State<const N: usize> {
    /// Coordinates x^a.
    pub x: [f64; N],
    /// Velocity u^a or momentum p_a, depending on the system.
    pub v: [f64; N],
}

impl<const N: usize> State<N> {
    /// The state (x, v).
    pub const fn new(x: [f64; N], v: [f64; N]) -> Self {
        State { x, v }
    }

    /// All components zero.
    pub const fn zero() -> Self {
        State {
            x: [0.0; N],
            v: [0.0; N],
        }
    }

    /// Whether every component is finite.
    pub fn is_finite(&self) -> bool {
        self.x.iter().chain(self.v.iter()).all(|c| c.is_finite())
    }

    /// `self += factor · other`, component by component.
    pub fn add_scaled(&mut self, factor: f64, other: &Self) {
        for i in 0..N {
            self.x[i] += factor * other.x[i];
            self.v[i] += factor * other.v[i];
        }
    }

    /// `factor · self`.
    pub fn scaled(&self, factor: f64) -> Self {
        let mut out = State::zero();
        out.add_scaled(factor, self);
        out
    }

    /// `y + h Σ_j weights[j] · k[j]`, skipping zero weights (explicit tableaus are sparse).
    pub fn combine(y: &Self, h: f64, weights: &[f64], k: &[Self]) -> Self {
        let mut out = *y;
        for (w, kj) in weights.iter().zip(k.iter()) {
            if *w != 0.0 {
                out.add_scaled(h * *w, kj);
            }
        }
        out
    }

    /// Applies `f` to every pair of matching components of `self` and `other`, folding the
    /// results with `fold`, starting from `init`.
    pub(crate) fn fold_pairs(
        &self,
        other: &Self,
        init: f64,
        mut fold: impl FnMut(f64, f64, f64) -> f64,
    ) -> f64 {
        let mut acc = init;
        for i in 0..N {
            acc = fold(acc, self.x[i], other.x[i]);
            acc = fold(acc, self.v[i], other.v[i]);
        }
        acc
    }
}

/// A first-order system `dy/dλ = f(y)` on [`State`]s, writing into the caller's buffer.
///
/// Every integrator of the crate drives one of these; [`VelocityForm`] and [`MomentumForm`]
/// are the two built from a metric, and any autonomous system can be integrated the same way.
pub trait System<const N: usize> {
    /// Writes `f(y)` into `dy`.
    fn rhs(&self, y: &State<N>, dy: &mut State<N>);
}

/// A [`System`] that comes from a metric: monitors, events and projection need the metric,
/// and the velocity u^a whichever form is integrated.
pub trait GeodesicSystem<const N: usize>: System<N> {
    /// The metric whose geodesics are integrated.
    type Metric: MetricKernels<f64, N>;
    /// The metric.
    fn metric(&self) -> &Self::Metric;
    /// The velocity u^a at `y` (equal to `y.v` in velocity form, `g^ab p_b` in momentum form).
    fn velocity(&self, y: &State<N>) -> [f64; N];
    /// The quadratic form whose value on `y.v` is g(u, u): `g_ab` in velocity form, `g^ab` in
    /// momentum form.
    fn norm_form(&self, x: &[f64; N]) -> [[f64; N]; N];
    /// The state for position `x` and velocity `u`.
    fn state_from_velocity(&self, x: &[f64; N], u: &[f64; N]) -> State<N>;
    /// Whether this system is Hamiltonian (x, p), for which symplectic methods are meant.
    fn is_hamiltonian(&self) -> bool;
}

/// The geodesic equation in second-order form: y = (x, u), `dx/dλ = u`,
/// `du/dλ = geodesic_accel(x, u)`.
#[derive(Clone, Copy, Debug)]
pub struct VelocityForm<'a, M>(pub &'a M);

impl<M: MetricKernels<f64, N>, const N: usize> System<N> for VelocityForm<'_, M> {
    #[inline]
    fn rhs(&self, y: &State<N>, dy: &mut State<N>) {
        dy.x = y.v;
        dy.v = self.0.geodesic_accel(&y.x, &y.v);
    }
}

impl<M: MetricKernels<f64, N>, const N: usize> GeodesicSystem<N> for VelocityForm<'_, M> {
    type Metric = M;
    fn metric(&self) -> &M {
        self.0
    }
    fn velocity(&self, y: &State<N>) -> [f64; N] {
        y.v
    }
    fn norm_form(&self, x: &[f64; N]) -> [[f64; N]; N] {
        self.0.metric(x)
    }
    fn state_from_velocity(&self, x: &[f64; N], u: &[f64; N]) -> State<N> {
        State::new(*x, *u)
    }
    fn is_hamiltonian(&self) -> bool {
        false
    }
}

/// Hamilton's equations for `H = g^ab p_a p_b / 2`: y = (x, p).
#[derive(Clone, Copy, Debug)]
pub struct MomentumForm<'a, M>(pub &'a M);

impl<M: MetricKernels<f64, N>, const N: usize> System<N> for MomentumForm<'_, M> {
    #[inline]
    fn rhs(&self, y: &State<N>, dy: &mut State<N>) {
        let (dx, dp) = self.0.hamilton_rhs(&y.x, &y.v);
        dy.x = dx;
        dy.v = dp;
    }
}

/// `m · v` for a square matrix.
pub(crate) fn mat_vec<const N: usize>(m: &[[f64; N]; N], v: &[f64; N]) -> [f64; N] {
    core::array::from_fn(|a| (0..N).map(|b| m[a][b] * v[b]).sum())
}

impl<M: MetricKernels<f64, N>, const N: usize> GeodesicSystem<N> for MomentumForm<'_, M> {
    type Metric = M;
    fn metric(&self) -> &M {
        self.0
    }
    fn velocity(&self, y: &State<N>) -> [f64; N] {
        mat_vec(&self.0.inverse_metric(&y.x), &y.v)
    }
    fn norm_form(&self, x: &[f64; N]) -> [[f64; N]; N] {
        self.0.inverse_metric(x)
    }
    fn state_from_velocity(&self, x: &[f64; N], u: &[f64; N]) -> State<N> {
        State::new(*x, mat_vec(&self.0.metric(x), u))
    }
    fn is_hamiltonian(&self) -> bool {
        true
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn combine_skips_zero_weights_and_scales() {
        let y = State::new([1.0], [2.0]);
        let k = [State::new([1.0], [1.0]), State::new([f64::NAN], [f64::NAN])];
        let out = State::combine(&y, 0.5, &[2.0, 0.0], &k);
        assert_eq!(out, State::new([2.0], [3.0]));
        assert!(out.is_finite());
        assert!(!k[1].is_finite());
    }
}
