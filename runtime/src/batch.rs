//! Many geodesics of one metric at once, in parallel (rayon).
//!
//! Every geodesic is integrated on its own by [`integrate`], so each result is bit-for-bit
//! what a sequential call gives, whatever the number of threads; results come back in the
//! order of the starts.

use rayon::prelude::*;

use crate::driver::Outcome;
use crate::error::Error;
use crate::integrate::{integrate, Options};
use crate::MetricKernels;

/// Integrates each start `(x0, u0)` from λ = 0 to `lambda_end` with the same options, in
/// parallel on rayon's current thread pool.
///
/// ```
/// # use geokern_runtime::{integrate_batch, MetricKernels, Options};
/// # struct Line;
/// # impl MetricKernels<f64, 1> for Line {
/// #     fn coordinate_names(&self) -> &[&str] { &["x"] }
/// #     fn metric(&self, _: &[f64; 1]) -> [[f64; 1]; 1] { [[1.0]] }
/// #     fn inverse_metric(&self, _: &[f64; 1]) -> [[f64; 1]; 1] { [[1.0]] }
/// #     fn christoffel(&self, _: &[f64; 1]) -> [[[f64; 1]; 1]; 1] { [[[0.0]]] }
/// #     fn geodesic_accel(&self, _: &[f64; 1], _: &[f64; 1]) -> [f64; 1] { [0.0] }
/// #     fn hamilton_rhs(&self, _: &[f64; 1], p: &[f64; 1]) -> ([f64; 1], [f64; 1]) { (*p, [0.0]) }
/// #     fn parallel_transport(&self, _: &[f64; 1], _: &[f64; 1], v: &[f64; 1]) -> [f64; 1] { *v }
/// #     fn norm(&self, _: &[f64; 1], u: &[f64; 1]) -> f64 { u[0] * u[0] }
/// #     fn conserved_names(&self) -> &[&str] { &[] }
/// #     fn conserved(&self, _: &[f64; 1], _: &[f64; 1], _: &mut [f64]) {}
/// #     fn invariant_names(&self) -> &[&str] { &[] }
/// #     fn invariants(&self, _: &[f64; 1], _: &[f64; 1], _: &mut [f64]) {}
/// # }
/// let starts: Vec<([f64; 1], [f64; 1])> = (0..8).map(|i| ([0.0], [i as f64])).collect();
/// let results = integrate_batch(&Line, &starts, 2.0, &Options::default());
/// for (i, r) in results.iter().enumerate() {
///     assert!((r.as_ref().unwrap().x[0] - 2.0 * i as f64).abs() < 1e-12);
/// }
/// ```
pub fn integrate_batch<M, const N: usize>(
    metric: &M,
    starts: &[([f64; N], [f64; N])],
    lambda_end: f64,
    options: &Options,
) -> Vec<Result<Outcome<N>, Error>>
where
    M: MetricKernels<f64, N> + Sync,
{
    starts
        .par_iter()
        .map(|(x0, u0)| integrate(metric, *x0, *u0, lambda_end, options))
        .collect()
}
