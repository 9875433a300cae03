//! Rays integrated [`LANES`] at a time: the Dormand-Prince 5(4) pair on the lane evaluator.
//!
//! Every lane carries one ray with its own step size, error estimate and accept/reject
//! decision; the kernel is evaluated on all lanes at once, so its dispatch is shared. A lane
//! whose ray has finished (shadow, disk, sky, or out of budget) takes the next pixel of the
//! job at once, so lanes stay busy while rays of very different lengths run side by side; an
//! idle lane (at a job's end) rests on a harmless point with a zero step. Each ray's
//! arithmetic touches only its own lane, so its result does not depend on its neighbours.

use std::f64::consts::{FRAC_PI_2, PI, TAU};

use geokern_runtime::tableau::{
    coefficients_to_f64, DORMAND_PRINCE_54, DORMAND_PRINCE_54_EMBEDDED,
};

use crate::error::CliError;
use crate::render::scene::{Equations, Scene, Workspace};
use crate::tape::lanes::{LaneInputs, LaneRegisters};

/// Rays advanced together. Each instruction of the kernel runs on all lanes in one loop, so
/// the interpreter's dispatch is shared by this many rays; 16 was measured fastest on the
/// Kerr image (against 4, 8 and 32: wider files of registers leave the first-level cache).
pub const LANES: usize = 16;

/// State size: position and momentum (or velocity).
const D: usize = 8;
/// Stages of the pair; the last is evaluated at the new point and reused ("first same as
/// last").
const STAGES: usize = 7;

/// What the ray through one pixel met, followed backwards from the camera.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Hit {
    /// It fell towards the horizon.
    Shadow,
    /// It crossed the equatorial plane within the disk.
    Disk {
        /// Coordinate radius of the crossing.
        radius: f64,
        /// Azimuth of the crossing.
        phi: f64,
        /// Redshift factor g = ν_observed / ν_emitted of light from the disk's circular-orbit
        /// emitter there (NaN where no such emitter exists).
        redshift: f64,
    },
    /// It escaped beyond the camera (and the disk), moving outwards.
    Sky {
        /// Polar angle of the direction it left in, in [0, π].
        theta: f64,
        /// Azimuth of the direction it left in, in [0, 2π).
        phi: f64,
    },
    /// It ran out of step attempts, its step size collapsed, or the state became
    /// non-finite.
    Unresolved,
}

/// Counters of a render.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct RayCounts {
    /// Rays traced.
    pub rays: u64,
    /// Right-hand-side evaluations spent on live rays (one per lane per kernel call).
    pub evaluations: u64,
    /// Lane slots evaluated in all (live or idle): `LANES` per kernel call.
    pub lane_slots: u64,
    /// Accepted steps.
    pub steps: u64,
    /// Rejected steps.
    pub rejected: u64,
    /// Rays in the shadow.
    pub shadow: u64,
    /// Rays that hit the disk.
    pub disk: u64,
    /// Rays that reached the sky.
    pub sky: u64,
    /// Rays left unresolved.
    pub unresolved: u64,
}

impl RayCounts {
    /// Adds `other`'s counters to these.
    pub fn add(&mut self, other: &RayCounts) {
        self.rays += other.rays;
        self.evaluations += other.evaluations;
        self.lane_slots += other.lane_slots;
        self.steps += other.steps;
        self.rejected += other.rejected;
        self.shadow += other.shadow;
        self.disk += other.disk;
        self.sky += other.sky;
        self.unresolved += other.unresolved;
    }

    fn record(&mut self, hit: &Hit) {
        self.rays += 1;
        match hit {
            Hit::Shadow => self.shadow += 1,
            Hit::Disk { .. } => self.disk += 1,
            Hit::Sky { .. } => self.sky += 1,
            Hit::Unresolved => self.unresolved += 1,
        }
    }
}

/// The Dormand-Prince 5(4) coefficients in f64 (Dormand & Prince, J. Comput. Appl. Math. 6
/// (1980) 19-26), taken from the runtime's exact tableau.
struct Pair {
    a: [[f64; STAGES]; STAGES],
    /// Fifth-order weights minus fourth-order weights: the error estimate's weights.
    e: [f64; STAGES],
}

impl Pair {
    fn new() -> Pair {
        let t = DORMAND_PRINCE_54.to_f64();
        let low = coefficients_to_f64(&DORMAND_PRINCE_54_EMBEDDED);
        Pair {
            a: t.a,
            e: std::array::from_fn(|i| t.b[i] - low[i]),
        }
    }
}

