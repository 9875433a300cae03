//! Measured orders of convergence against the nominal ones (Hairer, Nørsett & Wanner,
//! *Solving ODEs I*, Sec. II.1-II.10: a method of order p has global error C h^p for
//! smooth problems). The problem is a straight line in polar coordinates on the Euclidean
//! plane, whose exact solution is known in closed form; every method runs with fixed steps.

mod common;

use common::{straight_line, straight_line_start, FlatPolar};
use geokern_runtime::{
    integrate, integrate_with_events, CoordinateCrossing, DormandPrince54, DormandPrince853, Event,
    GaussLegendre, GeodesicSystem, Method, MomentumForm, Options, Rk4, State, Stats, Stepper,
    StopReason, Tolerance, VelocityForm,
};

const VX: f64 = 0.3;
const VY: f64 = 0.8;
const LAMBDA_END: f64 = 4.0;

fn fixed(method: Method, h: f64) -> Options {
    Options {
        fixed_step: Some(h),
        max_steps: 1_000_000,
        ..Options::with_method(method)
    }
}

fn global_error(method: Method, h: f64) -> f64 {
    let (x0, u0) = straight_line_start(VX, VY);
    let out = integrate(&FlatPolar, x0, u0, LAMBDA_END, &fixed(method, h)).expect("integrates");
    assert_eq!(out.stop, StopReason::End);
    assert_eq!(out.lambda, LAMBDA_END);
    let exact = straight_line(VX, VY, LAMBDA_END);
    (out.x[0] - exact[0]).abs().max((out.x[1] - exact[1]).abs())
}

/// log2 of the error ratio between steps h and h/2.
fn observed_order(method: Method, h: f64) -> f64 {
    let (e1, e2) = (global_error(method, h), global_error(method, h / 2.0));
    assert!(
        e2 > 1e-14,
        "{method:?}: error {e2} at roundoff; pick a larger step"
    );
    (e1 / e2).log2()
}

#[test]
fn every_method_converges_at_its_nominal_order() {
    // Steps chosen so errors stay far above round-off but in the asymptotic range (DP5's
    // leading error coefficients are small by design, so its higher-order terms dominate
    // down to h ≈ 0.1 on this problem).
    let cases = [
        (Method::Rk4, 0.05),
        (Method::DormandPrince54, 0.05),
        (Method::DormandPrince853, 0.2),
        (Method::GaussLegendre4, 0.1),
        (Method::GaussLegendre6, 0.1),
    ];
    for (method, h) in cases {
        let p = observed_order(method, h);
        let nominal = method.order() as f64;
        assert!(
            (p - nominal).abs() < 0.35,
            "{method:?}: observed order {p:.3}, nominal {nominal}"
        );
    }
}

/// The λ where the line crosses φ = π/4 (where y = x): 1 + VX λ = VY λ.
const CROSSING: f64 = 1.0 / (VY - VX);

fn crossing_error(method: Method, h: f64) -> f64 {
    let (x0, u0) = straight_line_start(VX, VY);
    let mut diagonal = CoordinateCrossing::rising_above(1, std::f64::consts::FRAC_PI_4);
    let mut events: [&mut dyn Event<2>; 1] = [&mut diagonal];
    let out = integrate_with_events(
        &FlatPolar,
        x0,
        u0,
        LAMBDA_END,
        &fixed(method, h),
        &mut events,
    )
    .expect("integrates");
    match out.stop {
        StopReason::Event { index: 0, lambda } => {
            assert_eq!(lambda, out.lambda);
            assert!(out.x[1] >= std::f64::consts::FRAC_PI_4 - 1e-12);
            (lambda - CROSSING).abs()
        }
        other => panic!("{method:?}: expected the crossing, got {other:?}"),
    }
}

#[test]
fn events_are_located_accurately_by_every_method() {
    // The crossing sits mid-step (CROSSING = 5.5 h).
    for method in Method::ALL {
        let err = crossing_error(method, CROSSING / 5.5);
        assert!(err < 1e-4, "{method:?}: crossing off by {err}");
        let err = crossing_error(method, CROSSING / 55.5);
        assert!(
            err < 1e-7,
            "{method:?}: crossing off by {err} with the small step"
        );
    }
}

