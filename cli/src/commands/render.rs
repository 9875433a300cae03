//! `geokern render FILE`: one light ray per pixel of a pinhole camera.
//!
//! The built-in scene `--scene vesper` renders the demo's spacetime (Vesper, a charged
//! spinning hole, `examples/metrics/vesper.gk`) with its thin disk, from r = 50 at 75°.

use std::fmt::Write;
use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{Duration, Instant};

use clap::Args;
use serde_json::{json, Value};

use crate::error::CliError;
use crate::progress::Progress;
use crate::render::{
    self, shading, DiskChoice, Equations, RayCounts, Rendered, Scene, SceneOptions, LANES,
};
use crate::{json, report, source};

/// `geokern render`.
#[derive(Debug, Args)]
#[command(
    after_help = "Traces each pixel's light ray backwards and writes a PNG: the shadow (black), \
    a thin equatorial disk coloured by the redshift of its circular-orbit emitters, and a \
    checkered sky lensed around the hole.\n\n\
    Scope: 4-dimensional metrics with coordinates ordered (time, radius, polar angle, azimuth), \
    flat far away, like Boyer-Lindquist, with a horizon; others are refused. Radii are \
    coordinate radii; M is the mass read off the far field (g_tt -> -(1 - 2M/r)).\n\n\
    Built-in scene: --scene vesper renders the demo's charged spinning hole (m = 1, a = 0.6, \
    q = 0.4) from r = 50 at 75 degrees with a disk from 5 to 16, without a FILE."
)]
pub struct RenderArgs {
    /// The metric file (`.gk`; `-` reads standard input); omit it with --scene.
    #[arg(
        value_name = "FILE",
        required_unless_present = "scene",
        conflicts_with = "scene"
    )]
    pub file: Option<PathBuf>,
    /// A built-in scene instead of a file: `vesper`.
    #[arg(long, value_name = "NAME", value_parser = scene_name)]
    pub scene: Option<String>,
    /// The metric to use when the file declares several.
    #[arg(long, value_name = "NAME")]
    pub metric: Option<String>,
    /// A parameter value, `NAME=VALUE` (repeat for each parameter).
    #[arg(long = "param", value_name = "NAME=VALUE")]
    pub params: Vec<String>,
    /// The PNG file to write.
    #[arg(long, short = 'o', value_name = "FILE")]
    pub output: PathBuf,
    /// Image size in pixels.
    #[arg(long, value_name = "WxH", default_value = "512x512", value_parser = size)]
    pub size: (usize, usize),
    /// Coordinate radius of the camera [default: 60 M].
    #[arg(long, value_name = "R", value_parser = finite)]
    pub distance: Option<f64>,
    /// The camera's angle from the polar axis θ = 0, in degrees [default: 80].
    #[arg(long, value_name = "DEG", value_parser = finite)]
    pub inclination: Option<f64>,
    /// Horizontal field of view in degrees [default: the disk, or the shadow, with a margin].
    #[arg(long, value_name = "DEG", value_parser = finite)]
    pub fov: Option<f64>,
    /// The disk's inner and outer coordinate radii, or `none` [default: 6M:20M].
    #[arg(long, value_name = "RIN:ROUT", value_parser = disk)]
    pub disk: Option<DiskChoice>,
    /// Relative tolerance of the integration.
    #[arg(long, value_name = "TOL", default_value_t = 1e-6, value_parser = finite)]
    pub rtol: f64,
    /// The form of the geodesic equations: hamilton (x, p) or accel (x, u).
    #[arg(long, value_name = "FORM", default_value = "hamilton", value_parser = equations)]
    pub equations: Equations,
    /// Step attempts per ray before it counts as unresolved.
    #[arg(long, value_name = "N", default_value_t = 20_000)]
    pub max_attempts: u32,
    /// Which evaluator runs the rays.
    #[command(flatten)]
    pub evaluator: crate::args::EvaluatorChoice,
    /// Output format.
    #[command(flatten)]
    pub format: crate::args::Format,
}

/// The built-in scene's parameters, camera and disk.
const VESPER_PARAMS: [&str; 3] = ["m=1", "a=0.6", "q=0.4"];

fn finite(text: &str) -> Result<f64, String> {
    source::parse_number(text).ok_or_else(|| format!("`{text}` is not a finite number"))
}

fn scene_name(text: &str) -> Result<String, String> {
    match text {
        "vesper" => Ok(text.to_string()),
        _ => Err(format!(
            "unknown scene `{text}`; the built-in scene is vesper"
        )),
    }
}

