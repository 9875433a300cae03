//! The parallel batch integrator gives exactly the sequential results, for any thread count.
#![cfg(feature = "std")]

mod common;

use common::Schwarzschild;
use geokern_runtime::{integrate, integrate_batch, Method, Options};
use std::f64::consts::FRAC_PI_2;

#[test]
fn batch_results_do_not_depend_on_thread_count() {
    let bh = Schwarzschild { m: 1.0 };
    let starts: Vec<([f64; 4], [f64; 4])> = (0..24)
        .map(|i| {
            let r = 8.0 + i as f64 * 0.5;
            let f = 1.0 - 2.0 / r;
            let uphi = 0.9 * (1.0 / (r * r * r)).sqrt();
            // Unit timelike: -f ut² + r² uphi² = -1.
            let ut = ((1.0 + r * r * uphi * uphi) / f).sqrt();
            ([0.0, r, FRAC_PI_2, 0.0], [ut, 0.0, 0.0, uphi])
        })
        .collect();
    for method in [Method::DormandPrince54, Method::GaussLegendre4] {
        let opts = Options {
            fixed_step: (!method.is_adaptive()).then_some(0.5),
            ..Options::with_method(method)
        };
        let sequential: Vec<_> = starts
            .iter()
            .map(|(x, u)| integrate(&bh, *x, *u, 100.0, &opts))
            .collect();
        for threads in [1, 2, 3] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            let batch = pool.install(|| integrate_batch(&bh, &starts, 100.0, &opts));
            assert_eq!(batch, sequential, "{method:?} with {threads} threads");
        }
    }
}
