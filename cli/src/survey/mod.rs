//! Circular orbits of stationary, axisymmetric metrics, found from their own kernels.
//!
//! For a metric in coordinates (t, r, θ, φ) that depends on neither t nor φ, a circular
//! orbit in the equatorial plane θ = π/2 has velocity u = u^t (1, 0, 0, Ω). It is a geodesic
//! when the lowered acceleration vanishes; with ∂_t g = ∂_φ g = 0 and, on a plane of
//! reflection symmetry, ∂_θ g = 0, that leaves the radial condition
//!
//! ∂_r g_tt + 2 Ω ∂_r g_tφ + Ω² ∂_r g_φφ = 0,
//!
//! a quadratic with one root for each sense of rotation (Bardeen, Press and Teukolsky,
//! ApJ 178 (1972) 347, sec. II, written for Kerr; the derivation above holds for any such
//! metric, common practice). Along each root:
//!
//! - u^t = 1/sqrt(−k·k) with k·k = g_tt + 2Ω g_tφ + Ω² g_φφ; E = −u_t = −(g_tt + Ω g_tφ) u^t
//!   and L = u_φ = (g_tφ + Ω g_φφ) u^t per unit mass;
//! - a circular photon orbit is where k·k = 0 (the orbit turns null): inside it no timelike
//!   circular orbit exists;
//! - the innermost stable circular orbit is where dE/dr = 0 (marginal stability against
//!   radial perturbations; E and L are stationary together since dE = Ω dL, common practice).
//!
//! g_tt, g_tφ, g_φφ and their first and second r-derivatives come from one kernel program
//! derived exactly by the symbolic engine (not by finite differences); dE/dr is carried
//! through the formulas above with the runtime's dual numbers (`geokern_runtime::Dual<1>`,
//! the radius as the one variable), and each root is refined with Brent's method to a few
//! ulps.
//!
//! Which root is prograde: the one turning in the sense of the frame dragging
//! ω = −g_tφ/g_φφ (measured far out, at the outer end of the range searched), and the one
//! with Ω > 0 when the metric is static (g_tφ = 0 there).
//!
//! ```
//! use geokern_cli::survey::{analyse, Equatorial, Search};
//! use geokern_cli::{source, tape_metric::TapeSet};
//!
//! let text = b"struct Schwarzschild { coords: [t, r, theta, phi], params: [m],
//!     g[t, t] = -(1 - 2 * m / r); g[r, r] = 1 / (1 - 2 * m / r);
//!     g[theta, theta] = r.powi(2); g[phi, phi] = (r * theta.sin()).powi(2); }";
//! let loaded = source::load_bytes("s.gk", text, None).unwrap();
//! let file = source::parse_bytes("s.gk", text).unwrap();
//! let equatorial = Equatorial::new(&file.metrics[0], &loaded.kernels).unwrap();
//! let set = TapeSet::new(&loaded.kernels, &[1.0]).unwrap();
//! let search = Search { low: 1e-3, high: 1e4, radius: None };
//! let found = analyse(&equatorial, &set, &[1.0], &search).unwrap();
//! // 6M and 3M (common practice).
//! assert!((found.isco.prograde.unwrap().radius - 6.0).abs() < 1e-12);
//! assert!((found.photon_orbit.retrograde.unwrap() - 3.0).abs() < 1e-12);
//! ```

pub mod roots;

use geokern_symbolic::expr::ExprId;
use geokern_symbolic::kernels::KernelSet;
use geokern_symbolic::model;
use geokern_symbolic::parse::ast::MetricDecl;
use geokern_symbolic::program::{lower, KernelKind, OpCounts};

use crate::error::CliError;
use crate::horizon::horizons;
use crate::tape::{Inputs, Registers, Tape};
use crate::tape_metric::TapeSet;
use geokern_runtime::{Dual as Dual1, Scalar};

/// A value and its derivative with respect to the radius.
type Dual = Dual1<1>;

/// The value `value` whose derivative with respect to the radius is `slope`.
fn radial(value: f64, slope: f64) -> Dual {
    Dual1 {
        value,
        gradient: [slope],
    }
}
use roots::{geometric_grid, outermost_crossing, Crossing};

/// Points of the scan for sign changes: a ratio of about 0.25% between neighbours over
/// 1e-3..1e4, fine enough to separate a photon orbit from a horizon 2% inside it.
const GRID: usize = 6000;

