//! The tape evaluator and the native evaluator against the kernels `geokern::include_metric!`
//! compiles from the same metric files, side by side: the Kerr geodesic acceleration (the kernel an integrator calls
//! most) and Christoffel symbols, in Boyer-Lindquist and in Kerr-Schild coordinates. What
//! matters is the ratio of `tape` to `compiled` within one run, not the times themselves.

use criterion::measurement::WallTime;
use criterion::{black_box, criterion_group, criterion_main, BenchmarkGroup, Criterion};
use geokern::MetricKernels;
use geokern_cli::native::NativeKernel;
use geokern_cli::source;
use geokern_cli::tape::{Inputs, Tape};
use geokern_cli::tape_metric::{Evaluator, TapeMetric, TapeSet};
use geokern_symbolic::program::KernelKind;

geokern::include_metric!("../examples/metrics/kerr_bl.gk");
geokern::include_metric!("../examples/metrics/kerr_schild.gk");

const KERR_BL: &str = include_str!("../../examples/metrics/kerr_bl.gk");
const KERR_SCHILD: &str = include_str!("../../examples/metrics/kerr_schild.gk");

/// Times one evaluator of the CLI, `eval`, at `(x, u)` as function `name` of `group`.
fn evaluator(
    group: &mut BenchmarkGroup<'_, WallTime>,
    name: &str,
    output_len: usize,
    (x, u): ([f64; 4], [f64; 4]),
    mut eval: impl FnMut(&Inputs<'_>, &mut [f64]),
) {
    group.bench_function(name, |b| {
        let mut out = vec![0.0; output_len];
        b.iter(|| {
            let inputs = Inputs {
                x: black_box(&x),
                u: black_box(&u),
                ..Inputs::default()
            };
            eval(&inputs, &mut out);
            black_box(&out);
        })
    });
}

/// Times `compiled`, the tape and the native code of `kind` on one point, as group `name`.
fn tape_against<F, R>(
    c: &mut Criterion,
    name: &str,
    file: (&str, &str),
    kind: KernelKind,
    (x, u): ([f64; 4], [f64; 4]),
    compiled: F,
) where
    F: Fn(&[f64; 4], &[f64; 4]) -> R,
{
    let params = [1.0, 0.9];
    let loaded = source::load_bytes(file.0, file.1.as_bytes(), None).expect("example derives");
    let tape = Tape::compile(loaded.kernels.program(kind), 2).expect("tape");
    let native = NativeKernel::compile(loaded.kernels.program(kind), 2).ok();
    let mut registers = tape.registers(&params);
    let mut group = c.benchmark_group(name);
    group.bench_function("compiled", |b| {
        b.iter(|| compiled(black_box(&x), black_box(&u)))
    });
    evaluator(
        &mut group,
        "tape",
        tape.output_len(),
        (x, u),
        |inputs, out| tape.eval(&mut registers, inputs, out),
    );
    // Hosts without a code generator measure the tape only.
    if let Some(native) = native {
        evaluator(
            &mut group,
            "native",
            native.output_len(),
            (x, u),
            |inputs, out| native.eval(black_box(&params), inputs, out),
        );
    }
    group.finish();
}

fn bench(c: &mut Criterion) {
    let bl = Kerr::new(1.0, 0.9);
    let bl_point = ([0.0, 7.5, 1.2, 0.3], [1.2, 0.05, 0.01, 0.03]);
    let ks = KerrSchild::new(1.0, 0.9);
    let ks_point = ([0.0, 6.0, 3.5, 2.0], [1.2, 0.05, -0.03, 0.02]);
    let bl_file = ("kerr_bl.gk", KERR_BL);
    let ks_file = ("kerr_schild.gk", KERR_SCHILD);
    tape_against(
        c,
        "kerr_geodesic_accel",
        bl_file,
        KernelKind::Accel,
        bl_point,
        |x, u| bl.geodesic_accel(x, u),
    );
    tape_against(
        c,
        "kerr_christoffel",
        bl_file,
        KernelKind::Christoffel,
        bl_point,
        |x, _| bl.christoffel(x),
    );
    tape_against(
        c,
        "kerr_schild_geodesic_accel",
        ks_file,
        KernelKind::Accel,
        ks_point,
        |x, u| ks.geodesic_accel(x, u),
    );
    tape_against(
        c,
        "kerr_schild_christoffel",
        ks_file,
        KernelKind::Christoffel,
        ks_point,
        |x, _| ks.christoffel(x),
    );

    // What the native evaluator costs up front: all nine kernels of a metric compiled.
    let mut group = c.benchmark_group("native_compile_all_kernels");
    group.sample_size(20);
    for (name, text) in [bl_file, ks_file] {
        let loaded = source::load_bytes(name, text.as_bytes(), None).expect("derives");
        group.bench_function(name, |b| {
            b.iter(|| {
                TapeSet::with_evaluator(&loaded.kernels, &[1.0, 0.9], Evaluator::Native)
                    .expect("compiles")
            })
        });
    }
    group.finish();

    // The runtime's trait driven through tapes (a register file per kernel, borrowed per call).
    let loaded = source::load_bytes(bl_file.0, KERR_BL.as_bytes(), None).expect("derives");
    let set = TapeSet::new(&loaded.kernels, &[1.0, 0.9]).expect("tapes");
    let view = TapeMetric::<4>::new(&set).expect("four dimensions");
    let (x, u) = bl_point;
    c.bench_function("kerr_geodesic_accel/tape_metric", |b| {
        b.iter(|| view.geodesic_accel(black_box(&x), black_box(&u)))
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);
