//! What a render needs, checked and derived once: the coordinate layout, the mass read off
//! the far field, the outer horizon, the disk and its emitters, the stopping radii.

use std::f64::consts::FRAC_PI_2;

use geokern_symbolic::kernels::KernelSet;
use geokern_symbolic::program::KernelKind;

use crate::error::CliError;
use crate::horizon::horizons;
use crate::native::NativeLanes;
use crate::render::camera::Camera;
use crate::render::tracer::LANES;
use crate::tape::lanes::{LaneInputs, LaneProgram, LaneRegisters};
use crate::tape::Inputs;
use crate::tape_metric::Evaluator;
use crate::tape_metric::TapeSet;

/// Which form of the geodesic equations the rays are integrated in.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Equations {
    /// Hamilton's equations in (x^a, p_a): the momenta of cyclic coordinates stay exactly
    /// constant.
    Hamilton,
    /// The second-order form in (x^a, u^a) with the geodesic acceleration.
    Accel,
}

impl Equations {
    /// The name used on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            Equations::Hamilton => "hamilton",
            Equations::Accel => "accel",
        }
    }

    /// The form called `name`, if any.
    pub fn from_name(name: &str) -> Option<Equations> {
        match name.to_ascii_lowercase().as_str() {
            "hamilton" => Some(Equations::Hamilton),
            "accel" => Some(Equations::Accel),
            _ => None,
        }
    }
}

/// The disk asked for.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum DiskChoice {
    /// From 6 M to 20 M, with M the mass read off the far field.
    Default,
    /// No disk: shadow and sky only.
    Off,
    /// From an inner to an outer coordinate radius.
    Range(f64, f64),
}

/// Everything about a render the user chooses; [`Default`] gives the command's defaults.
#[derive(Clone, Debug)]
pub struct SceneOptions {
    /// Coordinate radius of the camera (default 60 M).
    pub distance: Option<f64>,
    /// Polar angle of the camera, radians (from the axis θ = 0).
    pub inclination: f64,
    /// Image width and height in pixels.
    pub size: (usize, usize),
    /// Horizontal field of view in radians (default: the disk, or the shadow, with a margin).
    pub fov: Option<f64>,
    /// The disk.
    pub disk: DiskChoice,
    /// Relative tolerance of the integration.
    pub rtol: f64,
    /// The form of the equations.
    pub equations: Equations,
    /// Step attempts allowed per ray before it counts as unresolved.
    pub max_attempts: u32,
    /// Which evaluator runs the rays' right-hand side (both give the same bits).
    pub evaluator: Evaluator,
}

impl Default for SceneOptions {
    fn default() -> Self {
        SceneOptions {
            distance: None,
            inclination: 80f64.to_radians(),
            size: (512, 512),
            fov: None,
            disk: DiskChoice::Default,
            rtol: 1e-6,
            equations: Equations::Hamilton,
            max_attempts: 20_000,
            evaluator: Evaluator::Auto,
        }
    }
}

/// A geometrically thin, optically thick disk in the equatorial plane.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Disk {
    /// Inner coordinate radius.
    pub inner: f64,
    /// Outer coordinate radius.
    pub outer: f64,
}

/// A checked scene, ready to trace.
#[derive(Clone, Debug)]
pub struct Scene {
    /// The metric's name.
    pub name: String,
    /// Parameter values in declared order.
    pub params: Vec<f64>,
    /// The mass M read off the far field, g_tt → −(1 − 2M/r).
    pub mass: f64,
    /// The outer horizon's coordinate radius.
    pub horizon: f64,
    /// The camera.
    pub camera: Camera,
    /// The disk, if any.
    pub disk: Option<Disk>,
    /// A ray that falls below this radius is in the shadow.
    pub stop_radius: f64,
    /// A ray beyond this radius, moving outwards, has escaped to the sky.
    pub escape_radius: f64,
    /// The form of the equations.
    pub equations: Equations,
    /// Relative tolerance.
    pub rtol: f64,
    /// Absolute tolerance.
    pub atol: f64,
    /// Step attempts allowed per ray.
    pub max_attempts: u32,
    pub(crate) rhs: LaneProgram<LANES>,
    /// The same right-hand side as machine code, when the native evaluator runs.
    pub(crate) native_rhs: Option<NativeLanes<LANES>>,
    metric: LaneProgram<1>,
    christoffel: LaneProgram<1>,
}