fn size(text: &str) -> Result<(usize, usize), String> {
    let bad = || format!("`{text}` is not WIDTHxHEIGHT (as in 512x512), each 1 to 16384");
    let (w, h) = text.split_once(['x', 'X']).ok_or_else(bad)?;
    let parse = |s: &str| {
        s.trim()
            .parse::<usize>()
            .ok()
            .filter(|v| (1..=16384).contains(v))
    };
    Ok((parse(w).ok_or_else(bad)?, parse(h).ok_or_else(bad)?))
}

fn disk(text: &str) -> Result<DiskChoice, String> {
    if matches!(text.trim(), "none" | "off") {
        return Ok(DiskChoice::Off);
    }
    let bad = || format!("`{text}` is not RIN:ROUT (as in 6:20) or none");
    let (a, b) = text.split_once(':').ok_or_else(bad)?;
    let inner = source::parse_number(a).ok_or_else(bad)?;
    let outer = source::parse_number(b).ok_or_else(bad)?;
    if !(inner > 0.0 && outer > inner) {
        return Err(format!(
            "`{text}`: the radii must be positive and the inner below the outer"
        ));
    }
    Ok(DiskChoice::Range(inner, outer))
}

fn equations(text: &str) -> Result<Equations, String> {
    Equations::from_name(text)
        .ok_or_else(|| format!("unknown form `{text}`; choose hamilton or accel"))
}

/// Runs the command.
pub fn run(args: &RenderArgs) -> Result<String, CliError> {
    let builtin = args.scene.is_some();
    let loaded = match &args.file {
        Some(path) => source::load(path, args.metric.as_deref())?,
        None => source::load_bytes(
            "vesper.gk",
            crate::commands::demo::SOURCE.as_bytes(),
            args.metric.as_deref(),
        )?,
    };
    let ks = &loaded.kernels;
    let given: Vec<String> = if builtin && args.params.is_empty() {
        VESPER_PARAMS.iter().map(|p| p.to_string()).collect()
    } else {
        args.params.clone()
    };
    let params = source::bind_params(ks, &given)?;
    let inclination = args
        .inclination
        .unwrap_or(if builtin { 75.0 } else { 80.0 });
    if !(inclination > 0.0 && inclination < 180.0) {
        return Err(CliError::usage(
            "--inclination must lie strictly between 0 and 180 degrees",
        ));
    }
    if args.fov.is_some_and(|f| !(f > 0.0 && f < 180.0)) {
        return Err(CliError::usage(
            "--fov must lie strictly between 0 and 180 degrees",
        ));
    }
    if args.max_attempts == 0 {
        return Err(CliError::usage("--max-attempts must be positive"));
    }
    let options = SceneOptions {
        distance: args.distance.or(builtin.then_some(50.0)),
        inclination: inclination.to_radians(),
        size: args.size,
        fov: args.fov.or(builtin.then_some(55.0)).map(f64::to_radians),
        disk: args.disk.unwrap_or(if builtin {
            DiskChoice::Range(5.0, 16.0)
        } else {
            DiskChoice::Default
        }),
        rtol: args.rtol,
        equations: args.equations,
        max_attempts: args.max_attempts,
        evaluator: args.evaluator.evaluator,
    };
    let scene = Scene::new(ks, &params, &options)?;
    let progress = Progress::new(args.format.json, &format!("rendering {}", ks.name));
    let started = Instant::now();
    let rendered = run_with_progress(&scene, &progress)?;
    let elapsed = started.elapsed();
    progress.finish();
    shading::write_png(&args.output, &rendered, scene.disk.as_ref())?;
    let summary = Summary {
        scene: &scene,
        counts: &rendered.counts,
        elapsed,
        output: &args.output,
    };
    Ok(if args.format.json {
        json::to_text(&summary.to_json())
    } else {
        summary.to_text(&rendered)
    })
}

/// Renders on the worker pool while this thread keeps the progress bar moving.
fn run_with_progress(scene: &Scene, progress: &Progress) -> Result<Rendered, CliError> {
    let done = AtomicUsize::new(0);
    if !progress.enabled() {
        return render::render(scene, &done);
    }
    let total = (scene.camera.width * scene.camera.height).max(1) as f64;
    std::thread::scope(|s| {
        let worker = s.spawn(|| render::render(scene, &done));
        while !worker.is_finished() {
            progress.set_fraction(done.load(Ordering::Relaxed) as f64 / total);
            std::thread::sleep(Duration::from_millis(15));
        }
        worker
            .join()
            .unwrap_or_else(|_| Err(CliError::Unsuited("the render stopped unexpectedly".into())))
    })
}

