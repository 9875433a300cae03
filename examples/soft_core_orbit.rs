//! A probe on an eccentric orbit around Lantern, an invented horizonless compact star whose
//! gravity is softened inside a core of radius s: f(r) = 1 - 2 m r² / (r² + s²)^{3/2}, which is
//! Schwarzschild far out and flat at the centre (f > 0 everywhere for s > 4m / (3√3)).
//!
//! The same turning points are flown around a Schwarzschild black hole of the same mass; the
//! soft core weakens the field near periastron, so the orbit precesses less.
//!
//! Run: `cargo run --example soft_core_orbit`.

use geokern::{integrate_with_events, Crossing, Direction, Event, Method, MetricKernels, Options};
use std::f64::consts::{FRAC_PI_2, PI};

geokern::metric! {
    /// Lantern: mass m, core radius s.
    pub struct Lantern {
        coords: [t, r, theta, phi],
        params: [m, s],
        let q = r.powi(2) + s.powi(2);
        let f = 1.0 - 2.0 * m * r.powi(2) / (q * q.sqrt());
        g[t, t] = -f;
        g[r, r] = 1.0 / f;
        g[theta, theta] = r.powi(2);
        g[phi, phi] = (r * theta.sin()).powi(2);
    }
}

geokern::include_metric!("examples/metrics/schwarzschild.gk");

/// Records every periastron passage (u^r rising through zero).
#[derive(Default)]
struct Periastra(Vec<Crossing<4>>);

impl Event<4> for Periastra {
    fn value(&self, _lambda: f64, _x: &[f64; 4], u: &[f64; 4]) -> f64 {
        u[1]
    }
    fn direction(&self) -> Direction {
        Direction::Rising
    }
    fn is_terminal(&self) -> bool {
        false
    }
    fn on_crossing(&mut self, crossing: &Crossing<4>) {
        self.0.push(*crossing);
    }
}

/// The equatorial orbit turning at `r1` and `r2` in a static metric with g_tt = -f(r):
/// E² = f(r)(1 + L²/r²) at both turning points gives L² and E.
fn turning_points<K: MetricKernels<f64, 4>>(k: &K, r1: f64, r2: f64) -> ([f64; 4], [f64; 4]) {
    let f = |r: f64| -k.metric(&[0.0, r, FRAC_PI_2, 0.0])[0][0];
    let (f1, f2) = (f(r1), f(r2));
    let l2 = (f2 - f1) / (f1 / (r1 * r1) - f2 / (r2 * r2));
    let e = (f1 * (1.0 + l2 / (r1 * r1))).sqrt();
    (
        [0.0, r1, FRAC_PI_2, 0.0],
        [e / f1, 0.0, 0.0, l2.sqrt() / (r1 * r1)],
    )
}

/// Flies the orbit for `lambda` and returns its periastron passages and the largest drift of
/// g(u,u) and of the two conserved momenta.
fn fly<K: MetricKernels<f64, 4>>(
    k: &K,
    lambda: f64,
) -> Result<(Vec<Crossing<4>>, f64), geokern::Error> {
    let (x0, u0) = turning_points(k, 6.0, 30.0);
    let mut periastra = Periastra::default();
    let mut events: [&mut dyn Event<4>; 1] = [&mut periastra];
    let options = Options {
        rtol: 1e-11,
        atol: 1e-12,
        ..Options::with_method(Method::DormandPrince853)
    };
    let out = integrate_with_events(k, x0, u0, lambda, &options, &mut events)?;
    let drift = out
        .drift
        .conserved()
        .iter()
        .fold(out.drift.norm, |a, b| a.max(*b));
    Ok((periastra.0, drift))
}

fn main() -> Result<(), geokern::Error> {
    let lantern = Lantern::new(1.0, 1.5);
    let hole = Schwarzschild::new(1.0);
    let lambda = 4000.0;
    let (soft, soft_drift) = fly(&lantern, lambda)?;
    let (hard, hard_drift) = fly(&hole, lambda)?;
    println!("orbit between r = 6 and r = 30 (m = 1), proper time {lambda}");
    println!("pass  lantern: tau      phi/2pi   advance   | schwarzschild: tau      advance");
    for (i, (a, b)) in soft.iter().zip(hard.iter()).enumerate() {
        let turns = |c: &Crossing<4>| c.x[3] / (2.0 * PI);
        let advance = |c: &Crossing<4>| c.x[3] / (i as f64 + 1.0) - 2.0 * PI;
        println!(
            "{:>4}  {:>15.3} {:>9.4} {:>9.5}   | {:>15.3} {:>9.5}",
            i + 1,
            a.lambda,
            turns(a),
            advance(a),
            b.lambda,
            advance(b)
        );
    }
    println!("largest drift of g(u,u), E and L: lantern {soft_drift:.1e}, schwarzschild {hard_drift:.1e}");
    if let (Some(a), Some(b)) = (soft.first(), hard.first()) {
        let ratio = (a.x[3] - 2.0 * PI) / (b.x[3] - 2.0 * PI);
        println!(
            "the soft core keeps {:.1}% of the black hole's periastron advance",
            100.0 * ratio
        );
    }
    Ok(())
}