/// Largest |∂_θ g| allowed on the equatorial plane, relative to the size of g and r ∂_r g,
/// for the plane to count as a plane of reflection symmetry (rounding of cos(π/2) ≈ 6e-17
/// leaves far less).
const SYMMETRY_TOLERANCE: f64 = 1e-9;

/// The two senses of rotation.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Sense {
    /// Turning with the frame dragging.
    Prograde,
    /// Turning against it.
    Retrograde,
}

impl Sense {
    /// Both, prograde first.
    pub const BOTH: [Sense; 2] = [Sense::Prograde, Sense::Retrograde];

    /// `prograde` or `retrograde`.
    pub fn name(self) -> &'static str {
        match self {
            Sense::Prograde => "prograde",
            Sense::Retrograde => "retrograde",
        }
    }
}

/// One value for each sense of rotation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PerSense<T> {
    /// With the frame dragging.
    pub prograde: T,
    /// Against it.
    pub retrograde: T,
}

impl<T> PerSense<T> {
    /// Builds both values from a function of the sense.
    pub fn from_fn(mut f: impl FnMut(Sense) -> T) -> PerSense<T> {
        PerSense {
            prograde: f(Sense::Prograde),
            retrograde: f(Sense::Retrograde),
        }
    }

    /// The value for one sense.
    pub fn get(&self, sense: Sense) -> &T {
        match sense {
            Sense::Prograde => &self.prograde,
            Sense::Retrograde => &self.retrograde,
        }
    }
}

/// g_tt, g_tφ, g_φφ at one equatorial radius, with their derivatives.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Sample {
    /// The radius.
    pub r: f64,
    /// (g_tt, g_tφ, g_φφ).
    pub g: [f64; 3],
    /// Their first r-derivatives.
    pub dg: [f64; 3],
    /// Their second r-derivatives.
    pub d2g: [f64; 3],
    /// Their θ-derivatives (zero on a plane of reflection symmetry).
    pub dtheta: [f64; 3],
}

/// The circular geodesic of one sense at one radius, with first r-derivatives.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Circular {
    /// Angular velocity Ω = dφ/dt.
    pub omega: Dual,
    /// k·k for k = ∂_t + Ω ∂_φ: negative for a timelike orbit, zero for a photon orbit.
    pub norm: Dual,
    /// Energy per unit mass E = −u_t (NaN unless timelike).
    pub energy: Dual,
    /// Angular momentum per unit mass L = u_φ (NaN unless timelike).
    pub angular_momentum: Dual,
}

/// The orbit quantities of `s` for the root of the radial condition turning in `sense`,
/// where `dragging` (+1 or −1) is the sign of Ω for prograde orbits. `None` where the
/// condition has no real root.
pub fn circular(s: &Sample, sense: Sense, dragging: f64) -> Option<Circular> {
    let g = |k: usize| radial(s.g[k], s.dg[k]);
    let dg = |k: usize| radial(s.dg[k], s.d2g[k]);
    let (c, b, a) = (dg(0), dg(1), dg(2));
    // A Ω² + 2 B Ω + C = 0.
    let disc = b * b - a * c;
    if disc.value.is_nan() || disc.value < 0.0 {
        return None;
    }
    let root = disc.sqrt();
    // The root formula without cancellation (common practice): q = −(B + sgn(B) sqrt(D)),
    // Ω = q / A and C / q.
    let q = if b.value >= 0.0 {
        -(b + root)
    } else {
        root - b
    };
    let one = q / a;
    let other = c / q;
    let candidates: Vec<Dual> = [one, other]
        .into_iter()
        .filter(|w| w.value.is_finite() && w.gradient[0].is_finite())
        .collect();
    let (high, low) = match candidates.as_slice() {
        [x, y] if x.value >= y.value => (*x, *y),
        [x, y] => (*y, *x),
        [x] => (*x, *x),
        _ => return None,
    };
    let omega = match (sense, dragging >= 0.0) {
        (Sense::Prograde, true) | (Sense::Retrograde, false) => high,
        _ => low,
    };
    let two = Dual::constant(2.0);
    let norm = g(0) + two * omega * g(1) + omega * omega * g(2);
    let (energy, angular_momentum) = if norm.value < 0.0 {
        let ut = Dual::constant(1.0) / (-norm).sqrt();
        (-((g(0) + omega * g(1)) * ut), (g(1) + omega * g(2)) * ut)
    } else {
        let nan = Dual::constant(f64::NAN);
        (nan, nan)
    };
    Some(Circular {
        omega,
        norm,
        energy,
        angular_momentum,
    })
}