type Lanes = [[f64; LANES]; D];

// Step-size control: the proportional-integral controller of the Dormand-Prince 5(4) code in
// Hairer, Nørsett & Wanner, Solving ODEs I, Sec. IV.2 (from memory: h grows by
// 0.9 err^(-α) err_prev^β with α = 0.2 - 0.75 β, β = 0.04), which rejects fewer steps than
// the plain err^(-1/5) rule when the step must shrink fast, as near a hole.
const SAFETY: f64 = 0.9;
const PI_BETA: f64 = 0.04;
const PI_ALPHA: f64 = 0.2 - 0.75 * PI_BETA;
const GROW: f64 = 5.0;
const SHRINK: f64 = 0.2;
/// The part of the horizon radius taken off r in the distance the step follows (below 1, so
/// the distance stays positive down to the stopping radius).
const HORIZON_SHARE: f64 = 0.9;
/// The remembered error before a ray's first step.
const FIRST_ERROR: f64 = 1e-4;

/// The geodesic right-hand side on every lane, as native code when the scene has it.
fn rhs(scene: &Scene, registers: &mut LaneRegisters<LANES>, y: &Lanes, out: &mut Lanes) {
    let (x, w) = y.split_at(4);
    let mut eval =
        |inputs: &LaneInputs<'_, LANES>, out: &mut [[f64; LANES]]| match &scene.native_rhs {
            Some(native) => native.eval(&scene.params, inputs, out),
            None => scene.rhs.eval(registers, inputs, out),
        };
    match scene.equations {
        Equations::Hamilton => eval(
            &LaneInputs {
                x,
                p: w,
                ..LaneInputs::default()
            },
            out,
        ),
        Equations::Accel => {
            let (dx, du) = out.split_at_mut(4);
            dx.copy_from_slice(w);
            eval(
                &LaneInputs {
                    x,
                    u: w,
                    ..LaneInputs::default()
                },
                du,
            );
        }
    }
}

/// Cubic Hermite interpolation on a step of length `h` at fraction `s` (common practice): from
/// the end values and derivatives, which the "first same as last" pair has at hand.
fn hermite(y0: f64, y1: f64, f0: f64, f1: f64, h: f64, s: f64) -> f64 {
    let (s2, s3) = (s * s, s * s * s);
    (2.0 * s3 - 3.0 * s2 + 1.0) * y0
        + (s3 - 2.0 * s2 + s) * h * f0
        + (3.0 * s2 - 2.0 * s3) * y1
        + (s3 - s2) * h * f1
}

/// One accepted step of one ray: its ends and the derivatives there.
struct Step {
    old: [f64; D],
    new: [f64; D],
    f_old: [f64; D],
    f_new: [f64; D],
    h: f64,
}

