//! The renderer on a 128×128 Kerr image (m = 1, a = 0.9, disk from 6 to 20, camera at r = 60
//! and 80°), in both forms of the geodesic equations, plus the rays per second and
//! evaluations per ray of one render printed beside criterion's timing.

use std::sync::atomic::AtomicUsize;
use std::time::Instant;

use criterion::{criterion_group, criterion_main, Criterion};
use geokern_cli::render::{render, Equations, Scene, SceneOptions};
use geokern_cli::source;

const KERR_BL: &str = include_str!("../../examples/metrics/kerr_bl.gk");

fn bench_render(c: &mut Criterion) {
    let loaded = match source::load_bytes("kerr_bl.gk", KERR_BL.as_bytes(), None) {
        Ok(l) => l,
        Err(e) => panic!("the example derives: {e}"),
    };
    let mut group = c.benchmark_group("render_kerr_128");
    group.sample_size(10);
    for equations in [Equations::Hamilton, Equations::Accel] {
        let options = SceneOptions {
            size: (128, 128),
            equations,
            ..SceneOptions::default()
        };
        let scene = match Scene::new(&loaded.kernels, &[1.0, 0.9], &options) {
            Ok(s) => s,
            Err(e) => panic!("scene: {e}"),
        };
        let once = || match render(&scene, &AtomicUsize::new(0)) {
            Ok(r) => r,
            Err(e) => panic!("render: {e}"),
        };
        let started = Instant::now();
        let rendered = once();
        let seconds = started.elapsed().as_secs_f64();
        let n = rendered.counts.rays as f64;
        println!(
            "{}: {:.0} rays/s, {:.1} RHS evaluations per ray, {:.1} steps per ray",
            equations.name(),
            n / seconds,
            rendered.counts.evaluations as f64 / n,
            rendered.counts.steps as f64 / n
        );
        group.bench_function(equations.name(), |b| b.iter(once));
    }
    group.finish();
}

criterion_group!(benches, bench_render);
criterion_main!(benches);
