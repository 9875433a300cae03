//! `geokern trace FILE --x .. --u .. --lambda L`: integrate one geodesic on the tape.

use std::cell::Cell;
use std::fmt::Write;

use geokern_runtime::{
    integrate_with_events, CoordinateCrossing, Event, Method, Options, Stats, StopReason,
};
use serde_json::{Map, Value};

use crate::args::TraceArgs;
use crate::error::CliError;
use crate::progress::{Progress, ProgressEvent};
use crate::tape_metric::{TapeMetric, TapeSet};
use crate::{json, report, source, with_dimension};

/// Significant digits in the text report.
const DIGITS: usize = 10;

/// A terminal stop on a coordinate value.
#[derive(Clone, Debug, PartialEq)]
pub struct Stop {
    /// The coordinate's index.
    pub coord: usize,
    /// The value.
    pub value: f64,
    /// Stop when falling below (else rising above) the value.
    pub below: bool,
    /// How reports name it, as `r < 2.05`.
    pub label: String,
}

/// One integration to run.
#[derive(Clone, Debug)]
pub struct TraceRequest {
    /// Starting point.
    pub x: Vec<f64>,
    /// Starting velocity.
    pub u: Vec<f64>,
    /// The end of the affine parameter.
    pub lambda: f64,
    /// Method, tolerances and budget.
    pub options: Options,
    /// Terminal stops on coordinate values.
    pub stops: Vec<Stop>,
    /// A coordinate whose range along the geodesic is recorded (as a radius, to see an
    /// orbit's periapsis and apoapsis).
    pub watch: Option<usize>,
}

/// Where an integration ended, and how well it kept its conserved quantities.
#[derive(Clone, Debug)]
pub struct TraceResult {
    /// Final coordinates.
    pub x: Vec<f64>,
    /// Final velocity.
    pub u: Vec<f64>,
    /// Final covariant momentum.
    pub p: Vec<f64>,
    /// The affine parameter reached.
    pub lambda: f64,
    /// The integrator's counters.
    pub stats: Stats,
    /// Why it ended.
    pub stop: StopReason,
    /// The label of the stop that fired, if one did.
    pub event: Option<String>,
    /// Largest absolute change of g(u,u) (`norm`), of each conserved momentum and of each
    /// invariant, by name.
    pub drift: Vec<(String, f64)>,
    /// Smallest and largest value seen of the watched coordinate (at the ends of steps).
    pub range: Option<(f64, f64)>,
}

/// Records the range of one coordinate; an event that never fires.
struct RangeWatch {
    index: usize,
    low: Cell<f64>,
    high: Cell<f64>,
}

impl<const N: usize> Event<N> for RangeWatch {
    fn value(&self, _lambda: f64, x: &[f64; N], _u: &[f64; N]) -> f64 {
        if let Some(&v) = x.get(self.index) {
            self.low.set(self.low.get().min(v));
            self.high.set(self.high.get().max(v));
        }
        1.0
    }

    fn is_terminal(&self) -> bool {
        false
    }
}

/// Integrates `request` through the metric on tapes, reporting progress to `progress` as the
/// part `slice = (offset, weight)` of a whole run (`(0.0, 1.0)` for a run of its own).
pub fn integrate_tape(
    set: &TapeSet,
    request: &TraceRequest,
    progress: &Progress,
    slice: (f64, f64),
) -> Result<TraceResult, CliError> {
    with_dimension!(set.dim(), integrate_n(set, request, progress, slice))
        .unwrap_or_else(|| Err(CliError::usage("a metric has 1 to 16 coordinates")))
}