/// The equatorial derivatives of one metric, compiled on a tape.
#[derive(Clone, Debug)]
pub struct Equatorial {
    tape: Tape,
    ops: OpCounts,
    /// The metric's name.
    pub name: String,
    /// Its coordinate names.
    pub coords: Vec<String>,
}

impl Equatorial {
    /// Builds, for the declaration `decl` (whose kernels are `kernels`), the program of
    /// g_tt, g_tφ, g_φφ with their first and second ∂_r and their ∂_θ. Fails with
    /// [`CliError::Unsuited`] unless the metric has four coordinates of which the first
    /// and the last are cyclic, as (t, r, θ, φ) of a stationary, axisymmetric metric.
    pub fn new(decl: &MetricDecl, kernels: &KernelSet) -> Result<Equatorial, CliError> {
        check_symmetries(kernels)?;
        let mut model = model::build_model(decl).map_err(|d| CliError::Declaration {
            rendered: d.render(&kernels.name),
        })?;
        let r = model.coord(1);
        let theta = model.coord(2);
        let components = [model.metric[0][0], model.metric[0][3], model.metric[3][3]];
        let store = &mut model.store;
        let first: Vec<ExprId> = components.iter().map(|&c| store.diff(c, r)).collect();
        let second: Vec<ExprId> = first.iter().map(|&c| store.diff(c, r)).collect();
        let angular: Vec<ExprId> = components.iter().map(|&c| store.diff(c, theta)).collect();
        let outputs: Vec<ExprId> = components
            .iter()
            .chain(&first)
            .chain(&second)
            .chain(&angular)
            .copied()
            .collect();
        let program = lower(&model.store, KernelKind::Metric, 4, &outputs, vec![4, 3]);
        let tape = Tape::compile(&program, model.params.len())?;
        Ok(Equatorial {
            tape,
            ops: program.op_counts(),
            name: kernels.name.clone(),
            coords: kernels.coords.clone(),
        })
    }

    /// Operation counts of the derivative program.
    pub fn op_counts(&self) -> OpCounts {
        self.ops
    }

    /// An evaluator at parameter values `params` (declared order).
    pub fn at(&self, params: &[f64]) -> Evaluator<'_> {
        Evaluator {
            tape: &self.tape,
            registers: self.tape.registers(params),
        }
    }
}

/// Why a metric is not one `survey` can work on, or `Ok`.
fn check_symmetries(kernels: &KernelSet) -> Result<(), CliError> {
    let coords = &kernels.coords;
    let cyclic: Vec<&str> = kernels.cyclic.iter().map(|&k| coords[k].as_str()).collect();
    let needs = "circular orbits need a stationary, axisymmetric metric in coordinates ordered \
                 (time, radius, polar angle, azimuth), independent of the first and the last";
    if coords.len() != 4 {
        return Err(CliError::Unsuited(format!(
            "`{}` has {} coordinates ({}); {needs}",
            kernels.name,
            coords.len(),
            coords.join(", ")
        )));
    }
    let missing: Vec<&str> = [0, 3]
        .iter()
        .filter(|k| !kernels.cyclic.contains(k))
        .map(|&k| coords[k].as_str())
        .collect();
    if !missing.is_empty() {
        return Err(CliError::Unsuited(format!(
            "`{}` in coordinates ({}) depends on {}; {needs} (its metric is independent of {})",
            kernels.name,
            coords.join(", "),
            missing.join(" and "),
            if cyclic.is_empty() {
                "none of them".to_string()
            } else {
                cyclic.join(", ")
            }
        )));
    }
    Ok(())
}

/// The derivative program with its register file, at fixed parameters.
#[derive(Debug)]
pub struct Evaluator<'a> {
    tape: &'a Tape,
    registers: Registers,
}

