//! Typed errors instead of panics or silent NaN.

mod common;

use common::{straight_line_start, FlatPolar, Schwarzschild};
use geokern_runtime::{
    integrate, integrate_with_events, CoordinateCrossing, Error, Event, Method, MetricKernels,
    Options, StopReason,
};

/// A one-dimensional toy with a given acceleration.
struct Toy(fn(f64, f64) -> f64);

/// Acceleration √(1 - x): non-finite past x = 1, standing in for kernels evaluated beyond a
/// singularity.
const CLIFF: Toy = Toy(|x, _u| (1.0 - x).sqrt());

/// Acceleration u²: with u(0) = 1 the solution x = -ln(1 - λ) blows up at λ = 1 while every
/// value stays finite.
const BLOWUP: Toy = Toy(|_x, u| u * u);

impl MetricKernels<f64, 1> for Toy {
    fn coordinate_names(&self) -> &[&str] {
        &["x"]
    }
    fn metric(&self, _x: &[f64; 1]) -> [[f64; 1]; 1] {
        [[1.0]]
    }
    fn inverse_metric(&self, _x: &[f64; 1]) -> [[f64; 1]; 1] {
        [[1.0]]
    }
    fn christoffel(&self, _x: &[f64; 1]) -> [[[f64; 1]; 1]; 1] {
        [[[0.0]]]
    }
    fn geodesic_accel(&self, x: &[f64; 1], u: &[f64; 1]) -> [f64; 1] {
        [(self.0)(x[0], u[0])]
    }
    fn hamilton_rhs(&self, x: &[f64; 1], p: &[f64; 1]) -> ([f64; 1], [f64; 1]) {
        ([p[0]], [(self.0)(x[0], p[0])])
    }
    fn parallel_transport(&self, _x: &[f64; 1], _u: &[f64; 1], v: &[f64; 1]) -> [f64; 1] {
        *v
    }
    fn norm(&self, _x: &[f64; 1], u: &[f64; 1]) -> f64 {
        u[0] * u[0]
    }
    fn conserved_names(&self) -> &[&str] {
        &[]
    }
    fn conserved(&self, _x: &[f64; 1], _u: &[f64; 1], _out: &mut [f64]) {}
    fn invariant_names(&self) -> &[&str] {
        &[]
    }
    fn invariants(&self, _x: &[f64; 1], _u: &[f64; 1], _out: &mut [f64]) {}
}

#[test]
fn running_into_a_singularity_is_a_typed_error_or_a_clean_stop() {
    for method in Method::ALL {
        let opts = Options {
            fixed_step: (!method.is_adaptive()).then_some(0.1),
            ..Options::with_method(method)
        };
        match integrate(&CLIFF, [0.0], [1.0], 5.0, &opts) {
            Err(Error::SingularMetric { lambda }) => {
                assert!(
                    lambda > 0.5 && lambda < 1.0,
                    "{method:?}: singular at {lambda}"
                )
            }
            other => panic!("{method:?}: expected SingularMetric, got {other:?}"),
        }
        let stop = Options {
            stop_on_non_finite: true,
            ..opts
        };
        let out = integrate(&CLIFF, [0.0], [1.0], 5.0, &stop).expect("clean stop");
        match out.stop {
            StopReason::NonFinite { lambda } => assert_eq!(lambda, out.lambda),
            other => panic!("{method:?}: expected NonFinite, got {other:?}"),
        }
        assert!(
            out.x[0] <= 1.0 && out.x[0] > 0.99,
            "{method:?}: stopped at x = {}",
            out.x[0]
        );
        assert!(out.u[0].is_finite());
    }
}

#[test]
fn non_finite_initial_data_is_rejected() {
    let (x0, mut u0) = straight_line_start(0.3, 0.8);
    u0[1] = f64::NAN;
    assert_eq!(
        integrate(&FlatPolar, x0, u0, 1.0, &Options::default()),
        Err(Error::NonFiniteState { lambda: 0.0 })
    );
    // Starting on the singularity itself: r = 0 makes the kernels non-finite.
    assert_eq!(
        integrate(&FlatPolar, [0.0, 0.0], [1.0, 1.0], 1.0, &Options::default()),
        Err(Error::SingularMetric { lambda: 0.0 })
    );
}