struct Summary<'a> {
    scene: &'a Scene,
    counts: &'a RayCounts,
    elapsed: Duration,
    output: &'a std::path::Path,
}

impl Summary<'_> {
    fn per_ray(&self, n: u64) -> f64 {
        n as f64 / self.counts.rays.max(1) as f64
    }

    fn rays_per_second(&self) -> f64 {
        self.counts.rays as f64 / self.elapsed.as_secs_f64().max(1e-9)
    }

    fn lane_use(&self) -> f64 {
        self.counts.evaluations as f64 / self.counts.lane_slots.max(1) as f64
    }

    fn to_json(&self) -> Value {
        let (s, c) = (self.scene, self.counts);
        json!({
            "metric": s.name,
            "output": self.output.display().to_string(),
            "width": s.camera.width,
            "height": s.camera.height,
            "camera": {
                "r": json::number(s.camera.position[1]),
                "theta": json::number(s.camera.position[2]),
                "fov": json::number(s.camera.fov),
            },
            "mass": json::number(s.mass),
            "horizon": json::number(s.horizon),
            "disk": s.disk.map(|d| vec![json::number(d.inner), json::number(d.outer)]),
            "equations": s.equations.name(),
            "evaluator": s.evaluator_name(),
            "lanes": LANES,
            "rtol": json::number(s.rtol),
            "rays": c.rays,
            "shadow": c.shadow,
            "disk_hits": c.disk,
            "sky": c.sky,
            "unresolved": c.unresolved,
            "steps": c.steps,
            "rejected": c.rejected,
            "rhs_evaluations": c.evaluations,
            "rhs_evaluations_per_ray": json::number(self.per_ray(c.evaluations)),
            "lane_use": json::number(self.lane_use()),
            "seconds": json::number(self.elapsed.as_secs_f64()),
            "rays_per_second": json::number(self.rays_per_second()),
        })
    }

    fn to_text(&self, rendered: &Rendered) -> String {
        let (s, c) = (self.scene, self.counts);
        let percent = |n: u64| format!("{:.1}%", 100.0 * self.per_ray(n));
        let mut out = String::new();
        let _ = writeln!(
            out,
            "{}: {}×{} image written to {}",
            s.name,
            rendered.width,
            rendered.height,
            self.output.display()
        );
        let _ = writeln!(
            out,
            "  camera    static observer at r = {}, θ = {}°, field of view {}°",
            report::number(s.camera.position[1], 6),
            report::number(s.camera.position[2].to_degrees(), 6),
            report::number(s.camera.fov.to_degrees(), 4)
        );
        let _ = writeln!(
            out,
            "  hole      M = {} (far field), outer horizon r = {} (rays stop at 1.01 times it)",
            report::number(s.mass, 6),
            report::number(s.horizon, 8)
        );
        let disk = s.disk.map_or("none".to_string(), |d| {
            format!(
                "r = {} to {}, prograde circular emitters, coloured by redshift",
                report::number(d.inner, 6),
                report::number(d.outer, 6)
            )
        });
        let _ = writeln!(out, "  disk      {disk}");
        let _ = writeln!(
            out,
            "  rays      {}: {} shadow, {} disk, {} sky, {} unresolved",
            c.rays,
            percent(c.shadow),
            percent(c.disk),
            percent(c.sky),
            c.unresolved
        );
        let _ = writeln!(
            out,
            "  work      {} form ({}), Dormand-Prince 5(4) on {} lanes, rtol {}: {:.1} RHS \
             evaluations and {:.1} steps per ray ({:.1}% rejected), lanes {:.0}% busy",
            s.equations.name(),
            if s.evaluator_name() == "native" {
                "native code"
            } else {
                "lane tape"
            },
            LANES,
            report::number(s.rtol, 3),
            self.per_ray(c.evaluations),
            self.per_ray(c.steps),
            100.0 * c.rejected as f64 / (c.steps + c.rejected).max(1) as f64,
            100.0 * self.lane_use()
        );
        let _ = writeln!(
            out,
            "  time      {} ({:.0} rays/s)",
            report::duration(self.elapsed),
            self.rays_per_second()
        );
        out
    }
}