fn integrate_n<const N: usize>(
    set: &TapeSet,
    request: &TraceRequest,
    progress: &Progress,
    slice: (f64, f64),
) -> Result<TraceResult, CliError> {
    let dimension = || CliError::usage(format!("vectors must have {N} entries"));
    let metric = TapeMetric::<N>::new(set).ok_or_else(dimension)?;
    let x0: [f64; N] = request.x.as_slice().try_into().map_err(|_| dimension())?;
    let u0: [f64; N] = request.u.as_slice().try_into().map_err(|_| dimension())?;
    let mut crossings: Vec<CoordinateCrossing> = request
        .stops
        .iter()
        .map(|s| {
            if s.below {
                CoordinateCrossing::falling_below(s.coord, s.value)
            } else {
                CoordinateCrossing::rising_above(s.coord, s.value)
            }
        })
        .collect();
    let mut bar = ProgressEvent::new(progress, request.lambda, slice);
    let start = |k: usize| x0.get(k).copied().unwrap_or(f64::NAN);
    let mut watch = request.watch.map(|index| RangeWatch {
        index,
        low: Cell::new(start(index)),
        high: Cell::new(start(index)),
    });
    let mut events: Vec<&mut dyn Event<N>> = crossings
        .iter_mut()
        .map(|c| c as &mut dyn Event<N>)
        .collect();
    if let Some(w) = watch.as_mut() {
        events.push(w);
    }
    if progress.enabled() {
        events.push(&mut bar);
    }
    let out = integrate_with_events(
        &metric,
        x0,
        u0,
        request.lambda,
        &request.options,
        &mut events,
    )?;
    let event = match out.stop {
        StopReason::Event { index, .. } => request.stops.get(index).map(|s| s.label.clone()),
        _ => None,
    };
    let mut drift = vec![("norm".to_string(), out.drift.norm)];
    drift.extend(
        set.conserved
            .iter()
            .cloned()
            .zip(out.drift.conserved().iter().copied()),
    );
    drift.extend(
        set.invariants
            .iter()
            .cloned()
            .zip(out.drift.invariants().iter().copied()),
    );
    Ok(TraceResult {
        x: out.x.to_vec(),
        u: out.u.to_vec(),
        p: out.p.to_vec(),
        lambda: out.lambda,
        stats: out.stats,
        stop: out.stop,
        event,
        drift,
        range: watch.map(|w| (w.low.get(), w.high.get())),
    })
}

/// Parses `--stop-below` / `--stop-above` values (`COORD=VALUE`).
pub fn parse_stops(
    coords: &[String],
    below: &[String],
    above: &[String],
) -> Result<Vec<Stop>, CliError> {
    let one = |text: &String, is_below: bool| -> Result<Stop, CliError> {
        let flag = if is_below {
            "--stop-below"
        } else {
            "--stop-above"
        };
        let (name, value) = text.split_once('=').ok_or_else(|| {
            CliError::usage(format!(
                "{flag} `{text}` is not of the form COORD=VALUE (as in r=2.05)"
            ))
        })?;
        let name = name.trim();
        let coord = coords.iter().position(|c| c == name).ok_or_else(|| {
            CliError::usage(format!(
                "{flag}: unknown coordinate `{name}`; the coordinates are {}",
                coords.join(", ")
            ))
        })?;
        let value = source::parse_number(value).ok_or_else(|| {
            CliError::usage(format!("{flag} {name}: `{value}` is not a finite number"))
        })?;
        let label = format!(
            "{name} {} {}",
            if is_below { "<" } else { ">" },
            report::number(value, DIGITS)
        );
        Ok(Stop {
            coord,
            value,
            below: is_below,
            label,
        })
    };
    let mut stops = Vec::new();
    for text in below {
        stops.push(one(text, true)?);
    }
    for text in above {
        stops.push(one(text, false)?);
    }
    // Two places are kept for the range watch and the progress bar.
    if stops.len() > geokern_runtime::MAX_EVENTS - 2 {
        return Err(CliError::usage(format!(
            "at most {} stop conditions",
            geokern_runtime::MAX_EVENTS - 2
        )));
    }
    Ok(stops)
}