impl Step {
    /// The fraction of the step where component `c` of the interpolant reaches `target`,
    /// by bisection (0 if it starts beyond it); `target` should lie between the ends.
    fn solve(&self, c: usize, target: f64) -> f64 {
        let below_at_start = self.old[c] < target;
        if self.old[c] == target {
            return 0.0;
        }
        let (mut lo, mut hi) = (0.0, 1.0);
        for _ in 0..50 {
            let mid = 0.5 * (lo + hi);
            if (self.at(c, mid) < target) == below_at_start {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        0.5 * (lo + hi)
    }

    /// The derivative d/dλ of the interpolant of component `c` at fraction `s`.
    fn rate(&self, c: usize, s: f64) -> f64 {
        let s2 = s * s;
        (6.0 * (s2 - s) * (self.old[c] - self.new[c])) / self.h
            + (3.0 * s2 - 4.0 * s + 1.0) * self.f_old[c]
            + (3.0 * s2 - 2.0 * s) * self.f_new[c]
    }

    fn at(&self, c: usize, s: f64) -> f64 {
        hermite(
            self.old[c],
            self.new[c],
            self.f_old[c],
            self.f_new[c],
            self.h,
            s,
        )
    }
}

/// What the step met, if it ends the ray.
fn event(scene: &Scene, work: &mut Workspace, step: &Step) -> Option<Hit> {
    if step.new.iter().any(|v| !v.is_finite()) {
        return Some(Hit::Unresolved);
    }
    if let Some(hit) = scene.disk.and_then(|_| disk_crossing(scene, work, step)) {
        return Some(hit);
    }
    let r = step.new[1];
    if r < scene.stop_radius {
        return Some(Hit::Shadow);
    }
    if r > scene.escape_radius && step.f_new[1] > 0.0 {
        // Read where the ray passes the escape radius itself, so that the result does not
        // depend on where a step happened to end beyond it.
        let s = step.solve(1, scene.escape_radius);
        let x: [f64; D] = std::array::from_fn(|c| step.at(c, s));
        let f: [f64; D] = std::array::from_fn(|c| step.rate(c, s));
        let (theta, phi) = leaving_direction(&x, &f);
        return Some(Hit::Sky { theta, phi });
    }
    None
}

/// The direction a ray leaves in, as polar angle and azimuth on the celestial sphere: its
/// velocity (dr, dθ, dφ)/dλ read as a vector of flat space in spherical coordinates, which the
/// metric approaches far away. Unlike the position where it leaves, this is right for rays
/// the camera sends straight outwards. A ray over a pole (θ < 0 or θ > π) needs no special case.
fn leaving_direction(x: &[f64; D], f: &[f64; D]) -> (f64, f64) {
    let (r, (st, ct), (sp, cp)) = (x[1], x[2].sin_cos(), x[3].sin_cos());
    let (dr, r_dtheta, r_sin_dphi) = (f[1], r * f[2], r * st * f[3]);
    let vx = dr * st * cp + r_dtheta * ct * cp - r_sin_dphi * sp;
    let vy = dr * st * sp + r_dtheta * ct * sp + r_sin_dphi * cp;
    let vz = dr * ct - r_dtheta * st;
    (vx.hypot(vy).atan2(vz), vy.atan2(vx).rem_euclid(TAU))
}

/// Where the step crosses the equatorial plane (cos θ = 0), if within the disk.
fn disk_crossing(scene: &Scene, work: &mut Workspace, step: &Step) -> Option<Hit> {
    let disk = scene.disk?;
    let (t0, t1) = (step.old[2], step.new[2]);
    if (t0.cos() > 0.0) == (t1.cos() > 0.0) {
        return None;
    }
    // The plane's θ between the two ends: π/2 + mπ.
    let target = FRAC_PI_2 + ((t0.max(t1) - FRAC_PI_2) / PI).floor() * PI;
    if target < t0.min(t1) {
        return None;
    }
    let s = step.solve(2, target);
    let radius = step.at(1, s);
    if !(radius >= disk.inner && radius <= disk.outer) {
        return None;
    }
    let phi = step.at(3, s);
    let (k_t, k_phi) = match scene.equations {
        Equations::Hamilton => (step.at(4, s), step.at(7, s)),
        Equations::Accel => {
            let x = [step.at(0, s), radius, step.at(2, s), phi];
            let u: [f64; 4] = std::array::from_fn(|c| step.at(4 + c, s));
            let g = scene.metric_at(work, &x);
            let lower = |a: usize| (0..4).map(|b| g[a][b] * u[b]).sum::<f64>();
            (lower(0), lower(3))
        }
    };
    // g = (k·u_observer) / (k·u_emitter) with the ray's covariant momentum; the camera's
    // rays have k·u_observer = 1, and u_emitter = u^t (∂t + Ω ∂φ).
    let redshift = scene
        .emitter(work, radius)
        .map_or(f64::NAN, |(omega, u_t)| 1.0 / (u_t * (k_t + omega * k_phi)));
    Some(Hit::Disk {
        radius,
        phi: phi.rem_euclid(TAU),
        redshift,
    })
}

/// The starting state of the ray through `pixel`.
fn start(scene: &Scene, pixel: (usize, usize)) -> Result<[f64; D], CliError> {
    let camera = &scene.camera;
    let k = camera.ray(pixel.0, pixel.1)?;
    let w = match scene.equations {
        Equations::Hamilton => camera.lower(&k),
        Equations::Accel => k,
    };
    let x = camera.position;
    Ok([x[0], x[1], x[2], x[3], w[0], w[1], w[2], w[3]])
}

/// The rays in flight, one per lane, and the next pixel to start.
struct Batch {
    y: Lanes,
    h: [f64; LANES],
    /// The pixel (index into the job) each lane carries; `None` for an idle lane.
    ray: [Option<usize>; LANES],
    attempts: [u32; LANES],
    /// The error norm of each lane's last accepted step, for the controller's memory.
    previous_error: [f64; LANES],
    next: usize,
    /// Where idle lanes rest: a valid starting state.
    rest: [f64; D],
    h0: f64,
}

impl Batch {
    /// Puts the job's next pixel on lane `l`, or idles the lane when none is left.
    fn place(
        &mut self,
        l: usize,
        scene: &Scene,
        pixels: &[(usize, usize)],
    ) -> Result<(), CliError> {
        let (state, step, index) = match pixels.get(self.next) {
            Some(&p) => (start(scene, p)?, self.h0, Some(self.next)),
            None => (self.rest, 0.0, None),
        };
        for (c, v) in state.iter().enumerate() {
            self.y[c][l] = *v;
        }
        self.h[l] = step;
        self.ray[l] = index;
        self.attempts[l] = 0;
        self.previous_error[l] = FIRST_ERROR;
        self.next += usize::from(index.is_some());
        Ok(())
    }

    fn live(&self) -> u64 {
        self.ray.iter().filter(|r| r.is_some()).count() as u64
    }
}

/// Traces the rays through `pixels` (`(column, row)` pairs of the scene's camera) on one
/// thread, returning what each met, in order, and adding to `counts`.
pub fn trace_pixels(
    scene: &Scene,
    pixels: &[(usize, usize)],
    counts: &mut RayCounts,
) -> Result<Vec<Hit>, CliError> {
    trace_pixels_in(scene, &mut scene.workspace(), pixels, counts)
}

/// [`trace_pixels`] with the caller's register files (from [`Scene::workspace`]), so a
/// worker that runs many jobs sets them up once.
pub fn trace_pixels_in(
    scene: &Scene,
    work: &mut Workspace,
    pixels: &[(usize, usize)],
    counts: &mut RayCounts,
) -> Result<Vec<Hit>, CliError> {
    let mut hits = vec![Hit::Unresolved; pixels.len()];
    let Some(&first) = pixels.first() else {
        return Ok(hits);
    };
    let pair = Pair::new();
    let rest = start(scene, first)?;
    let h0 = 0.02 * scene.camera.position[1];
    // Error control skips the time coordinate (nothing in a stationary scene depends on it,
    // and dt/dλ grows without bound near a horizon), and u^t for the same reason.
    let controlled: &[usize] = match scene.equations {
        Equations::Hamilton => &[1, 2, 3, 4, 5, 6, 7],
        Equations::Accel => &[1, 2, 3, 5, 6, 7],
    };
    let mut b = Batch {
        y: [[0.0; LANES]; D],
        h: [0.0; LANES],
        ray: [None; LANES],
        attempts: [0; LANES],
        previous_error: [FIRST_ERROR; LANES],
        next: 0,
        rest,
        h0,
    };
    let mut k = [[[0.0; LANES]; D]; STAGES];
    for l in 0..LANES {
        b.place(l, scene, pixels)?;
    }
    rhs(scene, &mut work.rhs, &b.y, &mut k[0]);
    counts.evaluations += b.live();
    counts.lane_slots += LANES as u64;
    let mut ys: Lanes = [[0.0; LANES]; D];
    while b.live() > 0 {
        for s in 1..STAGES {
            for c in 0..D {
                let mut sum = [0.0; LANES];
                for (j, kj) in k.iter().enumerate().take(s) {
                    let a = pair.a[s][j];
                    if a != 0.0 {
                        for l in 0..LANES {
                            sum[l] += a * kj[c][l];
                        }
                    }
                }
                for l in 0..LANES {
                    ys[c][l] = b.y[c][l] + b.h[l] * sum[l];
                }
            }
            rhs(scene, &mut work.rhs, &ys, &mut k[s]);
        }
        let n_live = b.live();
        counts.evaluations += (STAGES as u64 - 1) * n_live;
        counts.lane_slots += (STAGES as u64 - 1) * LANES as u64;
        let mut finished = [false; LANES];
        for l in 0..LANES {
            let Some(index) = b.ray[l] else { continue };
            b.attempts[l] += 1;
            let mut sum = 0.0;
            for &c in controlled {
                let err: f64 = b.h[l] * (0..STAGES).map(|j| pair.e[j] * k[j][c][l]).sum::<f64>();
                let scale = scene.atol + scene.rtol * b.y[c][l].abs().max(ys[c][l].abs());
                sum += (err / scale).powi(2);
            }
            let norm = (sum / controlled.len() as f64).sqrt();
            let mut outcome = None;
            let factor = if norm <= 1.0 {
                counts.steps += 1;
                let step = Step {
                    old: std::array::from_fn(|c| b.y[c][l]),
                    new: std::array::from_fn(|c| ys[c][l]),
                    f_old: std::array::from_fn(|c| k[0][c][l]),
                    f_new: std::array::from_fn(|c| k[STAGES - 1][c][l]),
                    h: b.h[l],
                };
                for c in 0..D {
                    b.y[c][l] = ys[c][l];
                    k[0][c][l] = k[STAGES - 1][c][l];
                }
                outcome = event(scene, work, &step);
                let factor = if norm == 0.0 {
                    GROW
                } else {
                    (SAFETY * norm.powf(-PI_ALPHA) * b.previous_error[l].powf(PI_BETA))
                        .clamp(SHRINK, GROW)
                };
                b.previous_error[l] = norm.max(FIRST_ERROR);
                // The natural step shrinks and grows with the distance to the horizon (the
                // scale on which the geometry changes), so the controller's proposal is
                // carried along with it; without this, steps that must shrink all the way in
                // alternate between accepted and rejected.
                let reach = |r: f64| r - HORIZON_SHARE * scene.horizon;
                factor * (reach(step.new[1]) / reach(step.old[1])).clamp(SHRINK, GROW)
            } else {
                counts.rejected += 1;
                if norm.is_finite() {
                    (SAFETY * norm.powf(-0.2)).clamp(SHRINK, 1.0)
                } else {
                    SHRINK
                }
            };
            b.h[l] *= factor;
            let collapsed = b.h[l] < 1e-12 * (1.0 + b.y[1][l].abs());
            if outcome.is_none() && (b.attempts[l] >= scene.max_attempts || collapsed) {
                outcome = Some(Hit::Unresolved);
            }
            if let Some(hit) = outcome {
                counts.record(&hit);
                hits[index] = hit;
                finished[l] = true;
            }
        }
        if !finished.iter().any(|f| *f) {
            continue;
        }
        for l in (0..LANES).filter(|&l| finished[l]) {
            b.place(l, scene, pixels)?;
        }
        // The new rays need the derivative at their start; one call serves all of them.
        let mut f = [[0.0; LANES]; D];
        rhs(scene, &mut work.rhs, &b.y, &mut f);
        counts.evaluations += (0..LANES)
            .filter(|&l| finished[l] && b.ray[l].is_some())
            .count() as u64;
        counts.lane_slots += LANES as u64;
        for l in (0..LANES).filter(|&l| finished[l]) {
            for c in 0..D {
                k[0][c][l] = f[c][l];
            }
        }
    }
    Ok(hits)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The cubic Hermite interpolant reproduces a cubic exactly, with its derivative, and
    /// the bisection finds where it reaches a value.
    #[test]
    fn step_interpolant_is_exact_for_cubics() {
        let y = |t: f64| 2.0 - t + 0.5 * t * t + 0.25 * t * t * t;
        let dy = |t: f64| -1.0 + t + 0.75 * t * t;
        let (t0, h) = (0.5, 2.0);
        let mut step = Step {
            old: [0.0; D],
            new: [0.0; D],
            f_old: [0.0; D],
            f_new: [0.0; D],
            h,
        };
        step.old[1] = y(t0);
        step.new[1] = y(t0 + h);
        step.f_old[1] = dy(t0);
        step.f_new[1] = dy(t0 + h);
        for s in [0.0, 0.3, 0.5, 0.9, 1.0] {
            let t = t0 + s * h;
            assert!((step.at(1, s) - y(t)).abs() < 1e-13, "{s}");
            assert!((step.rate(1, s) - dy(t)).abs() < 1e-13, "{s}");
        }
        let s = step.solve(1, y(t0 + 0.7 * h));
        assert!((s - 0.7).abs() < 1e-12, "{s}");
    }

    /// The direction a ray leaves in: radially outwards along +x is (θ, φ) = (π/2, 0);
    /// moving along +z from a point on the x axis is θ = 0.
    #[test]
    fn leaving_direction_reads_the_far_field_velocity() {
        let mut x = [0.0; D];
        let mut f = [0.0; D];
        x[1] = 100.0;
        x[2] = FRAC_PI_2;
        f[1] = 1.0;
        let (theta, phi) = leaving_direction(&x, &f);
        assert!((theta - FRAC_PI_2).abs() < 1e-15 && phi.abs() < 1e-15);
        f[1] = 0.0;
        f[2] = -0.01;
        let (theta, _) = leaving_direction(&x, &f);
        assert!(theta.abs() < 1e-15, "{theta}");
    }
}
