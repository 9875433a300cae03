//! The tape evaluator against the kernels `geokern::include_metric!` compiles, on the Kerr
//! geodesic acceleration (the kernel an integrator calls most).

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use geokern::MetricKernels;
use geokern_cli::source;
use geokern_cli::tape::{Inputs, Tape};
use geokern_cli::tape_metric::{TapeMetric, TapeSet};
use geokern_symbolic::program::KernelKind;

geokern::include_metric!("../examples/metrics/kerr_bl.gk");

const SOURCE: &str = include_str!("../../examples/metrics/kerr_bl.gk");

fn bench(c: &mut Criterion) {
    let loaded =
        source::load_bytes("kerr_bl.gk", SOURCE.as_bytes(), None).expect("kerr_bl derives");
    let params = [1.0, 0.9];
    let x = [0.0, 7.5, 1.2, 0.3];
    let u = [1.2, 0.05, 0.01, 0.03];
    let compiled = Kerr::new(params[0], params[1]);
    let tape = Tape::compile(loaded.kernels.program(KernelKind::Accel), 2).expect("tape");
    let mut registers = tape.registers(&params);
    let set = TapeSet::new(&loaded.kernels, &params).expect("tapes");
    let view = TapeMetric::<4>::new(&set).expect("four dimensions");

    let mut group = c.benchmark_group("kerr_geodesic_accel");
    group.bench_function("compiled", |b| {
        b.iter(|| compiled.geodesic_accel(black_box(&x), black_box(&u)))
    });
    group.bench_function("tape", |b| {
        let mut out = [0.0; 4];
        b.iter(|| {
            tape.eval(
                &mut registers,
                &Inputs {
                    x: black_box(&x),
                    u: black_box(&u),
                    ..Inputs::default()
                },
                &mut out,
            );
            out
        })
    });
    group.bench_function("tape_metric", |b| {
        b.iter(|| view.geodesic_accel(black_box(&x), black_box(&u)))
    });
    group.finish();

    let mut group = c.benchmark_group("kerr_christoffel");
    group.bench_function("compiled", |b| {
        b.iter(|| compiled.christoffel(black_box(&x)))
    });
    group.bench_function("tape_metric", |b| {
        b.iter(|| view.christoffel(black_box(&x)))
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
