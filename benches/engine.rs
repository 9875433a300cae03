//! Derivation and scheduling time of the engine, and the generated kernels' call time.
//!
//! Run: `cargo bench --bench engine`. The engine runs inside the compiler in a user's
//! unoptimized build too; `symbolic/tests/op_counts.rs` prints that debug-build figure.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use geokern_symbolic::model::compile;
use geokern_symbolic::parse::parse_str;

geokern::include_metric!("examples/metrics/kerr_bl.gk");
geokern::include_metric!("examples/metrics/kerr_schild.gk");

geokern::metric! {
    /// Kerr with the curvature kernels, for the Kretschmann figures.
    pub struct KerrCurved {
        coords: [t, r, theta, phi],
        params: [m, a],
        options: [curvature],
        let sigma = r.powi(2) + (a * theta.cos()).powi(2);
        let delta = r.powi(2) - 2.0 * m * r + a.powi(2);
        g[t, t] = -(1.0 - 2.0 * m * r / sigma);
        g[t, phi] = -2.0 * m * a * r * theta.sin().powi(2) / sigma;
        g[r, r] = sigma / delta;
        g[theta, theta] = sigma;
        g[phi, phi] = (r.powi(2) + a.powi(2)
            + 2.0 * m * r * (a * theta.sin()).powi(2) / sigma) * theta.sin().powi(2);
    }
}

fn derive(c: &mut Criterion) {
    for (name, text) in [
        ("kerr_bl", include_str!("../examples/metrics/kerr_bl.gk")),
        (
            "kerr_schild",
            include_str!("../examples/metrics/kerr_schild.gk"),
        ),
    ] {
        let file = parse_str(text).expect("example parses");
        c.bench_function(&format!("derive+schedule/{name}"), |b| {
            b.iter(|| compile(black_box(&file.metrics[0])).expect("compiles"))
        });
    }
}

fn kernels(c: &mut Criterion) {
    let kerr = Kerr::new(1.0, 0.9);
    let ks = KerrSchild::new(1.0, 0.9);
    let x = [0.0, 7.0, 1.1, 0.4];
    let u = [1.2, -0.1, 0.02, 0.05];
    let xc = [0.0, 4.0, 3.0, 2.5];
    c.bench_function("accel/kerr_bl", |b| {
        b.iter(|| kerr.geodesic_accel(black_box(&x), black_box(&u)))
    });
    c.bench_function("christoffel/kerr_bl", |b| {
        b.iter(|| kerr.christoffel(black_box(&x)))
    });
    c.bench_function("accel/kerr_schild", |b| {
        b.iter(|| ks.geodesic_accel(black_box(&xc), black_box(&u)))
    });
    c.bench_function("christoffel/kerr_schild", |b| {
        b.iter(|| ks.christoffel(black_box(&xc)))
    });
    let curved: KerrCurved = KerrCurved::new(1.0, 0.9);
    println!(
        "kretschmann/kerr_bl ops: {}",
        KerrCurved::<f64>::KRETSCHMANN_OPS.total()
    );
    c.bench_function("kretschmann/kerr_bl", |b| {
        b.iter(|| curved.kretschmann(black_box(&x)))
    });
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20).measurement_time(std::time::Duration::from_secs(2));
    targets = derive, kernels
}
criterion_main!(benches);
