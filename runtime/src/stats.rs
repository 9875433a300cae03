//! What an integration did, and why it stopped.

/// Counters of one integration.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Stats {
    /// Accepted steps.
    pub steps: usize,
    /// Rejected step attempts (error too large, non-finite stage, or implicit solve not
    /// converged).
    pub rejected: usize,
    /// Evaluations of the right-hand side (`geodesic_accel` or `hamilton_rhs`).
    pub rhs_evaluations: usize,
    /// Fixed-point iterations of the implicit stage equations (Gauss-Legendre only).
    pub implicit_iterations: usize,
    /// Projections onto the mass shell that were applied.
    pub projections: usize,
    /// Projections that could not be applied (no real root for the time component).
    pub projections_skipped: usize,
    /// Event crossings located (terminal and not).
    pub events: usize,
}

/// Why an integration ended without error.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum StopReason {
    /// The requested end of the affine parameter was reached.
    End,
    /// A terminal event fired.
    Event {
        /// Position of the event in the list given to the integrator.
        index: usize,
        /// The affine parameter of the crossing.
        lambda: f64,
    },
    /// The kernels became non-finite and the options asked to stop there rather than fail;
    /// the outcome holds the last finite state.
    NonFinite {
        /// The affine parameter of the last finite state.
        lambda: f64,
    },
}

impl StopReason {
    /// A short lowercase name: `"end"`, `"event"` or `"non-finite"`.
    pub fn name(&self) -> &'static str {
        match self {
            StopReason::End => "end",
            StopReason::Event { .. } => "event",
            StopReason::NonFinite { .. } => "non-finite",
        }
    }
}
