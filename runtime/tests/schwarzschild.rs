//! Schwarzschild geodesics against textbook facts (geometric units, M = 1).
//!
//! Circular orbits: E = (1 - 2M/r)/√(1 - 3M/r), L = √(Mr)/√(1 - 3M/r), angular velocity
//! dφ/dτ = L/r² (S. Carroll, *Spacetime and Geometry*, Sec. 5.4, from memory); at the ISCO
//! r = 6M these give E = √(8/9), L = 2√3 M. Photons: the critical impact parameter is
//! b = 3√3 M (same source): slightly larger escapes, slightly smaller is captured.

mod common;

use common::{kerr, Schwarzschild};
use geokern_runtime::{
    integrate, integrate_with_events, CoordinateCrossing, Crossing, Event, Method, MetricKernels,
    Options, Outcome, Projection, StopReason,
};
use std::f64::consts::{FRAC_PI_2, PI};

const M: f64 = 1.0;

fn circular(r: f64) -> ([f64; 4], [f64; 4], f64) {
    let f = 1.0 - 2.0 * M / r;
    let e = f / (1.0 - 3.0 * M / r).sqrt();
    let l = (M * r).sqrt() / (1.0 - 3.0 * M / r).sqrt();
    let uphi = l / (r * r);
    // Proper-time period of one revolution.
    let period = 2.0 * PI / uphi;
    ([0.0, r, FRAC_PI_2, 0.0], [e / f, 0.0, 0.0, uphi], period)
}

/// Integrates in `chunks` consecutive pieces, returning the largest |r - r0| seen at the
/// chunk ends and the final outcome.
fn radius_excursion(
    method: Method,
    x0: [f64; 4],
    u0: [f64; 4],
    lambda: f64,
    chunks: usize,
    opts: &Options,
) -> (f64, Outcome<4>) {
    let bh = Schwarzschild { m: M };
    let (mut x, mut u) = (x0, u0);
    let mut worst: f64 = 0.0;
    let mut last = None;
    for _ in 0..chunks {
        let out = integrate(
            &bh,
            x,
            u,
            lambda / chunks as f64,
            &Options { method, ..*opts },
        )
        .expect("integrates");
        assert_eq!(out.stop, StopReason::End);
        worst = worst.max((out.x[1] - x0[1]).abs());
        x = out.x;
        u = out.u;
        last = Some(out);
    }
    (worst, last.expect("at least one chunk"))
}

#[test]
fn isco_parameters_are_the_textbook_ones() {
    let (_, u, _) = circular(6.0);
    let bh = Schwarzschild { m: M };
    let x = [0.0, 6.0, FRAC_PI_2, 0.0];
    let mut p = [0.0; 2];
    bh.conserved(&x, &u, &mut p);
    assert!((-p[0] - (8.0f64 / 9.0).sqrt()).abs() < 1e-15);
    assert!((p[1] - 2.0 * 3f64.sqrt()).abs() < 1e-14);
    assert!((bh.norm(&x, &u) + 1.0).abs() < 1e-14);
}

#[test]
fn circular_orbit_at_isco_stays_at_six_m() {
    let (x0, u0, period) = circular(6.0);
    let opts = Options {
        rtol: 1e-12,
        atol: 1e-12,
        ..Options::default()
    };
    for method in [Method::DormandPrince853, Method::DormandPrince54] {
        let (excursion, out) = radius_excursion(method, x0, u0, 3.0 * period, 30, &opts);
        assert!(excursion < 1e-6, "{method:?}: r strayed by {excursion}");
        // Three full revolutions: φ advanced by 6π.
        assert!(
            (out.x[3] - 6.0 * PI).abs() < 1e-6,
            "{method:?}: φ = {}",
            out.x[3]
        );
        assert!(out.drift.norm < 1e-9 && out.drift.conserved()[1] < 1e-8);
    }
    let symplectic = Options {
        fixed_step: Some(0.5),
        ..opts
    };
    let (excursion, _) = radius_excursion(
        Method::GaussLegendre6,
        x0,
        u0,
        3.0 * period,
        30,
        &symplectic,
    );
    assert!(excursion < 1e-6, "GL6: r strayed by {excursion}");
}

#[test]
fn circular_orbit_at_ten_m_stays_circular() {
    let (x0, u0, period) = circular(10.0);
    let opts = Options {
        rtol: 1e-11,
        atol: 1e-12,
        fixed_step: None,
        ..Options::default()
    };
    for method in Method::ALL {
        let o = if method.is_adaptive() {
            opts
        } else {
            Options {
                fixed_step: Some(1.0),
                ..opts
            }
        };
        let (excursion, out) = radius_excursion(method, x0, u0, 5.0 * period, 10, &o);
        assert!(excursion < 1e-6, "{method:?}: r strayed by {excursion}");
        assert!(
            (out.x[3] - 10.0 * PI).abs() < 1e-5,
            "{method:?}: φ = {}",
            out.x[3]
        );
    }
}

