//! The runtime driving generated kernels: the cost of each integration method, a batch of Kerr
//! photons on one thread and on two, and four geodesics per kernel call with `f64x4`.
//!
//! Run: `cargo bench --bench runtime`. Besides Criterion's timings, the bench prints the
//! right-hand-side evaluations per accepted step of each method (from `Stats`), the
//! two-thread over one-thread throughput ratio of the batch, and the per-lane speed-up of
//! the SIMD kernel over the scalar one.

use std::hint::black_box;
use std::time::{Duration, Instant};

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use geokern::{
    f64x4, integrate, integrate_batch, on_shell, pinhole_ray, static_frame, Method, Options,
};

geokern::include_metric!("examples/metrics/kerr_bl.gk");

/// Whether this is a measuring run (`cargo bench`) rather than `cargo test` running each
/// benchmark once in a debug build, where the plain timings below would only cost time.
fn measuring() -> bool {
    std::env::args().any(|a| a == "--bench")
}

/// Options of the method comparison: default tolerances for the adaptive methods, a unit
/// step for the fixed-step ones.
fn method_options(method: Method) -> Options {
    Options {
        fixed_step: (!method.is_adaptive()).then_some(1.0),
        ..Options::with_method(method)
    }
}

/// An inclined eccentric bound orbit around a Kerr hole with a = 0.9.
fn orbit() -> (Kerr, [f64; 4], [f64; 4]) {
    let hole = Kerr::new(1.0, 0.9);
    let x0 = [0.0, 10.0, 1.0, 0.0];
    let u0 = on_shell(&hole, &x0, [1.0, 0.02, 0.035, 0.028], -1.0).expect("timelike start");
    (hole, x0, u0)
}

fn methods(c: &mut Criterion) {
    let (hole, x0, u0) = orbit();
    let lambda = 1000.0;
    println!("method  accepted  rejected  rhs evals  rhs/step  implicit iters");
    for method in Method::ALL {
        let out = integrate(&hole, x0, u0, lambda, &method_options(method)).expect("integrates");
        let s = out.stats;
        println!(
            "{:<7} {:>8} {:>9} {:>10} {:>9.2} {:>15}",
            method.name(),
            s.steps,
            s.rejected,
            s.rhs_evaluations,
            s.rhs_evaluations as f64 / s.steps as f64,
            s.implicit_iterations
        );
    }
    let mut group = c.benchmark_group("orbit_kerr_1000");
    for method in Method::ALL {
        let options = method_options(method);
        group.bench_function(method.name(), |b| {
            b.iter(|| integrate(&hole, black_box(x0), black_box(u0), lambda, &options))
        });
    }
    group.finish();
}

/// Position and velocity at λ = 0.
type Start = ([f64; 4], [f64; 4]);

/// Photons through a 24 × 16 pinhole camera at r = 25 looking at a Kerr hole (a = 0.95);
/// about a sixth of them fall in.
fn photons() -> (Kerr, Vec<Start>, Options) {
    let hole = Kerr::new(1.0, 0.95);
    let camera = [0.0, 25.0, 1.45, 0.0];
    let mut frame = static_frame(&hole, &camera).expect("static observer");
    // Look inward (-e_r) with north (-e_θ) up, as in `examples/photon_batch.rs`.
    frame[1] = frame[1].map(|c| -c);
    frame[2] = frame[2].map(|c| -c);
    let (w, h) = (24, 16);
    let starts = (0..w * h)
        .map(|i| {
            let k = pinhole_ray(&frame, 1, 3, 2, i % w, i / w, w, h, 0.9).expect("pixel");
            (camera, k)
        })
        .collect();
    let options = Options {
        rtol: 1e-8,
        atol: 1e-10,
        max_steps: 5_000,
        ..Options::with_method(Method::DormandPrince54)
    };
    (hole, starts, options)
}

