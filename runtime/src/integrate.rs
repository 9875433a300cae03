//! The top-level entry points: integrate one geodesic with a chosen method.

use crate::driver::{run, Outcome};
use crate::error::Error;
use crate::events::Event;
use crate::explicit::{DormandPrince54, DormandPrince853, Rk4};
use crate::gauss_legendre::GaussLegendre;
use crate::monitor::Projection;
use crate::state::{MomentumForm, VelocityForm};
use crate::MetricKernels;

/// The integration methods.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Method {
    /// Classic fourth-order Runge-Kutta, fixed step, on (x, u).
    Rk4,
    /// Dormand-Prince 5(4), adaptive, on (x, u).
    DormandPrince54,
    /// Dormand-Prince 8(5,3), adaptive, on (x, u).
    DormandPrince853,
    /// Two-stage Gauss-Legendre (order 4), fixed step, symplectic, on (x, p).
    GaussLegendre4,
    /// Three-stage Gauss-Legendre (order 6), fixed step, symplectic, on (x, p).
    GaussLegendre6,
}

impl Method {
    /// Every method, in the order of the enum.
    pub const ALL: [Method; 5] = [
        Method::Rk4,
        Method::DormandPrince54,
        Method::DormandPrince853,
        Method::GaussLegendre4,
        Method::GaussLegendre6,
    ];

    /// The short name used on command lines: `rk4`, `dp54`, `dp853`, `gl4`, `gl6`.
    pub fn name(self) -> &'static str {
        match self {
            Method::Rk4 => "rk4",
            Method::DormandPrince54 => "dp54",
            Method::DormandPrince853 => "dp853",
            Method::GaussLegendre4 => "gl4",
            Method::GaussLegendre6 => "gl6",
        }
    }

    /// The method with the given short name (case-insensitive), if any.
    ///
    /// ```
    /// use geokern_runtime::Method;
    /// assert_eq!(Method::from_name("DP853"), Some(Method::DormandPrince853));
    /// assert_eq!(Method::from_name("euler"), None);
    /// ```
    pub fn from_name(name: &str) -> Option<Method> {
        Method::ALL
            .into_iter()
            .find(|m| m.name().eq_ignore_ascii_case(name))
    }

    /// The classical order of the method.
    pub fn order(self) -> u32 {
        match self {
            Method::Rk4 | Method::GaussLegendre4 => 4,
            Method::DormandPrince54 => 5,
            Method::GaussLegendre6 => 6,
            Method::DormandPrince853 => 8,
        }
    }

    /// Whether the method controls its step from an error estimate.
    pub fn is_adaptive(self) -> bool {
        matches!(self, Method::DormandPrince54 | Method::DormandPrince853)
    }

    /// Whether the method is symplectic (and therefore integrates Hamilton's equations).
    pub fn is_symplectic(self) -> bool {
        matches!(self, Method::GaussLegendre4 | Method::GaussLegendre6)
    }
}

/// Options of an integration.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Options {
    /// The method.
    pub method: Method,
    /// Relative tolerance (adaptive methods, and the starting-step heuristic).
    pub rtol: f64,
    /// Absolute tolerance.
    pub atol: f64,
    /// Budget of step attempts, accepted plus rejected.
    pub max_steps: usize,
    /// The first step of an adaptive method; `None` picks it by the heuristic of Hairer,
    /// Nørsett & Wanner.
    pub initial_step: Option<f64>,
    /// Run every method with this constant step (the error estimate of adaptive methods is
    /// then ignored). `None`: adaptive methods adapt, and fixed-step methods take
    /// `initial_step`, or else the starting-step heuristic's value, for the whole run.
    pub fixed_step: Option<f64>,
    /// Upper bound on the magnitude of any step.
    pub max_step: Option<f64>,
    /// Projection onto the mass shell after each step.
    pub projection: Projection,
    /// When the kernels become non-finite and no smaller step avoids it, end with
    /// [`StopReason::NonFinite`](crate::StopReason::NonFinite) at the last finite state
    /// instead of returning [`Error::SingularMetric`].
    pub stop_on_non_finite: bool,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            method: Method::DormandPrince853,
            rtol: 1e-9,
            atol: 1e-12,
            max_steps: 100_000,
            initial_step: None,
            fixed_step: None,
            max_step: None,
            projection: Projection::Off,
            stop_on_non_finite: false,
        }
    }
}

impl Options {
    /// The defaults with another method.
    pub fn with_method(method: Method) -> Self {
        Options {
            method,
            ..Options::default()
        }
    }

    pub(crate) fn validate(&self) -> Result<(), Error> {
        let bad = |reason| Err(Error::InvalidInput { reason });
        if !(self.rtol.is_finite() && self.rtol >= 0.0 && self.atol.is_finite() && self.atol >= 0.0)
        {
            return bad("rtol and atol must be finite and non-negative");
        }
        if self.rtol == 0.0 && self.atol == 0.0 {
            return bad("rtol and atol cannot both be zero");
        }
        if self.max_steps == 0 {
            return bad("max_steps must be positive");
        }
        for step in [self.initial_step, self.fixed_step, self.max_step]
            .into_iter()
            .flatten()
        {
            if !(step.is_finite() && step > 0.0) {
                return bad("step sizes must be finite and positive");
            }
        }
        Ok(())
    }
}

/// Integrates the geodesic through `x0` with velocity `u0` from λ = 0 to `lambda_end` (which
/// may be negative).
///
/// Explicit methods integrate the second-order form (x, u); Gauss-Legendre integrates
/// Hamilton's equations in (x, p), starting from `p = g(u0)`. The outcome always reports the
/// velocity u and the momentum p at the end.
pub fn integrate<M: MetricKernels<f64, N>, const N: usize>(
    metric: &M,
    x0: [f64; N],
    u0: [f64; N],
    lambda_end: f64,
    options: &Options,
) -> Result<Outcome<N>, Error> {
    integrate_with_events(metric, x0, u0, lambda_end, options, &mut [])
}

/// [`integrate`], watching `events` (at most [`MAX_EVENTS`](crate::MAX_EVENTS)): every counted
/// crossing is passed to its event's `on_crossing`, and the first terminal one ends the run.
pub fn integrate_with_events<M: MetricKernels<f64, N>, const N: usize>(
    metric: &M,
    x0: [f64; N],
    u0: [f64; N],
    lambda_end: f64,
    options: &Options,
    events: &mut [&mut dyn Event<N>],
) -> Result<Outcome<N>, Error> {
    match options.method {
        Method::Rk4 => run(
            &VelocityForm(metric),
            Rk4::new(),
            x0,
            u0,
            lambda_end,
            options,
            events,
        ),
        Method::DormandPrince54 => run(
            &VelocityForm(metric),
            DormandPrince54::new(),
            x0,
            u0,
            lambda_end,
            options,
            events,
        ),
        Method::DormandPrince853 => run(
            &VelocityForm(metric),
            DormandPrince853::new(),
            x0,
            u0,
            lambda_end,
            options,
            events,
        ),
        Method::GaussLegendre4 => run(
            &MomentumForm(metric),
            GaussLegendre::order4(),
            x0,
            u0,
            lambda_end,
            options,
            events,
        ),
        Method::GaussLegendre6 => run(
            &MomentumForm(metric),
            GaussLegendre::order6(),
            x0,
            u0,
            lambda_end,
            options,
            events,
        ),
    }
}
