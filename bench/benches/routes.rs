//! geokern's kernels against the other routes to the same numbers, on Kerr in Boyer-Lindquist
//! and in Kerr-Schild form: the `geodesic_accel` and `christoffel` call of each route, and the
//! engine's derivation time.
//!
//! Run through `scripts/benchmarks.py`, which writes `BENCHMARKS.md` from criterion's
//! estimates; the names of groups and functions here are the keys it reads.

use std::hint::black_box;
use std::time::Duration;

use criterion::measurement::WallTime;
use criterion::{criterion_group, criterion_main, BenchmarkGroup, Criterion, SamplingMode};
use geokern::f64x4;
use geokern_bench::{cas, hand, points, DualRoute, FiniteDifferenceRoute, Kerr, KerrSchild, Route};
use geokern_cli::native::NativeKernel;
use geokern_cli::tape::{Inputs, Tape};
use geokern_symbolic::kernels::KernelSet;
use geokern_symbolic::model::compile;
use geokern_symbolic::parse::parse_str;
use geokern_symbolic::program::KernelKind;

const KERR_BL_SOURCE: &str = include_str!("../../examples/metrics/kerr_bl.gk");
const KERR_SCHILD_SOURCE: &str = include_str!("../../examples/metrics/kerr_schild.gk");

fn kernels(source: &str) -> KernelSet {
    let file = parse_str(source).expect("example metric parses");
    compile(&file.metrics[0]).expect("example metric derives")
}

/// The four sample points as one point of four lanes.
fn lanes(samples: &[([f64; 4], [f64; 4]); 4]) -> ([f64x4; 4], [f64x4; 4]) {
    let x = core::array::from_fn(|i| f64x4::from(samples.map(|(x, _)| x[i])));
    let u = core::array::from_fn(|i| f64x4::from(samples.map(|(_, u)| u[i])));
    (x, u)
}

/// Times one of the CLI's evaluators, `eval`, at `x` (and `u`, for kernels that read it) as
/// function `name` of `group`.
fn evaluator<const K: usize>(
    group: &mut BenchmarkGroup<'_, WallTime>,
    name: &str,
    (x, u): (&[f64; 4], Option<&[f64; 4]>),
    mut eval: impl FnMut(&Inputs<'_>, &mut [f64; K]),
) {
    group.bench_function(name, |b| {
        let mut out = [0.0; K];
        b.iter(|| {
            let at = Inputs {
                x: black_box(x),
                u: black_box(u.map_or(&[][..], |u| &u[..])),
                ..Inputs::default()
            };
            eval(&at, &mut out);
            out
        })
    });
}

/// The benchmarks of one metric: `$label_geodesic_accel/<route>` and
/// `$label_christoffel/<route>`. `macro_simd_x4` times one call that serves four geodesics.
macro_rules! metric_benches {
    ($fn_name:ident, $label:literal, $generated:ident, $cas:ty, $hand:ident, $source:expr, $samples:expr) => {
        fn $fn_name(c: &mut Criterion) {
            let [m, a] = points::PARAMS;
            let (x, u) = $samples[0];
            let generated = $generated::new(m, a);
            let simd = $generated::<f64x4>::new(f64x4::splat(m), f64x4::splat(a));
            let (xs, us) = lanes(&$samples);
            let cas = <$cas>::new(m, a);
            let dual = DualRoute(hand::$hand { m, a });
            let finite = FiniteDifferenceRoute(hand::$hand { m, a });
            let set = kernels($source);
            let n_params = set.params.len();
            let accel_tape =
                Tape::compile(set.program(KernelKind::Accel), n_params).expect("accel tape");
            let chris_tape = Tape::compile(set.program(KernelKind::Christoffel), n_params)
                .expect("christoffel tape");
            let accel_native = NativeKernel::compile(set.program(KernelKind::Accel), n_params)
                .expect("accel compiles natively");
            let chris_native =
                NativeKernel::compile(set.program(KernelKind::Christoffel), n_params)
                    .expect("christoffel compiles natively");
            let mut accel_registers = accel_tape.registers(&points::PARAMS);
            let mut chris_registers = chris_tape.registers(&points::PARAMS);

            let mut group = c.benchmark_group(concat!($label, "_geodesic_accel"));
            group.bench_function("macro", |b| {
                b.iter(|| generated.geodesic_accel(black_box(&x), black_box(&u)))
            });
            group.bench_function("macro_simd_x4", |b| {
                b.iter(|| simd.geodesic_accel(black_box(&xs), black_box(&us)))
            });
            group.bench_function("cas_c", |b| {
                b.iter(|| cas.geodesic_accel(black_box(&x), black_box(&u)))
            });
            group.bench_function("dual", |b| {
                b.iter(|| dual.geodesic_accel(black_box(&x), black_box(&u)))
            });
            group.bench_function("finite_difference", |b| {
                b.iter(|| finite.geodesic_accel(black_box(&x), black_box(&u)))
            });
            evaluator(
                &mut group,
                "tape",
                (&x, Some(&u)),
                |at, out: &mut [f64; 4]| accel_tape.eval(&mut accel_registers, at, out),
            );
            evaluator(
                &mut group,
                "native",
                (&x, Some(&u)),
                |at, out: &mut [f64; 4]| accel_native.eval(black_box(&points::PARAMS), at, out),
            );
            group.finish();

            let mut group = c.benchmark_group(concat!($label, "_christoffel"));
            group.bench_function("macro", |b| b.iter(|| generated.christoffel(black_box(&x))));
            group.bench_function("macro_simd_x4", |b| {
                b.iter(|| simd.christoffel(black_box(&xs)))
            });
            group.bench_function("cas_c", |b| b.iter(|| cas.christoffel(black_box(&x))));
            group.bench_function("dual", |b| b.iter(|| dual.christoffel(black_box(&x))));
            group.bench_function("finite_difference", |b| {
                b.iter(|| finite.christoffel(black_box(&x)))
            });
            evaluator(&mut group, "tape", (&x, None), |at, out: &mut [f64; 64]| {
                chris_tape.eval(&mut chris_registers, at, out)
            });
            evaluator(
                &mut group,
                "native",
                (&x, None),
                |at, out: &mut [f64; 64]| chris_native.eval(black_box(&points::PARAMS), at, out),
            );
            group.finish();
        }
    };
}

metric_benches!(
    kerr_bl,
    "kerr_bl",
    Kerr,
    cas::CasKerrBl,
    KerrBl,
    KERR_BL_SOURCE,
    points::KERR_BL
);
metric_benches!(
    kerr_schild,
    "kerr_schild",
    KerrSchild,
    cas::CasKerrSchild,
    KerrSchild,
    KERR_SCHILD_SOURCE,
    points::KERR_SCHILD
);

/// The engine's derivation of every kernel (parse excluded), to set against the computer-algebra
/// script's recorded time.
fn derivation(c: &mut Criterion) {
    let mut group = c.benchmark_group("derivation");
    // One derivation takes milliseconds: flat sampling keeps the run short.
    group.sampling_mode(SamplingMode::Flat);
    for (name, source) in [
        ("kerr_bl", KERR_BL_SOURCE),
        ("kerr_schild", KERR_SCHILD_SOURCE),
    ] {
        let file = parse_str(source).expect("example metric parses");
        group.bench_function(name, |b| {
            b.iter(|| compile(black_box(&file.metrics[0])).expect("derives"))
        });
    }
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default()
        .sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2));
    targets = kerr_bl, kerr_schild, derivation
}
criterion_main!(benches);
