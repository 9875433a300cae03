//! Monitors of the quantities a geodesic conserves, and projection back onto the mass shell.
//!
//! Along an exact geodesic g(u, u) is constant, and so is every conserved momentum
//! (`MetricKernels::conserved`) and every user invariant (`MetricKernels::invariants`). The
//! [`Monitor`] records the largest absolute change of each seen over a run: the honest
//! measure of an integration's accuracy when no exact solution is known.

use crate::MetricKernels;

/// At most this many conserved momenta, and as many invariants, are monitored (the values
/// live on the stack; a metric has at most 16 coordinates, so every conserved momentum fits).
pub const MAX_MONITORED: usize = 16;

/// The largest absolute drift seen of each monitored quantity.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Drift {
    /// Largest |g(u,u) - g(u₀,u₀)|.
    pub norm: f64,
    conserved: [f64; MAX_MONITORED],
    conserved_len: usize,
    invariants: [f64; MAX_MONITORED],
    invariants_len: usize,
}

impl Drift {
    /// Largest drift of each conserved momentum, in the order of `conserved_names()`.
    pub fn conserved(&self) -> &[f64] {
        &self.conserved[..self.conserved_len]
    }

    /// Largest drift of each user invariant, in the order of `invariant_names()`.
    pub fn invariants(&self) -> &[f64] {
        &self.invariants[..self.invariants_len]
    }
}

/// Tracks the drift of g(u,u), the conserved momenta and the invariants from their initial
/// values. A non-finite value counts as an infinite drift, so it cannot hide.
#[derive(Clone, Copy, Debug)]
pub struct Monitor {
    reference_norm: f64,
    reference_conserved: [f64; MAX_MONITORED],
    reference_invariants: [f64; MAX_MONITORED],
    drift: Drift,
}

fn absolute_change(value: f64, reference: f64) -> f64 {
    let d = (value - reference).abs();
    if d.is_finite() {
        d
    } else {
        f64::INFINITY
    }
}

impl Monitor {
    /// Takes the reference values at (x, u).
    pub fn new<M: MetricKernels<f64, N>, const N: usize>(
        metric: &M,
        x: &[f64; N],
        u: &[f64; N],
    ) -> Self {
        let conserved_len = metric.conserved_names().len().min(MAX_MONITORED);
        let invariants_len = metric.invariant_names().len().min(MAX_MONITORED);
        let mut reference_conserved = [0.0; MAX_MONITORED];
        let mut reference_invariants = [0.0; MAX_MONITORED];
        metric.conserved(x, u, &mut reference_conserved[..conserved_len]);
        metric.invariants(x, u, &mut reference_invariants[..invariants_len]);
        Monitor {
            reference_norm: metric.norm(x, u),
            reference_conserved,
            reference_invariants,
            drift: Drift {
                norm: 0.0,
                conserved: [0.0; MAX_MONITORED],
                conserved_len,
                invariants: [0.0; MAX_MONITORED],
                invariants_len,
            },
        }
    }

    /// The value of g(u,u) the run started with.
    pub fn reference_norm(&self) -> f64 {
        self.reference_norm
    }

    /// Takes the values at (x, u) into account.
    pub fn observe<M: MetricKernels<f64, N>, const N: usize>(
        &mut self,
        metric: &M,
        x: &[f64; N],
        u: &[f64; N],
    ) {
        let d = &mut self.drift;
        d.norm = d
            .norm
            .max(absolute_change(metric.norm(x, u), self.reference_norm));
        let mut values = [0.0; MAX_MONITORED];
        metric.conserved(x, u, &mut values[..d.conserved_len]);
        for ((drift, v), r) in d.conserved[..d.conserved_len]
            .iter_mut()
            .zip(values.iter())
            .zip(self.reference_conserved.iter())
        {
            *drift = drift.max(absolute_change(*v, *r));
        }
        metric.invariants(x, u, &mut values[..d.invariants_len]);
        for ((drift, v), r) in d.invariants[..d.invariants_len]
            .iter_mut()
            .zip(values.iter())
            .zip(self.reference_invariants.iter())
        {
            *drift = drift.max(absolute_change(*v, *r));
        }
    }

    /// The drift record so far.
    pub fn drift(&self) -> Drift {
        self.drift
    }
}

/// Whether, and onto what, the velocity is projected after every accepted step.
///
/// The projection solves g(v, v) = target for the component of coordinate 0 (the time
/// coordinate), keeping the spatial components: `g₀₀ v₀² + 2 (g₀ᵢ vⁱ) v₀ + gᵢⱼ vⁱ vʲ = target`,
/// taking the root nearer the current v₀. This keeps the direction of motion through space,
/// which is what a ray or orbit is about, and works for null vectors, which cannot be
/// rescaled onto g = 0. It moves the energy-like momentum p₀ slightly; where no real root
/// exists (inside an ergoregion g₀₀ can vanish) the step is left alone and counted in
/// `Stats::projections_skipped`. In Hamiltonian form the same is done for p₀ with g^ab.
/// Projection breaks the symplecticity of Gauss-Legendre; it is off by default.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Projection {
    /// No projection.
    Off,
    /// Onto g(u,u) = -1.
    Timelike,
    /// Onto g(u,u) = 0.
    Null,
    /// Onto g(u,u) equal to its initial value.
    Initial,
}

/// Solves `form(v, v) = target` for `v[0]`, keeping `v[1..]`; returns whether `v` changed.
pub fn project_time_component<const N: usize>(
    form: &[[f64; N]; N],
    v: &mut [f64; N],
    target: f64,
) -> bool {
    if N == 0 {
        return false;
    }
    let a = form[0][0];
    let mut b = 0.0;
    let mut c = -target;
    for i in 1..N {
        b += form[0][i] * v[i];
        for j in 1..N {
            c += form[i][j] * v[i] * v[j];
        }
    }
    // a v0² + 2 b v0 + c = 0
    let root = if a.abs() <= 1e-14 * (b.abs() + c.abs()) {
        if b == 0.0 {
            return false;
        }
        -c / (2.0 * b)
    } else {
        let disc = b * b - a * c;
        if disc.is_nan() || disc < 0.0 {
            return false;
        }
        let s = libm::sqrt(disc);
        let (r1, r2) = ((-b + s) / a, (-b - s) / a);
        if (r1 - v[0]).abs() <= (r2 - v[0]).abs() {
            r1
        } else {
            r2
        }
    };
    if root.is_finite() {
        v[0] = root;
        true
    } else {
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn projection_restores_minkowski_norm() {
        let eta = [[-1.0, 0.0], [0.0, 1.0]];
        let mut u = [1.2, 0.5];
        assert!(project_time_component(&eta, &mut u, -1.0));
        assert!((-u[0] * u[0] + u[1] * u[1] + 1.0).abs() < 1e-15);
        assert!(u[0] > 0.0);
        let mut k = [-0.9, 0.5];
        assert!(project_time_component(&eta, &mut k, 0.0));
        assert!(
            (k[0] + 0.5).abs() < 1e-15,
            "keeps the sign of the time component"
        );
        // No real root: spacelike target unreachable with g00 = 0 and no cross term.
        let degenerate = [[0.0, 0.0], [0.0, 1.0]];
        let mut w = [1.0, 1.0];
        assert!(!project_time_component(&degenerate, &mut w, -1.0));
    }
}