/// Runs `trace`.
pub fn run(args: &TraceArgs) -> Result<String, CliError> {
    let loaded = source::load_source(&args.source)?;
    let ks = &loaded.kernels;
    let params = source::bind_params(ks, &args.params)?;
    let x = source::parse_vector("--x", &args.x, &ks.coords)?;
    let u = source::parse_vector("--u", &args.u, &ks.coords)?;
    let stops = parse_stops(&ks.coords, &args.stop_below, &args.stop_above)?;
    if args.max_steps == 0 {
        return Err(CliError::usage("--max-steps must be positive"));
    }
    if args.rtol < 0.0 || args.atol < 0.0 || (args.rtol == 0.0 && args.atol == 0.0) {
        return Err(CliError::usage(
            "--rtol and --atol must be non-negative and not both zero",
        ));
    }
    if args.step.is_some_and(|h| h <= 0.0) {
        return Err(CliError::usage("--step must be positive"));
    }
    let mut options = Options::with_method(args.method);
    options.rtol = args.rtol;
    options.atol = args.atol;
    options.max_steps = args.max_steps;
    options.projection = args.projection;
    // A singularity ends the run with its last finite state, which is worth reporting.
    options.stop_on_non_finite = true;
    if args.method.is_adaptive() {
        options.initial_step = args.step;
    } else {
        options.fixed_step = args.step;
    }
    let set = TapeSet::new(ks, &params)?;
    let request = TraceRequest {
        x,
        u,
        lambda: args.lambda,
        options,
        stops,
        watch: None,
    };
    let progress = Progress::new(args.format.json, &format!("tracing {}", ks.name));
    let result = integrate_tape(&set, &request, &progress, (0.0, 1.0))?;
    progress.finish();
    Ok(if args.format.json {
        json::to_text(&to_json(args.method, &result))
    } else {
        to_text(&ks.name, args.method, &request, &result)
    })
}

/// The JSON object of one integration (the shape `trace --json` prints).
pub fn to_json(method: Method, r: &TraceResult) -> Value {
    let mut m = Map::new();
    m.insert("method".into(), method.name().into());
    m.insert("x".into(), json::vector(&r.x));
    m.insert("u".into(), json::vector(&r.u));
    m.insert("p".into(), json::vector(&r.p));
    m.insert("lambda".into(), json::number(r.lambda));
    m.insert("steps".into(), r.stats.steps.into());
    m.insert("rejected".into(), r.stats.rejected.into());
    m.insert("rhs_evaluations".into(), r.stats.rhs_evaluations.into());
    m.insert("stop".into(), r.stop.name().into());
    if let Some(e) = &r.event {
        m.insert("event".into(), e.clone().into());
    }
    let drift: Map<String, Value> = r
        .drift
        .iter()
        .map(|(n, d)| (n.clone(), json::number(*d)))
        .collect();
    m.insert("drift".into(), Value::Object(drift));
    Value::Object(m)
}

/// One line saying where and why an integration stopped.
pub fn stop_line(r: &TraceResult) -> String {
    let at = report::number(r.lambda, 8);
    match (&r.stop, &r.event) {
        (StopReason::End, _) => format!("reached the end, λ = {at}"),
        (StopReason::Event { .. }, Some(label)) => format!("stopped at {label}, λ = {at}"),
        (StopReason::Event { .. }, None) => format!("stopped by an event, λ = {at}"),
        (StopReason::NonFinite { .. }, _) => {
            format!("stopped where the kernels become non-finite, λ = {at}")
        }
    }
}

/// The drift record as `norm 1.2e-12, p_t 3e-15`.
pub fn drift_line(r: &TraceResult) -> String {
    let items: Vec<String> = r
        .drift
        .iter()
        .map(|(n, d)| format!("{n} {}", report::number(*d, 2)))
        .collect();
    items.join(", ")
}

fn to_text(name: &str, method: Method, request: &TraceRequest, r: &TraceResult) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "{name}: {} from λ = 0 towards λ = {}",
        method.name(),
        report::number(request.lambda, DIGITS)
    );
    let _ = writeln!(out, "  stop     {}", stop_line(r));
    let _ = writeln!(out, "  x        {}", report::vector(&r.x, DIGITS));
    let _ = writeln!(out, "  u        {}", report::vector(&r.u, DIGITS));
    let _ = writeln!(out, "  p        {}", report::vector(&r.p, DIGITS));
    let _ = writeln!(
        out,
        "  steps    {} accepted, {} rejected, {} evaluations",
        r.stats.steps, r.stats.rejected, r.stats.rhs_evaluations
    );
    let _ = writeln!(out, "  drift    {}", drift_line(r));
    out
}
