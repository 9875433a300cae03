//! Every benchmarked route computes the same Christoffel symbols and geodesic acceleration as
//! the kernels `geokern::include_metric!` generates, at every sample point: so the benchmarks
//! time equal work, and the computer-algebra C, the hand-written metrics and the tape stay
//! honest.
//!
//! Tolerances (norm-wise relative, see `geokern_bench::relative_error`): 1e-12 for the routes
//! exact up to rounding (computer-algebra C, dual numbers, tape, SIMD lanes), 1e-6 for central
//! finite differences, whose truncation and rounding errors are O(ε^(2/3)) ≈ 4e-11 times the
//! size of the third derivatives over the second (common practice).

use geokern::f64x4;
use geokern_bench::hand::{self, HandMetric};
use geokern_bench::{
    cas, flatten, points, relative_error, DualRoute, FiniteDifferenceRoute, Kerr, KerrSchild, Route,
};
use geokern_cli::tape::{Inputs, Tape};
use geokern_symbolic::model::compile;
use geokern_symbolic::parse::parse_str;
use geokern_symbolic::program::KernelKind;

const EXACT: f64 = 1e-12;
const FINITE_DIFFERENCE: f64 = 1e-6;

type Samples = [([f64; 4], [f64; 4]); 4];

/// Asserts `route` meets `reference` within `tolerance` at every sample, for both kernels.
fn check(name: &str, route: &impl Route, reference: &impl Route, samples: &Samples, tol: f64) {
    for (x, u) in samples {
        let want = reference.geodesic_accel(x, u);
        let got = route.geodesic_accel(x, u);
        let e = relative_error(&got, &want);
        assert!(
            e < tol,
            "{name} accel at {x:?}: {got:?} vs {want:?} ({e:e})"
        );
        let want = flatten(&reference.christoffel(x));
        let got = flatten(&route.christoffel(x));
        let e = relative_error(&got, &want);
        assert!(e < tol, "{name} christoffel at {x:?}: relative error {e:e}");
    }
}

#[test]
fn computer_algebra_c_agrees_with_the_generated_kernels() {
    let [m, a] = points::PARAMS;
    check(
        "kerr_bl",
        &cas::CasKerrBl::new(m, a),
        &Kerr::new(points::PARAMS[0], points::PARAMS[1]),
        &points::KERR_BL,
        EXACT,
    );
    check(
        "kerr_schild",
        &cas::CasKerrSchild::new(m, a),
        &KerrSchild::new(points::PARAMS[0], points::PARAMS[1]),
        &points::KERR_SCHILD,
        EXACT,
    );
}

#[test]
fn dual_numbers_agree_with_the_generated_kernels() {
    let [m, a] = points::PARAMS;
    check(
        "kerr_bl",
        &DualRoute(hand::KerrBl { m, a }),
        &Kerr::new(points::PARAMS[0], points::PARAMS[1]),
        &points::KERR_BL,
        EXACT,
    );
    check(
        "kerr_schild",
        &DualRoute(hand::KerrSchild { m, a }),
        &KerrSchild::new(points::PARAMS[0], points::PARAMS[1]),
        &points::KERR_SCHILD,
        EXACT,
    );
}

#[test]
fn finite_differences_agree_with_the_generated_kernels() {
    let [m, a] = points::PARAMS;
    check(
        "kerr_bl",
        &FiniteDifferenceRoute(hand::KerrBl { m, a }),
        &Kerr::new(points::PARAMS[0], points::PARAMS[1]),
        &points::KERR_BL,
        FINITE_DIFFERENCE,
    );
    check(
        "kerr_schild",
        &FiniteDifferenceRoute(hand::KerrSchild { m, a }),
        &KerrSchild::new(points::PARAMS[0], points::PARAMS[1]),
        &points::KERR_SCHILD,
        FINITE_DIFFERENCE,
    );
}