/// Register files for one worker: made once per job, reused for every ray of it.
pub struct Workspace {
    pub(crate) rhs: LaneRegisters<LANES>,
    metric: LaneRegisters<1>,
    christoffel: LaneRegisters<1>,
}

/// A far-field radius: any horizon or disk of interest sits far inside it.
const FAR: f64 = 1e6;

/// Where the far-field mass is read (and at twice this radius).
const MASS_RADIUS: f64 = 1e5;

/// The stated scope, repeated in every error about it.
const SCOPE: &str = "render handles 4-dimensional metrics with coordinates ordered (time, \
                     radius, polar angle, azimuth), flat far away, like Boyer-Lindquist";

fn unsuited(detail: String) -> CliError {
    CliError::Unsuited(format!("{SCOPE}; {detail}"))
}

impl Scene {
    /// Checks `kernels` (with parameter values `params`) against the renderer's scope and
    /// builds the scene `options` describe.
    pub fn new(
        kernels: &KernelSet,
        params: &[f64],
        options: &SceneOptions,
    ) -> Result<Scene, CliError> {
        let name = &kernels.name;
        if kernels.dim() != 4 {
            return Err(unsuited(format!(
                "`{name}` has {} coordinates ({})",
                kernels.dim(),
                kernels.coords.join(", ")
            )));
        }
        if !(options.rtol > 0.0 && options.rtol < 1.0) {
            return Err(CliError::usage("the tolerance must lie between 0 and 1"));
        }
        let set = TapeSet::new(kernels, params)?;
        let mass = far_field_mass(&set, name, &kernels.coords)?;
        let distance = options.distance.unwrap_or(60.0 * mass);
        if !(distance.is_finite() && distance > 0.0 && distance < FAR) {
            return Err(CliError::usage(format!(
                "the camera distance must be positive and below {FAR}"
            )));
        }
        let found = horizons(&set, 1, &[0.0, 0.0, 1.0, 0.0], 1e-3 * mass, distance);
        let horizon = *found.first().ok_or_else(|| {
            unsuited(format!(
                "`{name}` has no horizon between r = {} and the camera (g^rr never changes \
                 sign), and render draws a black hole's shadow",
                1e-3 * mass
            ))
        })?;
        if distance < 1.5 * horizon {
            return Err(CliError::usage(format!(
                "the camera (r = {distance}) must sit well outside the horizon (r = {horizon:.6})"
            )));
        }
        let disk = match options.disk {
            DiskChoice::Off => None,
            DiskChoice::Default => Some(Disk {
                inner: 6.0 * mass,
                outer: 20.0 * mass,
            }),
            DiskChoice::Range(inner, outer) => Some(Disk { inner, outer }),
        };
        if let Some(d) = disk {
            if !(d.inner.is_finite() && d.outer.is_finite() && d.inner < d.outer) {
                return Err(CliError::usage(
                    "--disk: the inner radius must be below the outer one",
                ));
            }
            if d.inner <= horizon * 1.01 {
                return Err(CliError::usage(format!(
                    "--disk: the inner radius {} must lie outside the horizon (r = {horizon:.6})",
                    d.inner
                )));
            }
        }
        let fov = options.fov.unwrap_or_else(|| {
            // Frame the disk, or a shadow of radius about 5.2 M, with a margin.
            let reach = disk.map_or(8.0 * mass, |d| 1.15 * d.outer);
            (2.0 * (reach / distance).atan()).min(150f64.to_radians())
        });
        let camera = Camera::new(&set, distance, options.inclination, options.size, fov)?;
        let rhs_kind = match options.equations {
            Equations::Hamilton => KernelKind::Hamilton,
            Equations::Accel => KernelKind::Accel,
        };
        let native_rhs = match options.evaluator {
            Evaluator::Tape => None,
            chosen => match NativeLanes::compile(kernels.program(rhs_kind), kernels.params.len()) {
                Ok(native) => Some(native),
                // `auto` takes the lane tape whenever native code cannot be had.
                Err(_) if chosen == Evaluator::Auto => None,
                Err(e) => return Err(e.into()),
            },
        };
        let lane = |kind| {
            LaneProgram::new(kernels.program(kind))
                .map_err(|e| CliError::Unsuited(format!("`{name}`: {e}")))
        };
        let scene = Scene {
            name: name.clone(),
            params: params.to_vec(),
            mass,
            horizon,
            camera,
            disk,
            stop_radius: horizon * 1.01,
            escape_radius: disk.map_or(distance, |d| d.outer.max(distance)),
            equations: options.equations,
            rtol: options.rtol,
            atol: options.rtol * 1e-2,
            max_attempts: options.max_attempts.max(1),
            rhs: LaneProgram::new(kernels.program(rhs_kind))
                .map_err(|e| CliError::Unsuited(format!("`{name}`: {e}")))?,
            native_rhs,
            metric: lane(KernelKind::Metric)?,
            christoffel: lane(KernelKind::Christoffel)?,
        };
        if let Some(d) = disk {
            scene.check_emitters(&d)?;
        }
        Ok(scene)
    }