fn batch(c: &mut Criterion) {
    let (hole, starts, options) = photons();
    let pools: Vec<rayon::ThreadPool> = [1, 2]
        .iter()
        .map(|n| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(*n)
                .build()
                .expect("thread pool")
        })
        .collect();
    // A plain measurement for the ratio, besides Criterion's figures.
    let mut best = [Duration::MAX; 2];
    for _ in 0..if measuring() { 5 } else { 0 } {
        for (b, pool) in best.iter_mut().zip(pools.iter()) {
            let start = Instant::now();
            black_box(pool.install(|| integrate_batch(&hole, &starts, 200.0, &options)));
            *b = (*b).min(start.elapsed());
        }
    }
    if measuring() {
        println!(
        "batch of {} Kerr photons: 1 thread {:.1} ms, 2 threads {:.1} ms, throughput ratio {:.2}",
        starts.len(),
        best[0].as_secs_f64() * 1e3,
        best[1].as_secs_f64() * 1e3,
        best[0].as_secs_f64() / best[1].as_secs_f64()
    );
    }
    let mut group = c.benchmark_group("batch_kerr_photons");
    group.throughput(Throughput::Elements(starts.len() as u64));
    for (n, pool) in [1, 2].iter().zip(pools.iter()) {
        group.bench_with_input(BenchmarkId::new("threads", n), n, |b, _| {
            b.iter(|| pool.install(|| integrate_batch(&hole, &starts, 200.0, &options)))
        });
    }
    group.finish();
}

fn simd(c: &mut Criterion) {
    let scalar = Kerr::new(1.0, 0.9);
    let lanes = Kerr::<f64x4>::new(f64x4::splat(1.0), f64x4::splat(0.9));
    let xs = [
        [0.0, 7.0, 1.1, 0.4],
        [0.0, 9.5, 0.8, 1.0],
        [0.0, 5.2, 1.5, 2.0],
        [0.0, 14.0, 2.1, 3.0],
    ];
    let us = [
        [1.2, -0.1, 0.02, 0.05],
        [1.1, 0.05, -0.01, 0.03],
        [1.5, 0.2, 0.01, 0.09],
        [1.05, -0.02, 0.004, 0.02],
    ];
    let pack = |v: &[[f64; 4]; 4]| -> [f64x4; 4] {
        core::array::from_fn(|i| f64x4::from([v[0][i], v[1][i], v[2][i], v[3][i]]))
    };
    let (x4, u4) = (pack(&xs), pack(&us));
    // The lanes compute what the scalar kernel computes.
    let got = lanes.geodesic_accel(&x4, &u4);
    for (lane, (x, u)) in xs.iter().zip(us.iter()).enumerate() {
        let want = scalar.geodesic_accel(x, u);
        for i in 0..4 {
            let g = got[i].to_array()[lane];
            assert!((g - want[i]).abs() <= 1e-12 * want[i].abs().max(1.0));
        }
    }
    let reps = if measuring() { 200_000 } else { 1 };
    let per_lane = |f: &dyn Fn()| {
        let start = Instant::now();
        for _ in 0..reps {
            f();
        }
        start.elapsed().as_secs_f64() * 1e9 / (4 * reps) as f64
    };
    let scalar_ns = per_lane(&|| {
        for (x, u) in xs.iter().zip(us.iter()) {
            black_box(scalar.geodesic_accel(black_box(x), black_box(u)));
        }
    });
    let lane_ns = per_lane(&|| {
        black_box(lanes.geodesic_accel(black_box(&x4), black_box(&u4)));
    });
    if measuring() {
        println!(
        "Kerr geodesic_accel: f64 {scalar_ns:.1} ns per geodesic, f64x4 {lane_ns:.1} ns per lane, speed-up {:.2}",
        scalar_ns / lane_ns
    );
    }
    let mut group = c.benchmark_group("accel_kerr");
    group.throughput(Throughput::Elements(1));
    group.bench_function("f64", |b| {
        b.iter(|| scalar.geodesic_accel(black_box(&xs[0]), black_box(&us[0])))
    });
    group.throughput(Throughput::Elements(4));
    group.bench_function("f64x4", |b| {
        b.iter(|| lanes.geodesic_accel(black_box(&x4), black_box(&u4)))
    });
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(10).measurement_time(Duration::from_secs(2));
    targets = methods, batch, simd
}
criterion_main!(benches);
