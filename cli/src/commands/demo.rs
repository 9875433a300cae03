//! `geokern demo`: a built-in scenario, derived and integrated end to end.
//!
//! Vesper is a compact remnant of one solar-mass-like unit, spinning at a = 0.6 m and
//! carrying a faint charge q = 0.4 m (a Kerr-Newman spacetime, `examples/metrics/vesper.gk`).
//! The survey probe Halcyon rides a tilted, slightly eccentric orbit at about ten
//! gravitational radii, and its beacon fires a fan of light pulses inward at several angles
//! off the line to Vesper's centre. The demo derives the metric, then integrates Halcyon's
//! orbit with an adaptive and with a symplectic method and follows each pulse until it falls
//! through the outer horizon or escapes, and reports how well every conserved quantity held.

use std::f64::consts::FRAC_PI_2;
use std::fmt::Write;
use std::time::Instant;

use geokern_runtime::{project_time_component, Method, MetricKernels, Options};
use geokern_symbolic::program::KernelKind;
use serde_json::{json, Map, Value};

use crate::args::DemoArgs;
use crate::commands::trace::{self, integrate, Stop, TraceRequest, TraceResult};
use crate::error::CliError;
use crate::progress::Progress;
use crate::tape_metric::{TapeMetric, TapeSet};
use crate::{json, report, source};

/// The scenario's metric file.
pub const SOURCE: &str = include_str!("../../../examples/metrics/vesper.gk");

/// Mass, spin and charge of Vesper, in the order the file declares them.
const PARAMS: [(&str, f64); 3] = [("m", 1.0), ("a", 0.6), ("q", 0.4)];

/// Where Halcyon starts: r = 10 m, a little off the equatorial plane.
const START: [f64; 4] = [0.0, 10.0, FRAC_PI_2 - 0.05, 0.0];

/// One geodesic of the scenario.
struct Launch {
    name: &'static str,
    /// g(u,u) to solve u^t for: -1 for the probe, 0 for light.
    norm: f64,
    /// Spatial velocity (u^r, u^θ, u^φ) before u^t is solved for.
    spatial: [f64; 3],
    method: Method,
    /// Constant step for the fixed-step methods.
    step: Option<f64>,
    lambda: f64,
}

/// A light pulse fired from Halcyon's starting point at `angle` (radians) off the inward
/// radial direction, in the equatorial direction of motion (negative: against the spin),
/// with unit components in the orthonormal-looking scaling of the diagonal metric.
fn pulse(name: &'static str, angle: f64) -> Launch {
    let (r, theta) = (START[1], START[2]);
    let (m, a, q) = (PARAMS[0].1, PARAMS[1].1, PARAMS[2].1);
    let sigma = r * r + (a * theta.cos()).powi(2);
    let delta = r * r - 2.0 * m * r + a * a + q * q;
    // 1/sqrt(g_rr) and 1/sqrt(g_φφ) ≈ 1/(r sin θ): directions, not exact tetrad legs; u^t is
    // solved afterwards so the pulse is exactly null.
    let u_r = -angle.cos() * (delta / sigma).sqrt();
    let u_phi = angle.sin() / (r * theta.sin());
    Launch {
        name,
        norm: 0.0,
        spatial: [u_r, 0.0, u_phi],
        method: Method::DormandPrince54,
        step: None,
        lambda: 400.0,
    }
}

fn launches() -> Vec<Launch> {
    // A bound, eccentric orbit: u^φ below the circular value at r = 10 (about 0.038 there,
    // from L = sqrt(m r) / sqrt(1 - 3m/r) of Schwarzschild, common practice), so Halcyon
    // swings in to about 6 m; a small polar component tilts the orbit.
    let orbit = [0.0, 0.004, 0.033];
    vec![
        Launch {
            name: "Halcyon orbit",
            norm: -1.0,
            spatial: orbit,
            method: Method::DormandPrince853,
            step: None,
            lambda: 3000.0,
        },
        Launch {
            name: "Halcyon orbit",
            norm: -1.0,
            spatial: orbit,
            method: Method::GaussLegendre6,
            step: Some(2.0),
            lambda: 3000.0,
        },
        pulse("pulse +5°", 5f64.to_radians()),
        pulse("pulse +20°", 20f64.to_radians()),
        pulse("pulse -20°", -20f64.to_radians()),
        pulse("pulse +35°", 35f64.to_radians()),
        pulse("pulse +70°", 70f64.to_radians()),
    ]
}