impl Evaluator<'_> {
    /// The sample at radius `r` on the equator θ = π/2.
    pub fn sample(&mut self, r: f64) -> Sample {
        let mut out = [f64::NAN; 12];
        let x = [0.0, r, std::f64::consts::FRAC_PI_2, 0.0];
        self.tape.eval(
            &mut self.registers,
            &Inputs {
                x: &x,
                ..Inputs::default()
            },
            &mut out,
        );
        let row = |k: usize| [out[3 * k], out[3 * k + 1], out[3 * k + 2]];
        Sample {
            r,
            g: row(0),
            dg: row(1),
            d2g: row(2),
            dtheta: row(3),
        }
    }
}

/// Where to look.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Search {
    /// The smallest radius searched when the metric has no horizon in range.
    pub low: f64,
    /// The largest radius searched.
    pub high: f64,
    /// A radius at which to report Ω, if any.
    pub radius: Option<f64>,
}

/// The innermost stable circular orbit of one sense.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Orbit {
    /// Its radius.
    pub radius: f64,
    /// Its angular velocity dφ/dt.
    pub omega: f64,
    /// Energy per unit mass.
    pub energy: f64,
    /// Angular momentum per unit mass.
    pub angular_momentum: f64,
}

/// The circular orbits of one metric at one set of parameter values.
#[derive(Clone, Debug, PartialEq)]
pub struct Analysis {
    /// The outermost horizon found in the range, if any.
    pub horizon: Option<f64>,
    /// The radii searched: from just outside the outer horizon (else `Search::low`) to
    /// `Search::high`.
    pub range: (f64, f64),
    /// The sign of Ω of prograde orbits.
    pub dragging: f64,
    /// The outermost circular photon orbit of each sense.
    pub photon_orbit: PerSense<Option<f64>>,
    /// The innermost stable circular orbit of each sense.
    pub isco: PerSense<Option<Orbit>>,
    /// Ω of the timelike circular orbit of each sense at `Search::radius`.
    pub omega: Option<PerSense<Option<f64>>>,
}

/// Finds the circular orbits of the metric of `equatorial` at parameter values `params`;
/// `set` holds the same metric's kernels (for the horizon) and has any parameter values:
/// they are replaced by `params`.
pub fn analyse(
    equatorial: &Equatorial,
    set: &TapeSet,
    params: &[f64],
    search: &Search,
) -> Result<Analysis, CliError> {
    if !(search.low > 0.0 && search.high > search.low && search.high.is_finite()) {
        return Err(CliError::usage(format!(
            "the search range must satisfy 0 < low < high, got {}..{}",
            search.low, search.high
        )));
    }
    let mut set = set.clone();
    set.params = params.to_vec();
    let equator = [0.0, 0.0, std::f64::consts::FRAC_PI_2, 0.0];
    let horizon = horizons(&set, 1, &equator, search.low, search.high)
        .first()
        .copied();
    // A hair outside the horizon, where g^rr has its outer sign.
    let low = horizon.map_or(search.low, |h| h * (1.0 + 1e-9));
    let high = search.high;
    let mut eval = equatorial.at(params);
    if low >= high {
        return Ok(Analysis {
            horizon,
            range: (low, high),
            dragging: 1.0,
            photon_orbit: PerSense::from_fn(|_| None),
            isco: PerSense::from_fn(|_| None),
            omega: search.radius.map(|_| PerSense::from_fn(|_| None)),
        });
    }
    let grid = geometric_grid(low, high, GRID);
    let samples: Vec<Sample> = grid.iter().map(|&r| eval.sample(r)).collect();
    check_reflection(equatorial, &samples)?;
    let far = samples[samples.len() - 1];
    let omega_far = -far.g[1] / far.g[2];
    let dragging = if omega_far < 0.0 { -1.0 } else { 1.0 };

    let mut photon_orbit = PerSense::from_fn(|_| None);
    let mut isco = PerSense::from_fn(|_| None);
    for sense in Sense::BOTH {
        let norm = |s: &Sample| circular(s, sense, dragging).map_or(f64::NAN, |c| c.norm.value);
        let values: Vec<f64> = samples.iter().map(norm).collect();
        let mut f = |r: f64| norm(&eval.sample(r));
        let photon = outermost_crossing(&mut f, &grid, &values, Crossing::Falling);
        let slope =
            |s: &Sample| circular(s, sense, dragging).map_or(f64::NAN, |c| c.energy.gradient[0]);
        // Stable orbits lie outside the photon orbit, where timelike orbits exist at all.
        let values: Vec<f64> = samples
            .iter()
            .map(|s| match photon {
                Some(p) if s.r <= p => f64::NAN,
                _ => slope(s),
            })
            .collect();
        let mut f = |r: f64| slope(&eval.sample(r));
        let marginal = outermost_crossing(&mut f, &grid, &values, Crossing::Rising);
        let orbit = marginal.and_then(|radius| {
            let c = circular(&eval.sample(radius), sense, dragging)?;
            Some(Orbit {
                radius,
                omega: c.omega.value,
                energy: c.energy.value,
                angular_momentum: c.angular_momentum.value,
            })
        });
        match sense {
            Sense::Prograde => {
                photon_orbit.prograde = photon;
                isco.prograde = orbit;
            }
            Sense::Retrograde => {
                photon_orbit.retrograde = photon;
                isco.retrograde = orbit;
            }
        }
    }
    let omega = search.radius.map(|radius| {
        let outside = radius > horizon.unwrap_or(0.0) && radius > 0.0;
        let s = eval.sample(radius);
        PerSense::from_fn(|sense| {
            let c = circular(&s, sense, dragging)?;
            (outside && c.norm.value < 0.0).then_some(c.omega.value)
        })
    });
    Ok(Analysis {
        horizon,
        range: (low, high),
        dragging,
        photon_orbit,
        isco,
        omega,
    })
}

