//! The untimed facts `scripts/benchmarks.py` puts beside the timings in `BENCHMARKS.md`, as one
//! JSON object on stdout: operation counts of the generated kernels and of the tapes, and the
//! accuracy of every route against the generated kernels over the sample points.
//!
//! Run: `cargo run --release -p geokern-bench --example facts`.

use geokern::{f64x4, OpCount};
use geokern_bench::{
    cas, flatten, hand, points, relative_error, DualRoute, FiniteDifferenceRoute, Kerr, KerrSchild,
    Route,
};
use geokern_cli::tape::Tape;
use geokern_symbolic::model::compile;
use geokern_symbolic::parse::parse_str;
use geokern_symbolic::program::KernelKind;
use serde_json::{json, Value};

type Samples = [([f64; 4], [f64; 4]); 4];

fn ops(count: OpCount) -> Value {
    json!({
        "add": count.add,
        "mul": count.mul,
        "div": count.div,
        "call": count.call,
        "total": count.total(),
    })
}

/// The worst norm-wise relative error of `route` against `reference` over `samples`, for the
/// acceleration and the Christoffel symbols.
fn accuracy(route: &impl Route, reference: &impl Route, samples: &Samples) -> Value {
    let (mut accel, mut christoffel) = (0.0_f64, 0.0_f64);
    for (x, u) in samples {
        accel = accel.max(relative_error(
            &route.geodesic_accel(x, u),
            &reference.geodesic_accel(x, u),
        ));
        christoffel = christoffel.max(relative_error(
            &flatten(&route.christoffel(x)),
            &flatten(&reference.christoffel(x)),
        ));
    }
    json!({ "accel": accel, "christoffel": christoffel })
}

/// The worst error of the four SIMD lanes of one call against four scalar calls.
fn simd_accuracy<F, G>(simd: F, scalar: G, samples: &Samples) -> f64
where
    F: Fn(&[f64x4; 4], &[f64x4; 4]) -> [f64x4; 4],
    G: Fn(&[f64; 4], &[f64; 4]) -> [f64; 4],
{
    let x = core::array::from_fn(|i| f64x4::from(samples.map(|(x, _)| x[i])));
    let u = core::array::from_fn(|i| f64x4::from(samples.map(|(_, u)| u[i])));
    let out = simd(&x, &u);
    samples
        .iter()
        .enumerate()
        .map(|(lane, (x, u))| relative_error(&out.map(|v| v.to_array()[lane]), &scalar(x, u)))
        .fold(0.0, f64::max)
}

fn tape_ops(source: &str) -> Value {
    let file = parse_str(source).expect("example metric parses");
    let set = compile(&file.metrics[0]).expect("example metric derives");
    let n = set.params.len();
    let len = |kind| {
        Tape::compile(set.program(kind), n)
            .expect("tape compiles")
            .op_len()
    };
    json!({
        "accel": len(KernelKind::Accel),
        "christoffel": len(KernelKind::Christoffel),
    })
}

fn main() {
    let [m, a] = points::PARAMS;
    let (sm, sa) = (f64x4::splat(m), f64x4::splat(a));
    let bl = Kerr::new(m, a);
    let ks = KerrSchild::new(m, a);
    let facts = json!({
        "params": points::PARAMS,
        "kerr_bl": {
            "accel_ops": ops(Kerr::<f64>::ACCEL_OPS),
            "christoffel_ops": ops(Kerr::<f64>::CHRISTOFFEL_OPS),
            "tape_ops": tape_ops(include_str!("../../examples/metrics/kerr_bl.gk")),
            "accuracy": {
                "cas_c": accuracy(&cas::CasKerrBl::new(m, a), &bl, &points::KERR_BL),
                "dual": accuracy(&DualRoute(hand::KerrBl { m, a }), &bl, &points::KERR_BL),
                "finite_difference": accuracy(
                    &FiniteDifferenceRoute(hand::KerrBl { m, a }), &bl, &points::KERR_BL),
                "simd_accel": simd_accuracy(
                    |x, u| Kerr::<f64x4>::new(sm, sa).geodesic_accel(x, u),
                    |x, u| bl.geodesic_accel(x, u),
                    &points::KERR_BL),
            },
        },
        "kerr_schild": {
            "accel_ops": ops(KerrSchild::<f64>::ACCEL_OPS),
            "christoffel_ops": ops(KerrSchild::<f64>::CHRISTOFFEL_OPS),
            "tape_ops": tape_ops(include_str!("../../examples/metrics/kerr_schild.gk")),
            "accuracy": {
                "cas_c": accuracy(&cas::CasKerrSchild::new(m, a), &ks, &points::KERR_SCHILD),
                "dual": accuracy(
                    &DualRoute(hand::KerrSchild { m, a }), &ks, &points::KERR_SCHILD),
                "finite_difference": accuracy(
                    &FiniteDifferenceRoute(hand::KerrSchild { m, a }), &ks, &points::KERR_SCHILD),
                "simd_accel": simd_accuracy(
                    |x, u| KerrSchild::<f64x4>::new(sm, sa).geodesic_accel(x, u),
                    |x, u| ks.geodesic_accel(x, u),
                    &points::KERR_SCHILD),
            },
        },
    });
    println!(
        "{}",
        serde_json::to_string_pretty(&facts).expect("JSON of numbers and strings serialises")
    );
}