/// The outer horizon r+ = m + sqrt(m² - a² - q²).
fn outer_horizon() -> f64 {
    let (m, a, q) = (PARAMS[0].1, PARAMS[1].1, PARAMS[2].1);
    m + (m * m - a * a - q * q).sqrt()
}

/// The full starting velocity of `launch`: u^t solved from g(u,u) = launch.norm, taking the
/// future-directed root.
fn initial_velocity(set: &TapeSet, launch: &Launch) -> Result<[f64; 4], CliError> {
    let form = TapeMetric::<4>::new(set)
        .ok_or_else(|| CliError::usage("the demo's metric has four coordinates"))?
        .metric(&START);
    let [ur, uth, uph] = launch.spatial;
    let mut u = [1.0, ur, uth, uph];
    if !project_time_component(&form, &mut u, launch.norm) {
        return Err(CliError::usage(format!(
            "{}: no future-directed velocity with that norm",
            launch.name
        )));
    }
    Ok(u)
}

struct Run<'a> {
    launch: &'a Launch,
    result: TraceResult,
}

/// Runs `demo`.
pub fn run(args: &DemoArgs) -> Result<String, CliError> {
    if args.show_metric {
        return Ok(SOURCE.to_string());
    }
    let loaded = source::load_bytes("vesper.gk", SOURCE.as_bytes(), None)?;
    let ks = &loaded.kernels;
    let given: Vec<String> = PARAMS.iter().map(|(n, v)| format!("{n}={v}")).collect();
    let params = source::bind_params(ks, &given)?;
    let set = TapeSet::with_evaluator(ks, &params, args.evaluator.evaluator)?;
    let horizon = outer_horizon();
    let r_index = 1;
    let stops = vec![
        Stop {
            coord: r_index,
            value: horizon + 0.05,
            below: true,
            label: "the horizon".into(),
        },
        Stop {
            coord: r_index,
            value: 100.0,
            below: false,
            label: "escape (r > 100)".into(),
        },
    ];
    let plan = launches();
    let progress = Progress::new(args.format.json, "demo");
    let started = Instant::now();
    let mut runs = Vec::with_capacity(plan.len());
    for (k, launch) in plan.iter().enumerate() {
        progress.set_message(launch.name);
        let mut options = Options::with_method(launch.method);
        options.fixed_step = launch.step;
        options.stop_on_non_finite = true;
        let request = TraceRequest {
            x: START.to_vec(),
            u: initial_velocity(&set, launch)?.to_vec(),
            lambda: launch.lambda,
            options,
            stops: stops.clone(),
            watch: Some(r_index),
        };
        let slice = (k as f64 / plan.len() as f64, 1.0 / plan.len() as f64);
        let result = integrate(&set, &request, &progress, slice)?;
        runs.push(Run { launch, result });
    }
    let integration_time = started.elapsed();
    progress.finish();
    let summary = Summary {
        loaded: &loaded,
        params: &params,
        horizon,
        runs: &runs,
        integration_time,
        evaluator: set.evaluator_name(),
    };
    Ok(if args.format.json {
        json::to_text(&summary.to_json())
    } else {
        summary.to_text()
    })
}

struct Summary<'a> {
    loaded: &'a source::Loaded,
    params: &'a [f64],
    horizon: f64,
    runs: &'a [Run<'a>],
    integration_time: std::time::Duration,
    /// `"native"` or `"tape"`.
    evaluator: &'static str,
}

const KERNELS: [KernelKind; 4] = [
    KernelKind::Christoffel,
    KernelKind::Accel,
    KernelKind::Hamilton,
    KernelKind::Invariants,
];