/// A photon from r0 moving inward in the equatorial plane with impact parameter b.
fn photon(r0: f64, b: f64) -> ([f64; 4], [f64; 4]) {
    let f = 1.0 - 2.0 * M / r0;
    let ur = -(1.0 - f * b * b / (r0 * r0)).sqrt();
    ([0.0, r0, FRAC_PI_2, 0.0], [1.0 / f, ur, 0.0, b / (r0 * r0)])
}

fn fate(method: Method, b: f64) -> usize {
    let bh = Schwarzschild { m: M };
    let (x0, u0) = photon(30.0, b);
    assert!(bh.norm(&x0, &u0).abs() < 1e-14);
    let mut capture = CoordinateCrossing::falling_below(1, 2.0 * M * 1.01);
    let mut escape = CoordinateCrossing::rising_above(1, 40.0);
    let mut events: [&mut dyn Event<4>; 2] = [&mut capture, &mut escape];
    let opts = Options {
        rtol: 1e-10,
        atol: 1e-12,
        ..Options::with_method(method)
    };
    let opts = if method.is_adaptive() {
        opts
    } else {
        Options {
            fixed_step: Some(0.05),
            ..opts
        }
    };
    let out = integrate_with_events(&bh, x0, u0, 1e4, &opts, &mut events).expect("integrates");
    match out.stop {
        StopReason::Event { index, lambda } => {
            assert_eq!(lambda, out.lambda);
            index
        }
        other => panic!("{method:?}, b = {b}: photon neither escaped nor was captured ({other:?})"),
    }
}

#[test]
fn photons_just_outside_the_critical_impact_parameter_escape() {
    let critical = 3.0 * 3f64.sqrt() * M;
    for method in [
        Method::DormandPrince54,
        Method::DormandPrince853,
        Method::GaussLegendre6,
    ] {
        assert_eq!(
            fate(method, critical * (1.0 + 1e-4)),
            1,
            "{method:?}: should escape"
        );
        assert_eq!(
            fate(method, critical * (1.0 - 1e-4)),
            0,
            "{method:?}: should be captured"
        );
    }
}

/// Records every crossing it is told about.
struct Recorder {
    plane: CoordinateCrossing,
    seen: Vec<Crossing<4>>,
}

impl Event<4> for Recorder {
    fn value(&self, lambda: f64, x: &[f64; 4], u: &[f64; 4]) -> f64 {
        Event::<4>::value(&self.plane, lambda, x, u)
    }
    fn is_terminal(&self) -> bool {
        false
    }
    fn on_crossing(&mut self, c: &Crossing<4>) {
        self.seen.push(*c);
    }
}

#[test]
fn inclined_circular_orbit_crosses_the_equator_every_half_revolution() {
    // A circular orbit at r = 10M in a plane tilted by 40°: by spherical symmetry it crosses
    // θ = π/2 every half period, at λ = k π r² / L.
    let r = 10.0;
    let (x0, u, period) = circular(r);
    let tilt = 40f64.to_radians();
    let omega = u[3];
    let u0 = [u[0], 0.0, -omega * tilt.sin(), omega * tilt.cos()];
    let bh = Schwarzschild { m: M };
    let mut rec = Recorder {
        plane: CoordinateCrossing::plane(2, FRAC_PI_2),
        seen: Vec::new(),
    };
    let mut events: [&mut dyn Event<4>; 1] = [&mut rec];
    let opts = Options {
        rtol: 1e-11,
        atol: 1e-12,
        ..Options::default()
    };
    let out = integrate_with_events(&bh, x0, u0, 2.25 * period, &opts, &mut events).unwrap();
    assert_eq!(out.stop, StopReason::End);
    assert_eq!(out.stats.events, 4);
    assert_eq!(
        rec.seen.len(),
        4,
        "started on the plane (not counted), then 4 crossings"
    );
    for (k, c) in rec.seen.iter().enumerate() {
        let expected = (k + 1) as f64 * period / 2.0;
        assert!(
            (c.lambda - expected).abs() < 1e-6,
            "crossing {k} at {} not {expected}",
            c.lambda
        );
        assert!((c.x[2] - FRAC_PI_2).abs() < 1e-9);
        // Going north first (θ decreasing), so the first crossing has θ increasing.
        assert_eq!(c.rising, k % 2 == 0, "crossing {k}");
    }
}

