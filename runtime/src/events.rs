//! Events: functions g(λ, x, u) whose sign changes are located on the dense output.
//!
//! After every accepted step the driver compares the sign of each event function at both ends
//! of the step; where it changed in the requested [`Direction`], the crossing is located by
//! the Illinois variant of regula falsi (Dowell & Jarratt, BIT 11 (1971) 168-174) on the
//! method's continuous extension. A change of sign and back within one step is not seen
//! (common practice; bound the step with `Options::max_step` when that matters).
//!
//! Built-ins: [`CoordinateCrossing`] (a radius crossing such as a horizon plus a margin or an
//! escape radius, the equatorial plane θ = π/2, or any coordinate value). A non-finite state
//! is the third built-in: set `Options::stop_on_non_finite` to end the run with
//! [`StopReason::NonFinite`](crate::StopReason::NonFinite) instead of an error.

use crate::state::{GeodesicSystem, State};
use crate::stats::Stats;
use crate::stepper::Stepper;

/// At most this many events can be watched in one integration (their values live on the
/// stack).
pub const MAX_EVENTS: usize = 16;

/// Which sign changes of an event function count.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Direction {
    /// From negative to positive.
    Rising,
    /// From positive to negative.
    Falling,
    /// Either.
    Both,
}

/// A located zero of an event function.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Crossing<const N: usize> {
    /// Position of the event in the list given to the integrator.
    pub index: usize,
    /// The affine parameter of the crossing.
    pub lambda: f64,
    /// Coordinates there.
    pub x: [f64; N],
    /// Velocity there.
    pub u: [f64; N],
    /// Whether the function was rising (negative to positive).
    pub rising: bool,
}

/// An event function g(λ, x, u), with its direction and whether it ends the integration.
pub trait Event<const N: usize> {
    /// The value of g; a crossing is a change of its sign.
    fn value(&self, lambda: f64, x: &[f64; N], u: &[f64; N]) -> f64;
    /// Which sign changes count (default: both).
    fn direction(&self) -> Direction {
        Direction::Both
    }
    /// Whether a crossing ends the integration (default: yes).
    fn is_terminal(&self) -> bool {
        true
    }
    /// Called at every counted crossing, in order of λ (record them here).
    fn on_crossing(&mut self, _crossing: &Crossing<N>) {}
    /// Checks the event against the dimension before integrating; an `Err` becomes
    /// [`Error::InvalidInput`](crate::Error::InvalidInput).
    fn validate(&self, _dimension: usize) -> Result<(), &'static str> {
        Ok(())
    }
}

/// The crossing of a coordinate value: `g = x[index] - value`.
///
/// ```
/// use geokern_runtime::{CoordinateCrossing, Direction, Event};
/// // Stop when r (coordinate 1) falls below 2.01 M.
/// let horizon = CoordinateCrossing::falling_below(1, 2.01);
/// assert_eq!(horizon.value(0.0, &[0.0, 3.0, 1.5, 0.0], &[0.0; 4]), 3.0 - 2.01);
/// assert_eq!(Event::<4>::direction(&horizon), Direction::Falling);
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CoordinateCrossing {
    /// The coordinate's index.
    pub index: usize,
    /// The value crossed.
    pub value: f64,
    /// Which crossings count.
    pub direction: Direction,
    /// Whether a crossing ends the integration.
    pub terminal: bool,
    /// How many crossings have been seen.
    pub count: usize,
    /// The affine parameter of the last crossing seen.
    pub last_lambda: Option<f64>,
}

impl CoordinateCrossing {
    /// A crossing of `x[index] = value` in `direction`.
    pub const fn new(index: usize, value: f64, direction: Direction, terminal: bool) -> Self {
        CoordinateCrossing {
            index,
            value,
            direction,
            terminal,
            count: 0,
            last_lambda: None,
        }
    }

    /// Terminal, when the coordinate falls below `value` (capture: a horizon plus a margin).
    pub const fn falling_below(index: usize, value: f64) -> Self {
        Self::new(index, value, Direction::Falling, true)
    }

    /// Terminal, when the coordinate rises above `value` (escape to a large radius).
    pub const fn rising_above(index: usize, value: f64) -> Self {
        Self::new(index, value, Direction::Rising, true)
    }

    /// Non-terminal, both directions: counts passages through a plane such as θ = π/2.
    pub const fn plane(index: usize, value: f64) -> Self {
        Self::new(index, value, Direction::Both, false)
    }
}

impl<const N: usize> Event<N> for CoordinateCrossing {
    fn value(&self, _lambda: f64, x: &[f64; N], _u: &[f64; N]) -> f64 {
        x.get(self.index).map_or(f64::NAN, |c| c - self.value)
    }
    fn direction(&self) -> Direction {
        self.direction
    }
    fn is_terminal(&self) -> bool {
        self.terminal
    }
    fn on_crossing(&mut self, crossing: &Crossing<N>) {
        self.count += 1;
        self.last_lambda = Some(crossing.lambda);
    }
    fn validate(&self, dimension: usize) -> Result<(), &'static str> {
        if self.index < dimension {
            Ok(())
        } else {
            Err("event coordinate index out of range")
        }
    }
}

