//! `geokern trace FILE --x .. --u .. --lambda L`: integrate one geodesic on the tape.

use std::cell::{Cell, RefCell};
use std::fmt::Write;

use geokern_runtime::{
    integrate_with_events, CoordinateCrossing, Event, Method, Options, Stats, StopReason,
};
use serde_json::{Map, Value};

use crate::args::TraceArgs;
use crate::error::CliError;
use crate::plot::{self, Figure, Ring, Series};
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

/// Records the range of one coordinate and, if asked, every accepted state; an event that
/// never fires. The integrator evaluates events once at the start and once at the end of
/// every accepted step, so the record holds the states the integrator accepted.
struct Watch {
    index: Option<usize>,
    low: Cell<f64>,
    high: Cell<f64>,
    path: Option<RefCell<Vec<PathPoint>>>,
}

impl<const N: usize> Event<N> for Watch {
    fn value(&self, lambda: f64, x: &[f64; N], u: &[f64; N]) -> f64 {
        if let Some(&v) = self.index.and_then(|k| x.get(k)) {
            self.low.set(self.low.get().min(v));
            self.high.set(self.high.get().max(v));
        }
        if let Some(path) = &self.path {
            path.borrow_mut().push(PathPoint {
                lambda,
                x: x.to_vec(),
                u: u.to_vec(),
            });
        }
        1.0
    }

    fn is_terminal(&self) -> bool {
        false
    }
}

/// One recorded state of a geodesic.
#[derive(Clone, Debug, PartialEq)]
pub struct PathPoint {
    /// The affine parameter.
    pub lambda: f64,
    /// The coordinates.
    pub x: Vec<f64>,
    /// The velocity dx/dλ.
    pub u: Vec<f64>,
}

/// Integrates `request` through the metric on tapes, reporting progress to `progress` as the
/// part `slice = (offset, weight)` of a whole run (`(0.0, 1.0)` for a run of its own).
pub fn integrate(
    set: &TapeSet,
    request: &TraceRequest,
    progress: &Progress,
    slice: (f64, f64),
) -> Result<TraceResult, CliError> {
    integrate_any(set, request, progress, slice, false).map(|(result, _)| result)
}

/// [`integrate`], also returning every accepted state, in order of λ, from the start
/// to where the integration ended.
pub fn integrate_path(
    set: &TapeSet,
    request: &TraceRequest,
    progress: &Progress,
    slice: (f64, f64),
) -> Result<(TraceResult, Vec<PathPoint>), CliError> {
    integrate_any(set, request, progress, slice, true)
}

fn integrate_any(
    set: &TapeSet,
    request: &TraceRequest,
    progress: &Progress,
    slice: (f64, f64),
    record: bool,
) -> Result<(TraceResult, Vec<PathPoint>), CliError> {
    with_dimension!(
        set.dim(),
        integrate_n(set, request, progress, slice, record)
    )
    .unwrap_or_else(|| Err(CliError::usage("a metric has 1 to 16 coordinates")))
}