    /// The evaluator of the rays' right-hand side: `"native"` or `"tape"`.
    pub fn evaluator_name(&self) -> &'static str {
        if self.native_rhs.is_some() {
            "native"
        } else {
            "tape"
        }
    }

    /// Fresh register files for one worker.
    pub fn workspace(&self) -> Workspace {
        Workspace {
            rhs: self.rhs.registers(&self.params),
            metric: self.metric.registers(&self.params),
            christoffel: self.christoffel.registers(&self.params),
        }
    }

    /// g_ab at `x`.
    pub fn metric_at(&self, work: &mut Workspace, x: &[f64; 4]) -> [[f64; 4]; 4] {
        let xs = x.map(|v| [v]);
        let mut out = [[0.0; 1]; 16];
        self.metric.eval(
            &mut work.metric,
            &LaneInputs {
                x: &xs,
                ..LaneInputs::default()
            },
            &mut out,
        );
        std::array::from_fn(|a| std::array::from_fn(|b| out[a * 4 + b][0]))
    }

    /// The angular velocity Ω = dφ/dt and u^t of the prograde circular equatorial geodesic at
    /// coordinate radius `radius`, or `None` where no timelike one exists.
    ///
    /// The radial geodesic equation of a circular orbit (u^r = u^θ = 0, constant r) reduces to
    /// Γ^r_tt + 2 Γ^r_tφ Ω + Γ^r_φφ Ω² = 0 (common practice), solved with the metric's own
    /// Christoffel symbols. Of the two roots, the prograde one turns the way frames are
    /// dragged, sign(Ω) = sign(−g_tφ / g_φφ), and is the positive root when nothing drags.
    /// Then g_ab u^a u^b = −1 gives u^t.
    pub fn emitter(&self, work: &mut Workspace, radius: f64) -> Option<(f64, f64)> {
        let x = [[0.0], [radius], [FRAC_PI_2], [0.0]];
        let mut gamma = [[0.0; 1]; 64];
        self.christoffel.eval(
            &mut work.christoffel,
            &LaneInputs {
                x: &x,
                ..LaneInputs::default()
            },
            &mut gamma,
        );
        let at = |a: usize, b: usize, c: usize| gamma[(a * 4 + b) * 4 + c][0];
        let (c, b, a) = (at(1, 0, 0), at(1, 0, 3), at(1, 3, 3));
        let g = self.metric_at(work, &[0.0, radius, FRAC_PI_2, 0.0]);
        let drag = -g[0][3] / g[3][3];
        let roots: Vec<f64> = if a.abs() < 1e-300 {
            if b == 0.0 {
                Vec::new()
            } else {
                vec![-c / (2.0 * b)]
            }
        } else {
            let disc = b * b - a * c;
            if disc.is_nan() || disc < 0.0 {
                return None;
            }
            let s = disc.sqrt();
            vec![(-b + s) / a, (-b - s) / a]
        };
        let prograde = |w: f64| {
            if drag != 0.0 {
                w * drag > 0.0
            } else {
                w > 0.0
            }
        };
        let omega = roots.into_iter().find(|&w| prograde(w))?;
        let norm = g[0][0] + 2.0 * g[0][3] * omega + g[3][3] * omega * omega;
        (norm < 0.0 && norm.is_finite()).then(|| (omega, 1.0 / (-norm).sqrt()))
    }

    /// Fails unless a timelike prograde circular orbit exists across the disk.
    fn check_emitters(&self, disk: &Disk) -> Result<(), CliError> {
        let mut work = self.workspace();
        const SAMPLES: usize = 33;
        for k in 0..SAMPLES {
            let r = disk.inner + (disk.outer - disk.inner) * k as f64 / (SAMPLES - 1) as f64;
            if self.emitter(&mut work, r).is_none() {
                return Err(CliError::Unsuited(format!(
                    "no timelike prograde circular orbit at r = {r} in `{}`, so the disk has \
                     no emitter there; raise the inner radius of --disk",
                    self.name
                )));
            }
        }
        Ok(())
    }
}