/// Finds a zero of `f` in `[a, b]` where `f(a) = fa` and `f(b) = fb` have opposite signs, by
/// the Illinois method, until the bracket is narrower than `tol`. Returns the end of the final
/// bracket on the side of `b` (so a terminal state has crossed), or the exact zero if hit.
pub fn illinois(
    mut f: impl FnMut(f64) -> f64,
    mut a: f64,
    mut fa: f64,
    mut b: f64,
    mut fb: f64,
    tol: f64,
) -> f64 {
    let mut side = 0i8;
    for _ in 0..200 {
        if (b - a).abs() <= tol {
            break;
        }
        let mut c = (fa * b - fb * a) / (fa - fb);
        // Guard against a secant point outside the bracket (round-off, or fa == fb).
        let (lo, hi) = if a < b { (a, b) } else { (b, a) };
        if !(c > lo && c < hi) {
            c = 0.5 * (a + b);
        }
        let fc = f(c);
        if fc == 0.0 {
            return c;
        }
        if !fc.is_finite() {
            // Shrink towards the start of the step, where values were finite.
            b = c;
            continue;
        }
        if (fc > 0.0) == (fb > 0.0) {
            b = c;
            fb = fc;
            if side == -1 {
                fa *= 0.5;
            }
            side = -1;
        } else {
            a = c;
            fa = fc;
            if side == 1 {
                fb *= 0.5;
            }
            side = 1;
        }
    }
    b
}

/// Watches a list of events along an integration.
pub(crate) struct EventTracker {
    previous: [f64; MAX_EVENTS],
}

/// A terminal crossing: which event, where, and the state there.
pub(crate) struct Terminal<const N: usize> {
    pub index: usize,
    pub lambda: f64,
    pub state: State<N>,
}

fn counts(direction: Direction, before: f64, after: f64) -> bool {
    if !(before.is_finite() && after.is_finite()) || before == 0.0 {
        return false;
    }
    let changed = after == 0.0 || (before > 0.0) != (after > 0.0);
    changed
        && match direction {
            Direction::Both => true,
            Direction::Rising => before < 0.0,
            Direction::Falling => before > 0.0,
        }
}

impl EventTracker {
    /// Records the values at the start.
    pub fn new<G: GeodesicSystem<N>, const N: usize>(
        events: &[&mut dyn Event<N>],
        system: &G,
        lambda: f64,
        y: &State<N>,
    ) -> Self {
        let mut previous = [0.0; MAX_EVENTS];
        let u = system.velocity(y);
        for (p, e) in previous.iter_mut().zip(events.iter()) {
            *p = e.value(lambda, &y.x, &u);
        }
        EventTracker { previous }
    }

    /// Examines the step `[lambda, lambda + h]` just attempted by `stepper` (before it is
    /// accepted): reports every counted crossing through `on_crossing` in order of λ, up to
    /// and including the first terminal one, which is returned.
    pub fn check<G: GeodesicSystem<N>, St: Stepper<N>, const N: usize>(
        &mut self,
        events: &mut [&mut dyn Event<N>],
        system: &G,
        stepper: &mut St,
        lambda: f64,
        h: f64,
        stats: &mut Stats,
    ) -> Option<Terminal<N>> {
        let y1 = *stepper.proposal();
        let u1 = system.velocity(&y1);
        let mut thetas = [f64::INFINITY; MAX_EVENTS];
        let mut after = [0.0; MAX_EVENTS];
        let mut any = false;
        for (k, e) in events.iter().enumerate() {
            let g1 = e.value(lambda + h, &y1.x, &u1);
            after[k] = g1;
            if !counts(e.direction(), self.previous[k], g1) {
                continue;
            }
            any = true;
            thetas[k] = if g1 == 0.0 {
                1.0
            } else {
                let mut g = |theta: f64| {
                    let y = stepper.dense(system, theta, stats);
                    e.value(lambda + theta * h, &y.x, &system.velocity(&y))
                };
                illinois(&mut g, 0.0, self.previous[k], 1.0, g1, 1e-13)
            };
        }
        let before = self.previous;
        self.previous = after;
        if !any {
            return None;
        }
        let terminal_theta = events
            .iter()
            .enumerate()
            .filter(|(k, e)| e.is_terminal() && thetas[*k].is_finite())
            .map(|(k, _)| thetas[k])
            .fold(f64::INFINITY, f64::min);
        let mut reported = [false; MAX_EVENTS];
        loop {
            // The earliest crossing not yet reported, no later than the first terminal one.
            let mut next: Option<usize> = None;
            for k in 0..events.len() {
                if !reported[k]
                    && thetas[k] <= terminal_theta
                    && thetas[k].is_finite()
                    && match next {
                        None => true,
                        Some(j) => thetas[k] < thetas[j],
                    }
                {
                    next = Some(k);
                }
            }
            let k = next?;
            reported[k] = true;
            let theta = thetas[k];
            let state = stepper.dense(system, theta, stats);
            let u = system.velocity(&state);
            let crossing = Crossing {
                index: k,
                lambda: lambda + theta * h,
                x: state.x,
                u,
                rising: before[k] < 0.0,
            };
            stats.events += 1;
            events[k].on_crossing(&crossing);
            if events[k].is_terminal() {
                return Some(Terminal {
                    index: k,
                    lambda: crossing.lambda,
                    state,
                });
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn illinois_finds_root_of_cubic() {
        let f = |x: f64| x * x * x - 2.0;
        let root = illinois(f, 0.0, -2.0, 2.0, 6.0, 1e-14);
        assert!((root - 2f64.cbrt()).abs() < 1e-13, "{root}");
        // The returned end lies on b's side.
        assert!(f(root) >= 0.0);
    }

    #[test]
    fn direction_filter() {
        assert!(counts(Direction::Rising, -1.0, 1.0));
        assert!(!counts(Direction::Rising, 1.0, -1.0));
        assert!(counts(Direction::Falling, 1.0, 0.0));
        assert!(!counts(Direction::Both, 0.0, 1.0));
        assert!(!counts(Direction::Both, 1.0, f64::NAN));
    }
}