#[test]
fn hand_written_metrics_equal_the_declared_ones() {
    let [m, a] = points::PARAMS;
    for (x, _) in points::KERR_BL {
        let got = hand::KerrBl { m, a }.metric(&x);
        let want = Kerr::new(m, a).metric(&x);
        let e = relative_error(got.as_flattened(), want.as_flattened());
        assert!(e < EXACT, "kerr_bl g at {x:?}: {e:e}");
    }
    for (x, _) in points::KERR_SCHILD {
        let got = hand::KerrSchild { m, a }.metric(&x);
        let want = KerrSchild::new(m, a).metric(&x);
        let e = relative_error(got.as_flattened(), want.as_flattened());
        assert!(e < EXACT, "kerr_schild g at {x:?}: {e:e}");
    }
}

/// The tape evaluator on the engine's programs, through [`Route`].
struct TapeRoute {
    christoffel: Tape,
    accel: Tape,
}

impl TapeRoute {
    fn new(source: &str) -> TapeRoute {
        let file = parse_str(source).expect("example metric parses");
        let set = compile(&file.metrics[0]).expect("example metric derives");
        let n = set.params.len();
        TapeRoute {
            christoffel: Tape::compile(set.program(KernelKind::Christoffel), n).expect("tape"),
            accel: Tape::compile(set.program(KernelKind::Accel), n).expect("tape"),
        }
    }
}

impl Route for TapeRoute {
    fn christoffel(&self, x: &[f64; 4]) -> [[[f64; 4]; 4]; 4] {
        let mut out = [[[0.0; 4]; 4]; 4];
        let mut registers = self.christoffel.registers(&points::PARAMS);
        let at = Inputs {
            x,
            ..Inputs::default()
        };
        let flat = out.as_flattened_mut().as_flattened_mut();
        self.christoffel.eval(&mut registers, &at, flat);
        out
    }
    fn geodesic_accel(&self, x: &[f64; 4], u: &[f64; 4]) -> [f64; 4] {
        let mut out = [0.0; 4];
        let mut registers = self.accel.registers(&points::PARAMS);
        let at = Inputs {
            x,
            u,
            ..Inputs::default()
        };
        self.accel.eval(&mut registers, &at, &mut out);
        out
    }
}

#[test]
fn tape_evaluator_agrees_with_the_generated_kernels() {
    let bl = TapeRoute::new(include_str!("../../examples/metrics/kerr_bl.gk"));
    check(
        "kerr_bl",
        &bl,
        &Kerr::new(points::PARAMS[0], points::PARAMS[1]),
        &points::KERR_BL,
        EXACT,
    );
    let ks = TapeRoute::new(include_str!("../../examples/metrics/kerr_schild.gk"));
    check(
        "kerr_schild",
        &ks,
        &KerrSchild::new(points::PARAMS[0], points::PARAMS[1]),
        &points::KERR_SCHILD,
        EXACT,
    );
}

#[test]
fn simd_lanes_agree_with_scalar_calls() {
    let [m, a] = points::PARAMS;
    let (sm, sa) = (f64x4::splat(m), f64x4::splat(a));
    fn lanes(samples: &Samples) -> ([f64x4; 4], [f64x4; 4]) {
        let x = core::array::from_fn(|i| f64x4::from(samples.map(|(x, _)| x[i])));
        let u = core::array::from_fn(|i| f64x4::from(samples.map(|(_, u)| u[i])));
        (x, u)
    }
    let (xs, us) = lanes(&points::KERR_BL);
    let accel = Kerr::<f64x4>::new(sm, sa).geodesic_accel(&xs, &us);
    for (lane, (x, u)) in points::KERR_BL.iter().enumerate() {
        let got = accel.map(|v| v.to_array()[lane]);
        let e = relative_error(&got, &Kerr::new(m, a).geodesic_accel(x, u));
        assert!(e < EXACT, "kerr_bl lane {lane}: {e:e}");
    }
    let (xs, us) = lanes(&points::KERR_SCHILD);
    let accel = KerrSchild::<f64x4>::new(sm, sa).geodesic_accel(&xs, &us);
    for (lane, (x, u)) in points::KERR_SCHILD.iter().enumerate() {
        let got = accel.map(|v| v.to_array()[lane]);
        let e = relative_error(&got, &KerrSchild::new(m, a).geodesic_accel(x, u));
        assert!(e < EXACT, "kerr_schild lane {lane}: {e:e}");
    }
}