fn integrate_n<const N: usize>(
    set: &TapeSet,
    request: &TraceRequest,
    progress: &Progress,
    slice: (f64, f64),
    record: bool,
) -> Result<(TraceResult, Vec<PathPoint>), CliError> {
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
    let mut watch = (request.watch.is_some() || record).then(|| Watch {
        index: request.watch,
        low: Cell::new(request.watch.map_or(f64::NAN, start)),
        high: Cell::new(request.watch.map_or(f64::NAN, start)),
        path: record.then(|| RefCell::new(Vec::new())),
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
    let (range, path) = match watch {
        Some(w) => (
            request.watch.map(|_| (w.low.get(), w.high.get())),
            w.path.map(RefCell::into_inner).unwrap_or_default(),
        ),
        None => (None, Vec::new()),
    };
    // A step that ended past a terminal event was recorded before the event cut it short.
    let forward = request.lambda >= 0.0;
    let mut path: Vec<PathPoint> = path
        .into_iter()
        .filter(|p| {
            (if forward {
                p.lambda < out.lambda
            } else {
                p.lambda > out.lambda
            }) && p.x.iter().chain(&p.u).all(|v| v.is_finite())
        })
        .collect();
    if record {
        path.push(PathPoint {
            lambda: out.lambda,
            x: out.x.to_vec(),
            u: out.u.to_vec(),
        });
    }
    let result = TraceResult {
        x: out.x.to_vec(),
        u: out.u.to_vec(),
        p: out.p.to_vec(),
        lambda: out.lambda,
        stats: out.stats,
        stop: out.stop,
        event,
        drift,
        range,
    };
    Ok((result, path))
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
    let plot_format = match &args.plot {
        Some(path) => Some(plot::format_of(path)?),
        None => None,
    };
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
    let set = TapeSet::with_evaluator(ks, &params, args.evaluator.evaluator)?;
    let request = TraceRequest {
        x,
        u,
        lambda: args.lambda,
        options,
        stops,
        watch: None,
    };
    let progress = Progress::new(args.format.json, &format!("tracing {}", ks.name));
    let (result, path) =
        integrate_any(&set, &request, &progress, (0.0, 1.0), plot_format.is_some())?;
    progress.finish();
    if let (Some(file), Some(format)) = (&args.plot, plot_format) {
        plot::write(&orbit_figure(&set, &path), file, format)?;
    }
    Ok(if args.format.json {
        let mut value = to_json(args.method, &result);
        if let Value::Object(m) = &mut value {
            m.insert("evaluator".into(), set.evaluator_name().into());
        }
        json::to_text(&value)
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

/// How an orbit is seen from above.
#[derive(Clone, Copy, Debug, PartialEq)]
enum View {
    /// (t, r, θ, φ)-like: x = r sin θ cos φ, y = r sin θ sin φ.
    Spherical,
    /// Two coordinates drawn as they are.
    Plain(usize, usize),
}

/// The view for coordinates `coords`: spherical when the last two are named like a polar
/// angle and an azimuth after a radius, else x and y when the coordinates are (t, x, y, z),
/// else the first two spatial coordinates (those after a timelike first one).
fn view(set: &TapeSet, x0: &[f64]) -> View {
    let c: Vec<String> = set.coords.iter().map(|n| n.to_ascii_lowercase()).collect();
    let polar = |n: &str| matches!(n, "theta" | "th" | "vartheta");
    let azimuth = |n: &str| matches!(n, "phi" | "ph" | "varphi");
    if c.len() == 4 && polar(&c[2]) && azimuth(&c[3]) {
        return View::Spherical;
    }
    if let Some(k) = c.iter().position(|n| n == "x") {
        if c.get(k + 1).is_some_and(|n| n == "y") {
            return View::Plain(k, k + 1);
        }
    }
    let g = set.eval(
        geokern_symbolic::program::KernelKind::Metric,
        &crate::tape::Inputs {
            x: x0,
            ..crate::tape::Inputs::default()
        },
    );
    let first = usize::from(c.len() >= 3 && g.first().is_some_and(|&g00| g00 < 0.0));
    View::Plain(first, (first + 1).min(c.len().saturating_sub(1)))
}

/// The cubic Hermite interpolant between two recorded states at fraction `s` of the step
/// (common practice: x and dx/dλ at both ends fix a cubic).
fn hermite(a: &PathPoint, b: &PathPoint, s: f64, k: usize) -> f64 {
    let h = b.lambda - a.lambda;
    let (s2, s3) = (s * s, s * s * s);
    (2.0 * s3 - 3.0 * s2 + 1.0) * a.x[k]
        + (s3 - 2.0 * s2 + s) * h * a.u[k]
        + (-2.0 * s3 + 3.0 * s2) * b.x[k]
        + (s3 - s2) * h * b.u[k]
}

/// The orbit seen from above, with the metric's horizons as circles in the spherical view.
fn orbit_figure(set: &TapeSet, path: &[PathPoint]) -> Figure {
    let x0 = path.first().map(|p| p.x.clone()).unwrap_or_default();
    let view = view(set, &x0);
    let project = |x: &[f64]| -> (f64, f64) {
        match view {
            View::Spherical => {
                let (r, theta, phi) = (x[1], x[2], x[3]);
                (r * theta.sin() * phi.cos(), r * theta.sin() * phi.sin())
            }
            View::Plain(i, j) => (
                x.get(i).copied().unwrap_or(f64::NAN),
                x.get(j).copied().unwrap_or(f64::NAN),
            ),
        }
    };
    // Eight points a step draw the curve smoothly where steps are long; a long record has
    // points enough already.
    let per_step = if path.len() < 20_000 { 8 } else { 1 };
    let mut points: Vec<(f64, f64)> = Vec::with_capacity(path.len() * per_step + 1);
    let mut x = vec![0.0; x0.len()];
    for pair in path.windows(2) {
        for step in 0..per_step {
            let s = step as f64 / per_step as f64;
            for (k, xk) in x.iter_mut().enumerate() {
                *xk = hermite(&pair[0], &pair[1], s, k);
            }
            points.push(project(&x));
        }
    }
    if let Some(last) = path.last() {
        points.push(project(&last.x));
    }
    let start = path.first().map_or((f64::NAN, f64::NAN), |p| project(&p.x));
    let mut circles = Vec::new();
    let (title_view, x_label, y_label) = match view {
        View::Spherical => {
            let c = &set.coords;
            let reach = path
                .iter()
                .map(|p| p.x[1].abs())
                .filter(|r| r.is_finite())
                .fold(0.0, f64::max);
            if reach > 0.0 {
                let at = [0.0, 0.0, std::f64::consts::FRAC_PI_2, 0.0];
                let found = crate::horizon::horizons(set, 1, &at, reach * 1e-4, reach * 2.0);
                for (k, &r) in found.iter().enumerate() {
                    circles.push(Ring {
                        label: format!(
                            "{} {} = {}",
                            if k == 0 { "horizon" } else { "inner horizon" },
                            c[1],
                            report::number(r, 6)
                        ),
                        center: (0.0, 0.0),
                        radius: r,
                        color: if k == 0 {
                            [20, 20, 20]
                        } else {
                            [130, 130, 130]
                        },
                        filled: k == 0,
                    });
                }
            }
            let (r, th, ph) = (
                report::coordinate_label(&c[1]),
                report::coordinate_label(&c[2]),
                report::coordinate_label(&c[3]),
            );
            (
                "seen from above".to_string(),
                format!("{r} sin {th} cos {ph}"),
                format!("{r} sin {th} sin {ph}"),
            )
        }
        View::Plain(i, j) => {
            let name = |k: usize| set.coords.get(k).cloned().unwrap_or_default();
            (
                format!("in the ({}, {}) plane", name(i), name(j)),
                name(i),
                name(j),
            )
        }
    };
    Figure {
        title: format!("{}: geodesic {title_view}", set.name),
        x_label,
        y_label,
        series: vec![
            Series {
                label: "geodesic".to_string(),
                points,
                color: [31, 119, 180],
                dashed: false,
            },
            Series {
                label: "start".to_string(),
                points: vec![start],
                color: [214, 39, 40],
                dashed: false,
            },
        ],
        circles,
        equal_aspect: true,
    }
}
