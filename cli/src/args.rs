//! The command line, declared with clap.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand};
use geokern_runtime::{Method, Projection};

use crate::tape_metric::Evaluator;

/// Derive a metric's geodesic kernels from a `.gk` file and evaluate them, without a Rust
/// compiler.
#[derive(Debug, Parser)]
#[command(name = "geokern", version, about, propagate_version = true)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Parse and derive; print dimension, nonzero Christoffel symbols, cyclic coordinates, op
    /// counts and derivation time.
    Check(CheckArgs),
    /// Evaluate the kernels at one point.
    Eval(EvalArgs),
    /// Integrate one geodesic.
    Trace(TraceArgs),
    /// Print the kernels as source code in another language.
    Emit(EmitArgs),
    /// Print the op counts of every kernel.
    Stats(StatsArgs),
    /// Derive a built-in spacetime and integrate a few geodesics through it.
    Demo(DemoArgs),
    /// Trace one light ray per pixel of a pinhole camera: shadow, lensed disk and sky.
    Render(crate::commands::render::RenderArgs),
    /// Circular orbits (innermost stable, photon, angular velocity) as a parameter varies.
    Survey(crate::commands::survey::SurveyArgs),
}

/// Which metric of which file.
#[derive(Debug, Args)]
pub struct MetricFile {
    /// The metric file (`.gk`); `-` reads standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    /// The metric to use when the file declares several.
    #[arg(long, value_name = "NAME")]
    pub metric: Option<String>,
    /// Also derive the curvature kernels (Riemann, Ricci, Ricci scalar, Einstein,
    /// Kretschmann, geodesic deviation), as `options: [curvature]` in the file would.
    #[arg(long)]
    pub curvature: bool,
}

/// Which evaluator runs the kernels.
#[derive(Debug, Args)]
pub struct EvaluatorChoice {
    /// `native` (compiled to machine code), `tape` (interpreted), or `auto`: native where
    /// this machine has a code generator, each kernel compiled when first run (`eval`, which
    /// runs each kernel once, interprets). Both give the same bits.
    #[arg(long, value_name = "KIND", default_value = "auto", value_parser = evaluator)]
    pub evaluator: Evaluator,
}

/// Output format.
#[derive(Debug, Args)]
pub struct Format {
    /// Print one JSON object on stdout instead of a report.
    #[arg(long)]
    pub json: bool,
}

/// `geokern check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    #[command(flatten)]
    pub source: MetricFile,
    #[command(flatten)]
    pub format: Format,
}

/// `geokern stats`.
#[derive(Debug, Args)]
pub struct StatsArgs {
    #[command(flatten)]
    pub source: MetricFile,
    #[command(flatten)]
    pub format: Format,
}

/// `geokern eval`.
#[derive(Debug, Args)]
pub struct EvalArgs {
    #[command(flatten)]
    pub source: MetricFile,
    /// A parameter value, `NAME=VALUE` (repeat for each parameter).
    #[arg(long = "param", value_name = "NAME=VALUE")]
    pub params: Vec<String>,
    /// The point, one comma-separated entry per coordinate (`pi/2` and the like allowed).
    #[arg(long, value_name = "X0,X1,..", allow_hyphen_values = true)]
    pub x: String,
    /// A velocity: adds the geodesic acceleration, the norm g(u,u), the conserved momenta and
    /// the invariants.
    #[arg(long, value_name = "U0,U1,..", allow_hyphen_values = true)]
    pub u: Option<String>,
    /// A covariant momentum: adds Hamilton's equations (dx/dλ, dp/dλ).
    #[arg(long, value_name = "P0,P1,..", allow_hyphen_values = true)]
    pub p: Option<String>,
    #[command(flatten)]
    pub evaluator: EvaluatorChoice,
    #[command(flatten)]
    pub format: Format,
}