/// Error of one step's continuous extension at θ = 0.3, from the exact state at λ = 0.
fn dense_error<St: Stepper<2>>(mut stepper: St, hamiltonian: bool, h: f64) -> f64 {
    let (x0, u0) = straight_line_start(VX, VY);
    let mut stats = Stats::default();
    let tol = Tolerance {
        rtol: 1e-6,
        atol: 1e-6,
    };
    let theta = 0.3;
    let exact = straight_line(VX, VY, theta * h);
    let y = if hamiltonian {
        let system = MomentumForm(&FlatPolar);
        let y = system.state_from_velocity(&x0, &u0);
        assert!(stepper.reset(&system, &y, &mut stats));
        stepper
            .attempt(&system, &y, h, &tol, &mut stats)
            .expect("step");
        stepper.dense(&system, theta, &mut stats)
    } else {
        let system = VelocityForm(&FlatPolar);
        let y = State::new(x0, u0);
        assert!(stepper.reset(&system, &y, &mut stats));
        stepper
            .attempt(&system, &y, h, &tol, &mut stats)
            .expect("step");
        stepper.dense(&system, theta, &mut stats)
    };
    (y.x[0] - exact[0]).abs().max((y.x[1] - exact[1]).abs())
}

#[test]
fn dense_output_has_its_nominal_local_order() {
    // A continuous extension of order q has local error O(h^(q+1)) (HNW I, Sec. II.6):
    // cubic Hermite on RK4 q = 3; Shampine's DP5 extension q = 4; DOP853's q = 7; the
    // collocation polynomial of an s-stage Gauss method q = s (Hairer & Wanner II,
    // Sec. IV.5, from memory).
    let order = |e: [f64; 2]| (e[0] / e[1]).log2();
    let local = |f: &dyn Fn(f64) -> f64, h: f64| order([f(h), f(h / 2.0)]);
    type ErrorOfStep<'a> = &'a dyn Fn(f64) -> f64;
    let cases: [(&str, f64, f64, ErrorOfStep); 5] = [
        ("rk4", 4.0, 0.2, &|h| dense_error(Rk4::new(), false, h)),
        ("dp54", 5.0, 0.2, &|h| {
            dense_error(DormandPrince54::new(), false, h)
        }),
        ("dp853", 8.0, 0.4, &|h| {
            dense_error(DormandPrince853::new(), false, h)
        }),
        ("gl4", 3.0, 0.2, &|h| {
            dense_error(GaussLegendre::order4(), true, h)
        }),
        ("gl6", 4.0, 0.2, &|h| {
            dense_error(GaussLegendre::order6(), true, h)
        }),
    ];
    for (name, expected, h, f) in cases {
        let p = local(f, h);
        assert!(
            (p - expected).abs() < 0.4,
            "{name}: local dense order {p:.2}, expected {expected}"
        );
    }
}

#[test]
fn adaptive_methods_meet_their_tolerance() {
    let (x0, u0) = straight_line_start(VX, VY);
    let exact = straight_line(VX, VY, LAMBDA_END);
    for method in [Method::DormandPrince54, Method::DormandPrince853] {
        let mut errors = Vec::new();
        for rtol in [1e-6, 1e-9] {
            let opts = Options {
                rtol,
                atol: rtol,
                ..Options::with_method(method)
            };
            let out = integrate(&FlatPolar, x0, u0, LAMBDA_END, &opts).unwrap();
            let err = (out.x[0] - exact[0]).abs().max((out.x[1] - exact[1]).abs());
            // Local control bounds the global error by a modest multiple of the tolerance.
            assert!(err < 100.0 * rtol, "{method:?} rtol {rtol}: error {err}");
            errors.push((err, out.stats));
        }
        assert!(
            errors[1].1.steps > errors[0].1.steps,
            "tighter tolerance takes more steps"
        );
        assert!(errors[1].0 < errors[0].0);
    }
}