/// Bound orbit between r1 and r2: L² from equal effective energies at both turning points
/// (E² = (1 - 2M/r)(1 + L²/r²) for timelike geodesics, Carroll Sec. 5.4).
fn eccentric(r1: f64, r2: f64) -> ([f64; 4], [f64; 4]) {
    let f = |r: f64| 1.0 - 2.0 * M / r;
    let l2 = (2.0 * M / r1 - 2.0 * M / r2) / (f(r1) / (r1 * r1) - f(r2) / (r2 * r2));
    let e = (f(r1) * (1.0 + l2 / (r1 * r1))).sqrt();
    (
        [0.0, r1, FRAC_PI_2, 0.0],
        [e / f(r1), 0.0, 0.0, l2.sqrt() / (r1 * r1)],
    )
}

#[test]
fn symplectic_energy_error_stays_bounded_while_rk4_drifts() {
    // Symplectic methods conserve a modified Hamiltonian, so H = g(u,u)/2 oscillates with no
    // secular trend, and Gauss-Legendre conserves the linear invariant p_t exactly; RK4's
    // error in the energy E = -p_t grows linearly in time (Hairer, Lubich & Wanner, Geometric
    // Numerical Integration, Sec. I.1, Theorem IV.1.5 and Theorem IX.8.1). ~6 orbits against
    // ~90 orbits, same step for both methods.
    let bh = Schwarzschild { m: M };
    let (x0, u0) = eccentric(8.0, 16.0);
    let run = |method, lambda| {
        let opts = Options {
            fixed_step: Some(4.0),
            max_steps: 1_000_000,
            ..Options::with_method(method)
        };
        let d = integrate(&bh, x0, u0, lambda, &opts)
            .expect("integrates")
            .drift;
        (d.norm, d.conserved()[0])
    };
    let (short, long) = (1500.0, 24000.0);
    let (gl_short, gl_long) = (
        run(Method::GaussLegendre4, short),
        run(Method::GaussLegendre4, long),
    );
    let (rk_short, rk_long) = (run(Method::Rk4, short), run(Method::Rk4, long));
    assert!(
        gl_long.0 < 1.5 * gl_short.0,
        "GL4 H error grew: {gl_short:?} -> {gl_long:?}"
    );
    assert!(gl_long.1 < 1e-13, "GL4 must keep p_t: {gl_long:?}");
    assert!(
        rk_long.1 > 4.0 * rk_short.1,
        "RK4 energy error did not grow: {rk_short:?} -> {rk_long:?}"
    );
    assert!(
        rk_long.0 > 1.5 * rk_short.0,
        "RK4 H error did not grow: {rk_short:?} -> {rk_long:?}"
    );
    assert!(gl_long.0 < rk_long.0);
}

#[test]
fn projection_holds_the_mass_shell() {
    let bh = Schwarzschild { m: M };
    let (x0, u0) = eccentric(8.0, 16.0);
    let base = Options {
        fixed_step: Some(2.0),
        ..Options::with_method(Method::Rk4)
    };
    let free = integrate(&bh, x0, u0, 2000.0, &base).unwrap();
    let held = integrate(
        &bh,
        x0,
        u0,
        2000.0,
        &Options {
            projection: Projection::Timelike,
            ..base
        },
    )
    .unwrap();
    assert_eq!(held.stats.projections, held.stats.steps);
    assert!(
        free.drift.norm > 1e-8,
        "unprojected drift {:e}",
        free.drift.norm
    );
    assert!(
        held.drift.norm < 1e-13,
        "projected drift {:e}",
        held.drift.norm
    );
    assert!((bh.norm(&held.x, &held.u) + 1.0).abs() < 1e-13);
}

#[test]
fn closed_form_fixture_agrees_with_derived_kerr_at_zero_spin() {
    // Two independent fixtures (hand-written Christoffel symbols vs dual-number derivatives
    // of the Kerr metric with a = 0) must agree.
    let a = Schwarzschild { m: M };
    let b = kerr(M, 0.0);
    for x in [[0.0, 7.0, 1.1, 0.3], [2.0, 3.5, 0.4, -1.0]] {
        let u = [1.3, -0.2, 0.05, 0.07];
        let (ga, gb) = (a.christoffel(&x), b.christoffel(&x));
        for i in 0..4 {
            for j in 0..4 {
                for k in 0..4 {
                    assert!((ga[i][j][k] - gb[i][j][k]).abs() < 1e-13, "Γ^{i}_{j}{k}");
                }
            }
        }
        let (ha, hb) = (a.hamilton_rhs(&x, &u), b.hamilton_rhs(&x, &u));
        let aa = a.geodesic_accel(&x, &u);
        let ab = b.geodesic_accel(&x, &u);
        for i in 0..4 {
            assert!((ha.0[i] - hb.0[i]).abs() < 1e-13 && (ha.1[i] - hb.1[i]).abs() < 1e-13);
            assert!((aa[i] - ab[i]).abs() < 1e-13);
        }
    }
}