impl Summary<'_> {
    fn to_json(&self) -> Value {
        let ks = &self.loaded.kernels;
        let ops: Map<String, Value> = KernelKind::ALL
            .iter()
            .map(|&k| {
                (
                    k.name().to_string(),
                    json::op_counts(&ks.program(k).op_counts()),
                )
            })
            .collect();
        let geodesics: Vec<Value> = self
            .runs
            .iter()
            .map(|run| {
                let mut v = trace::to_json(run.launch.method, &run.result);
                if let Value::Object(m) = &mut v {
                    m.insert("name".into(), run.launch.name.into());
                    m.insert(
                        "kind".into(),
                        if run.launch.norm < 0.0 {
                            "timelike"
                        } else {
                            "null"
                        }
                        .into(),
                    );
                    if let Some((lo, hi)) = run.result.range {
                        m.insert("r_range".into(), json::vector(&[lo, hi]));
                    }
                }
                v
            })
            .collect();
        json!({
            "metric": ks.name,
            "params": json::named(&ks.params, self.params),
            "dim": ks.dim(),
            "christoffel_nonzero": report::nonzero_christoffel(ks).len(),
            "cyclic": ks.cyclic.iter().map(|&k| ks.coords[k].clone()).collect::<Vec<_>>(),
            "invariants": ks.invariant_names,
            "ops": ops,
            "derivation_ms": self.loaded.derivation_time.as_secs_f64() * 1e3,
            "integration_ms": self.integration_time.as_secs_f64() * 1e3,
            "evaluator": self.evaluator,
            "horizon": self.horizon,
            "geodesics": geodesics,
        })
    }

    fn to_text(&self) -> String {
        let ks = &self.loaded.kernels;
        let mut out = String::new();
        let _ = writeln!(
            out,
            "Vesper: a spinning, faintly charged remnant, and the probe Halcyon circling it"
        );
        let params: Vec<String> = ks
            .params
            .iter()
            .zip(self.params)
            .map(|(n, v)| format!("{n} = {}", report::number(*v, 6)))
            .collect();
        let _ = writeln!(
            out,
            "  metric      {} (Kerr-Newman), {}; outer horizon r+ = {}",
            ks.name,
            params.join(", "),
            report::number(self.horizon, 6)
        );
        let cyclic: Vec<String> = ks.cyclic.iter().map(|&k| ks.coords[k].clone()).collect();
        let _ = writeln!(
            out,
            "  derived     {} nonzero Christoffel symbols in {}; cyclic {} (conserved {}); invariant {}",
            report::nonzero_christoffel(ks).len(),
            report::duration(self.loaded.derivation_time),
            report::list_or_none(&cyclic),
            report::list_or_none(&ks.conserved_names()),
            report::list_or_none(&ks.invariant_names)
        );
        let ops: Vec<String> = KERNELS
            .iter()
            .map(|&k| format!("{} {}", k.name(), ks.program(k).op_counts().total()))
            .collect();
        let _ = writeln!(out, "  op counts   {}", ops.join(", "));
        let _ = writeln!(
            out,
            "  geodesics   from r = {}, θ = π/2 - 0.05, integrated in {} with {}",
            report::number(START[1], 6),
            report::duration(self.integration_time),
            if self.evaluator == "native" {
                "native kernels (each compiled when first run, within that time)"
            } else {
                "kernels on the tape"
            },
        );
        let rows: Vec<Vec<String>> = self
            .runs
            .iter()
            .map(|run| {
                let r = &run.result;
                let range = r.range.map_or_else(String::new, |(lo, hi)| {
                    format!("{}..{}", report::number(lo, 4), report::number(hi, 4))
                });
                vec![
                    run.launch.name.to_string(),
                    run.launch.method.name().to_string(),
                    r.stats.steps.to_string(),
                    range,
                    trace::stop_line(r),
                ]
            })
            .collect();
        out.push_str(&report::table(
            &["geodesic", "method", "steps", "r range", "end"],
            &rows,
            4,
        ));
        let _ = writeln!(out, "  largest drift of each monitored quantity");
        let names: Vec<String> = self
            .runs
            .first()
            .map(|r| r.result.drift.iter().map(|d| d.0.clone()).collect())
            .unwrap_or_default();
        let mut header = vec!["geodesic", "method"];
        header.extend(names.iter().map(String::as_str));
        let rows: Vec<Vec<String>> = self
            .runs
            .iter()
            .map(|run| {
                let mut row = vec![
                    run.launch.name.to_string(),
                    run.launch.method.name().to_string(),
                ];
                row.extend(run.result.drift.iter().map(|d| report::number(d.1, 2)));
                row
            })
            .collect();
        out.push_str(&report::table(&header, &rows, 4));
        out
    }
}
