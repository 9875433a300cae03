//! The integration loop shared by every method: step-size control, events, monitors,
//! projection and the step budget.

use crate::control::{initial_step, Tolerance};
use crate::error::Error;
use crate::events::{Event, EventTracker, MAX_EVENTS};
use crate::integrate::Options;
use crate::monitor::{project_time_component, Drift, Monitor, Projection};
use crate::state::{mat_vec, GeodesicSystem, State};
use crate::stats::{Stats, StopReason};
use crate::stepper::{StepFailure, Stepper};
use crate::MetricKernels;

/// The result of a successful integration.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Outcome<const N: usize> {
    /// Final coordinates.
    pub x: [f64; N],
    /// Final velocity u^a.
    pub u: [f64; N],
    /// Final covariant momentum p_a = g_ab u^b.
    pub p: [f64; N],
    /// The affine parameter reached.
    pub lambda: f64,
    /// Counters.
    pub stats: Stats,
    /// Why the integration ended.
    pub stop: StopReason,
    /// Largest drifts of g(u,u), the conserved momenta and the invariants.
    pub drift: Drift,
}

/// Integrates `system` with `stepper` from λ = 0, (x0, u0), to `lambda_end`.
pub fn run<G: GeodesicSystem<N>, St: Stepper<N>, const N: usize>(
    system: &G,
    mut stepper: St,
    x0: [f64; N],
    u0: [f64; N],
    lambda_end: f64,
    options: &Options,
    events: &mut [&mut dyn Event<N>],
) -> Result<Outcome<N>, Error> {
    options.validate()?;
    if !lambda_end.is_finite() {
        return Err(Error::InvalidInput {
            reason: "the end of the affine parameter must be finite",
        });
    }
    if events.len() > MAX_EVENTS {
        return Err(Error::InvalidInput {
            reason: "too many events (at most 16)",
        });
    }
    for e in events.iter() {
        e.validate(N)
            .map_err(|reason| Error::InvalidInput { reason })?;
    }
    if !State::new(x0, u0).is_finite() {
        return Err(Error::NonFiniteState { lambda: 0.0 });
    }
    let metric = system.metric();
    let mut stats = Stats::default();
    let mut y = system.state_from_velocity(&x0, &u0);
    let mut monitor = Monitor::new(metric, &x0, &u0);
    let finish = |y: &State<N>, lambda: f64, stats: Stats, stop: StopReason, monitor: &Monitor| {
        let u = system.velocity(y);
        let p = if system.is_hamiltonian() {
            y.v
        } else {
            mat_vec(&metric.metric(&y.x), &y.v)
        };
        Outcome {
            x: y.x,
            u,
            p,
            lambda,
            stats,
            stop,
            drift: monitor.drift(),
        }
    };
    let singular = |lambda: f64, y: &State<N>, stats: Stats, monitor: &Monitor| {
        if options.stop_on_non_finite && y.is_finite() {
            Ok(finish(
                y,
                lambda,
                stats,
                StopReason::NonFinite { lambda },
                monitor,
            ))
        } else {
            Err(Error::SingularMetric { lambda })
        }
    };
    if !y.is_finite() || !stepper.reset(system, &y, &mut stats) {
        let start = State::new(x0, u0);
        return singular(0.0, &start, stats, &monitor);
    }
    let projection_target = match options.projection {
        Projection::Off => None,
        Projection::Timelike => Some(-1.0),
        Projection::Null => Some(0.0),
        Projection::Initial => Some(monitor.reference_norm()),
    };
    let mut tracker = EventTracker::new(events, system, 0.0, &y);
    let span = lambda_end;
    let mut lambda = 0.0;
    if span == 0.0 {
        return Ok(finish(&y, lambda, stats, StopReason::End, &monitor));
    }
    let direction = span.signum();
    let max_step = options.max_step.unwrap_or(f64::INFINITY).min(span.abs());
    let tol = Tolerance {
        rtol: options.rtol,
        atol: options.atol,
    };
    let mut controller = match options.fixed_step {
        Some(_) => None,
        None => stepper.controller(),
    };
    let nominal = match (options.fixed_step, options.initial_step) {
        (Some(h), _) | (None, Some(h)) => h,
        (None, None) => {
            let f0 = *stepper.derivative();
            initial_step(
                system,
                &y,
                &f0,
                stepper.order(),
                &tol,
                direction * max_step,
                &mut stats,
            )
        }
    }
    .min(max_step);
    let mut h = nominal;
    // Whether a non-finite value turned up since the last accepted step: if the step then
    // underflows, the kernels are singular there rather than the tolerance unreachable.
    let mut non_finite_since_accept = false;

    loop {
        let remaining = (lambda_end - lambda).abs();
        let floor = 4.0 * f64::EPSILON * lambda.abs().max(lambda_end.abs());
        if remaining <= floor {
            return Ok(finish(&y, lambda_end, stats, StopReason::End, &monitor));
        }
        if stats.steps + stats.rejected >= options.max_steps {
            return Err(Error::MaxSteps {
                lambda,
                steps: options.max_steps,
            });
        }
        let last = h >= remaining;
        let step = if last { remaining } else { h };
        if step <= floor {
            return if non_finite_since_accept {
                singular(lambda, &y, stats, &monitor)
            } else {
                Err(Error::StepSizeUnderflow { lambda, step })
            };
        }
        let signed = direction * step;
        let err = match stepper.attempt(system, &y, signed, &tol, &mut stats) {
            Err(failure) => {
                stats.rejected += 1;
                non_finite_since_accept |= failure == StepFailure::NonFinite;
                h = step * if controller.is_some() { 0.25 } else { 0.5 };
                if let Some(c) = controller.as_mut() {
                    c.mark_rejected();
                }
                continue;
            }
            Ok(err) => err,
        };
        if let Some(c) = controller.as_mut() {
            if err > 1.0 {
                stats.rejected += 1;
                h = c.rejected(err, step);
                continue;
            }
        }
        stats.steps += 1;
        non_finite_since_accept = false;
        if !events.is_empty() {
            if let Some(t) = tracker.check(events, system, &mut stepper, lambda, signed, &mut stats)
            {
                let u = system.velocity(&t.state);
                monitor.observe(metric, &t.state.x, &u);
                let stop = StopReason::Event {
                    index: t.index,
                    lambda: t.lambda,
                };
                return Ok(finish(&t.state, t.lambda, stats, stop, &monitor));
            }
        }
        stepper.accept();
        y = *stepper.proposal();
        lambda = if last { lambda_end } else { lambda + signed };
        if let Some(target) = projection_target {
            let form = system.norm_form(&y.x);
            let mut v = y.v;
            if project_time_component(&form, &mut v, target) && State::new(y.x, v).is_finite() {
                y.v = v;
                stats.projections += 1;
                if !stepper.reset(system, &y, &mut stats) {
                    return singular(lambda, &y, stats, &monitor);
                }
            } else {
                stats.projections_skipped += 1;
            }
        }
        monitor.observe(metric, &y.x, &system.velocity(&y));
        h = match controller.as_mut() {
            Some(c) => c.accepted(err, step).min(max_step),
            None => nominal,
        };
    }
}