/// `geokern trace`.
#[derive(Debug, Args)]
pub struct TraceArgs {
    #[command(flatten)]
    pub source: MetricFile,
    /// A parameter value, `NAME=VALUE` (repeat for each parameter).
    #[arg(long = "param", value_name = "NAME=VALUE")]
    pub params: Vec<String>,
    /// The starting point, one comma-separated entry per coordinate.
    #[arg(long, value_name = "X0,X1,..", allow_hyphen_values = true)]
    pub x: String,
    /// The starting velocity dx/dλ.
    #[arg(long, value_name = "U0,U1,..", allow_hyphen_values = true)]
    pub u: String,
    /// Where to end: the affine parameter λ (negative integrates backwards).
    #[arg(long, value_name = "L", allow_hyphen_values = true, value_parser = finite)]
    pub lambda: f64,
    /// The integrator: rk4 (fixed step), dp54 and dp853 (adaptive Dormand-Prince pairs),
    /// gl4 and gl6 (symplectic Gauss-Legendre, fixed step).
    #[arg(long, value_name = "METHOD", default_value = "dp853", value_parser = method)]
    pub method: Method,
    /// Relative tolerance of the adaptive methods.
    #[arg(long, value_name = "TOL", default_value_t = 1e-9, value_parser = finite)]
    pub rtol: f64,
    /// Absolute tolerance of the adaptive methods.
    #[arg(long, value_name = "TOL", default_value_t = 1e-12, value_parser = finite)]
    pub atol: f64,
    /// Budget of step attempts (accepted plus rejected).
    #[arg(long, value_name = "N", default_value_t = 100_000)]
    pub max_steps: usize,
    /// Step size: the constant step of rk4, gl4 and gl6, the first step of dp54 and dp853
    /// (default: chosen from the tolerances).
    #[arg(long, value_name = "H", value_parser = finite)]
    pub step: Option<f64>,
    /// Stop when a coordinate falls below a value, as `r=2.05` (repeatable).
    #[arg(long, value_name = "COORD=VALUE", allow_hyphen_values = true)]
    pub stop_below: Vec<String>,
    /// Stop when a coordinate rises above a value, as `r=100` (repeatable).
    #[arg(long, value_name = "COORD=VALUE", allow_hyphen_values = true)]
    pub stop_above: Vec<String>,
    /// Project the velocity back onto the mass shell after every step: off, timelike
    /// (g(u,u) = -1), null (g(u,u) = 0) or initial (its starting value).
    #[arg(long, value_name = "KIND", default_value = "off", value_parser = projection)]
    pub projection: Projection,
    /// Draw the orbit, projected onto a plane, into an image (`.svg` or `.png`).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    #[command(flatten)]
    pub evaluator: EvaluatorChoice,
    #[command(flatten)]
    pub format: Format,
}

/// `geokern emit`.
#[derive(Debug, Args)]
pub struct EmitArgs {
    #[command(flatten)]
    pub source: MetricFile,
    /// The target language (`rust`; see the error for what else is available).
    #[arg(long, value_name = "LANG")]
    pub lang: String,
    #[command(flatten)]
    pub format: Format,
}

/// `geokern demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Print the scenario's metric file and exit.
    #[arg(long)]
    pub show_metric: bool,
    #[command(flatten)]
    pub evaluator: EvaluatorChoice,
    #[command(flatten)]
    pub format: Format,
}

fn finite(text: &str) -> Result<f64, String> {
    crate::source::parse_number(text).ok_or_else(|| format!("`{text}` is not a finite number"))
}

fn method(text: &str) -> Result<Method, String> {
    Method::from_name(text).ok_or_else(|| {
        let names: Vec<&str> = Method::ALL.iter().map(|m| m.name()).collect();
        format!(
            "unknown method `{text}`; choose one of {}",
            names.join(", ")
        )
    })
}

fn evaluator(text: &str) -> Result<Evaluator, String> {
    Evaluator::from_name(text).ok_or_else(|| {
        let names: Vec<&str> = Evaluator::NAMES.iter().map(|(n, _)| *n).collect();
        format!(
            "unknown evaluator `{text}`; choose one of {}",
            names.join(", ")
        )
    })
}

fn projection(text: &str) -> Result<Projection, String> {
    match text.to_ascii_lowercase().as_str() {
        "off" => Ok(Projection::Off),
        "timelike" => Ok(Projection::Timelike),
        "null" => Ok(Projection::Null),
        "initial" => Ok(Projection::Initial),
        _ => Err(format!(
            "unknown projection `{text}`; choose one of off, timelike, null, initial"
        )),
    }
}
