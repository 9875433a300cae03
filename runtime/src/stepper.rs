//! The one-step interface every method implements.

use crate::control::{PiController, Tolerance};
use crate::state::{State, System};
use crate::stats::Stats;

/// Why a step attempt produced no usable proposal.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum StepFailure {
    /// A stage or the proposal had a non-finite component.
    NonFinite,
    /// The implicit stage equations did not converge.
    NotConverged,
}

/// A one-step method with its own stage buffers (no allocation per step).
///
/// The driver calls [`reset`](Stepper::reset) once with the initial state (and again whenever
/// it changes the state by hand), then repeatedly [`attempt`](Stepper::attempt); after an
/// attempt it wants to keep it may call [`dense`](Stepper::dense) any number of times, then
/// [`accept`](Stepper::accept).
pub trait Stepper<const N: usize> {
    /// The classical order of the propagated solution.
    fn order(&self) -> u32;

    /// A fresh step-size controller, or `None` for a method without an error estimate (which
    /// then runs with a fixed step).
    fn controller(&self) -> Option<PiController>;

    /// Takes `y` as the current state, evaluating `f(y)`; returns whether it was finite.
    fn reset<S: System<N>>(&mut self, system: &S, y: &State<N>, stats: &mut Stats) -> bool;

    /// `f` at the current state.
    fn derivative(&self) -> &State<N>;

    /// Tries a step of size `h` from `y` (the state given to the last `reset` or `accept`).
    /// Returns the scaled error norm (≤ 1 is acceptable; always 0 for methods without an
    /// estimate); the proposal is then [`proposal`](Stepper::proposal).
    fn attempt<S: System<N>>(
        &mut self,
        system: &S,
        y: &State<N>,
        h: f64,
        tol: &Tolerance,
        stats: &mut Stats,
    ) -> Result<f64, StepFailure>;

    /// The state proposed by the last successful attempt.
    fn proposal(&self) -> &State<N>;

    /// The continuous extension of the last successful attempt at `λ + θh`, `0 ≤ θ ≤ 1`.
    fn dense<S: System<N>>(&mut self, system: &S, theta: f64, stats: &mut Stats) -> State<N>;

    /// Makes the last proposal the current state.
    fn accept(&mut self);
}