#[test]
fn step_budget_is_enforced() {
    let (x0, u0) = straight_line_start(0.3, 0.8);
    let opts = Options {
        max_steps: 5,
        ..Options::default()
    };
    match integrate(&FlatPolar, x0, u0, 1000.0, &opts) {
        Err(Error::MaxSteps { steps: 5, lambda }) => assert!(lambda > 0.0 && lambda < 1000.0),
        other => panic!("expected MaxSteps, got {other:?}"),
    }
}

#[test]
fn finite_time_blowup_underflows_the_step() {
    for method in [Method::DormandPrince54, Method::DormandPrince853] {
        match integrate(&BLOWUP, [0.0], [1.0], 5.0, &Options::with_method(method)) {
            Err(Error::StepSizeUnderflow { lambda, step }) => {
                assert!(
                    (lambda - 1.0).abs() < 1e-6 && step > 0.0,
                    "{method:?}: at {lambda}"
                )
            }
            other => panic!("{method:?}: expected StepSizeUnderflow, got {other:?}"),
        }
    }
}

#[test]
fn invalid_options_are_reported_not_panicked() {
    let (x0, u0) = straight_line_start(0.3, 0.8);
    let d = Options::default();
    for bad in [
        Options { rtol: -1.0, ..d },
        Options {
            rtol: 0.0,
            atol: 0.0,
            ..d
        },
        Options {
            atol: f64::NAN,
            ..d
        },
        Options { max_steps: 0, ..d },
        Options {
            fixed_step: Some(0.0),
            ..d
        },
        Options {
            initial_step: Some(f64::INFINITY),
            ..d
        },
        Options {
            max_step: Some(-1.0),
            ..d
        },
    ] {
        assert!(
            matches!(
                integrate(&FlatPolar, x0, u0, 1.0, &bad),
                Err(Error::InvalidInput { .. })
            ),
            "{bad:?}"
        );
    }
    assert!(matches!(
        integrate(&FlatPolar, x0, u0, f64::NAN, &d),
        Err(Error::InvalidInput { .. })
    ));
    let bh = Schwarzschild { m: 1.0 };
    let mut wrong = CoordinateCrossing::plane(7, 0.0);
    let mut events: [&mut dyn Event<4>; 1] = [&mut wrong];
    let r = integrate_with_events(
        &bh,
        [0.0, 10.0, 1.0, 0.0],
        [1.2, 0.0, 0.0, 0.01],
        1.0,
        &d,
        &mut events,
    );
    assert!(matches!(r, Err(Error::InvalidInput { .. })));
}

#[test]
fn zero_length_and_backward_integration() {
    let (x0, u0) = straight_line_start(0.3, 0.8);
    let out = integrate(&FlatPolar, x0, u0, 0.0, &Options::default()).unwrap();
    assert_eq!((out.x, out.lambda, out.stats.steps), (x0, 0.0, 0));
    // Backwards along the line: λ = -1 puts the point at Cartesian (0.7, -0.8).
    for method in Method::ALL {
        let opts = Options {
            fixed_step: (!method.is_adaptive()).then_some(0.01),
            ..Options::with_method(method)
        };
        let out = integrate(&FlatPolar, x0, u0, -1.0, &opts).unwrap();
        assert_eq!(out.lambda, -1.0);
        let expected = common::straight_line(0.3, 0.8, -1.0);
        assert!(
            (out.x[0] - expected[0]).abs() < 1e-7,
            "{method:?}: {:?} vs {expected:?}",
            out.x
        );
        assert!(
            (out.x[1] - expected[1]).abs() < 1e-7,
            "{method:?}: {:?} vs {expected:?}",
            out.x
        );
    }
}

#[test]
fn errors_display_as_one_line() {
    let e = Error::SingularMetric { lambda: 1.5 };
    let s = e.to_string();
    assert!(s.contains("1.5e0") && !s.contains('\n'), "{s}");
    let boxed: Box<dyn std::error::Error> = Box::new(e);
    assert_eq!(boxed.to_string(), s);
}