/// The mass M of g_tt → −(1 − 2M/r), read far out on the equator, after checking that the
/// coordinates look like (t, r, θ, φ) at r = [`FAR`]: g_tt < 0, g_rr → 1, g_θθ → r²,
/// g_φφ → r² sin²θ.
fn far_field_mass(set: &TapeSet, name: &str, coords: &[String]) -> Result<f64, CliError> {
    let theta = 1.0_f64;
    let g = set.eval(
        KernelKind::Metric,
        &Inputs {
            x: &[0.0, FAR, theta, 0.0],
            ..Inputs::default()
        },
    );
    let near = |value: f64, want: f64| (value / want - 1.0).abs() < 1e-2;
    let layout = g.len() == 16
        && g[0] < 0.0
        && near(g[5], 1.0)
        && near(g[10], FAR * FAR)
        && near(g[15], (FAR * theta.sin()).powi(2));
    if !layout {
        return Err(unsuited(format!(
            "`{name}` with coordinates ({}) does not look like that at {} = {FAR}",
            coords.join(", "),
            coords.get(1).map_or("r", String::as_str)
        )));
    }
    // M(R) = R (1 + g_tt) / 2 = M + O(1/R); two radii cancel the O(1/R) term (Richardson
    // extrapolation, common practice), as from a charge's q²/r² in g_tt.
    let reading = |radius: f64| {
        let g_tt = set.eval(
            KernelKind::Metric,
            &Inputs {
                x: &[0.0, radius, FRAC_PI_2, 0.0],
                ..Inputs::default()
            },
        )[0];
        0.5 * radius * (1.0 + g_tt)
    };
    let raw = 2.0 * reading(2.0 * MASS_RADIUS) - reading(MASS_RADIUS);
    // The reading carries rounding noise of about 1e-11 (the 1 + g_tt cancellation) and
    // O(1/R²) terms of about 1e-10: nine significant digits are what it knows.
    let mass = if raw.is_finite() && raw > 0.0 {
        let scale = 10f64.powi(8 - raw.log10().floor() as i32);
        (raw * scale).round() / scale
    } else {
        raw
    };
    if !(mass.is_finite() && mass > 0.0 && mass < 1e-3 * FAR) {
        return Err(CliError::Unsuited(format!(
            "cannot read a positive mass from the far field of `{name}` (g_tt → −(1 − 2M/r)), \
             and render draws black holes"
        )));
    }
    Ok(mass)
}