/// Fails unless ∂_θ g_tt, ∂_θ g_tφ and ∂_θ g_φφ vanish on the equator at every sample: off
/// a plane of reflection symmetry, the equatorial circles are not geodesics.
fn check_reflection(equatorial: &Equatorial, samples: &[Sample]) -> Result<(), CliError> {
    for s in samples.iter().step_by(97) {
        let scale = (0..3)
            .map(|k| s.g[k].abs() + (s.r * s.dg[k]).abs())
            .filter(|v| v.is_finite())
            .fold(0.0, f64::max);
        let worst = (0..3)
            .map(|k| (k, s.dtheta[k].abs()))
            .filter(|(_, v)| v.is_finite())
            .fold((0, 0.0), |a, b| if b.1 > a.1 { b } else { a });
        if worst.1 > SYMMETRY_TOLERANCE * scale {
            let c = &equatorial.coords;
            let names = [
                format!("{}{}", c[0], c[0]),
                format!("{}{}", c[0], c[3]),
                format!("{}{}", c[3], c[3]),
            ];
            return Err(CliError::Unsuited(format!(
                "the plane {} = π/2 of `{}` is not a plane of reflection symmetry \
                 (∂_{} g_{} = {:e} at {} = {}), so its circles are not geodesics",
                c[2], equatorial.name, c[2], names[worst.0], s.dtheta[worst.0], c[1], s.r
            )));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Schwarzschild in the form circular() sees at r, m = 1: g_tt = −(1 − 2/r),
    /// g_φφ = r², E = (1 − 2/r)/sqrt(1 − 3/r) (common practice).
    #[test]
    fn schwarzschild_energy_and_its_slope() {
        let r: f64 = 8.0;
        let s = Sample {
            r,
            g: [-(1.0 - 2.0 / r), 0.0, r * r],
            dg: [-2.0 / (r * r), 0.0, 2.0 * r],
            d2g: [4.0 / (r * r * r), 0.0, 2.0],
            dtheta: [0.0; 3],
        };
        let pro = circular(&s, Sense::Prograde, 1.0).expect("real");
        let retro = circular(&s, Sense::Retrograde, 1.0).expect("real");
        let want = r.powf(-1.5);
        assert!((pro.omega.value - want).abs() < 1e-15);
        assert!((retro.omega.value + want).abs() < 1e-15);
        let e = |r: f64| (1.0 - 2.0 / r) / (1.0 - 3.0 / r).sqrt();
        assert!((pro.energy.value - e(r)).abs() < 1e-15);
        let h = 1e-5;
        let slope = (e(r + h) - e(r - h)) / (2.0 * h);
        assert!(
            (pro.energy.gradient[0] - slope).abs() < 1e-9,
            "{} {slope}",
            pro.energy.gradient[0]
        );
    }
}
