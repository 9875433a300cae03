//! Four ways to get the Christoffel symbols and the geodesic acceleration of a metric, for
//! geokern's benchmarks (`benches/routes.rs`, written up in `BENCHMARKS.md`):
//!
//! 1. [`Kerr`] and [`KerrSchild`]: the kernels `geokern::include_metric!` derives from
//!    `examples/metrics/*.gk` at compile time;
//! 2. [`cas`]: C printed by a general computer-algebra system (`scripts/cas_route.py`, SymPy),
//!    compiled by `build.rs`;
//! 3. [`DualRoute`]: only g_ab(x) written by hand ([`hand`]), its derivatives by forward-mode
//!    dual numbers, the inverse by LU decomposition, Γ by the textbook formula;
//! 4. [`FiniteDifferenceRoute`]: the same with central finite differences.
//!
//! Every route implements [`Route`], so benchmarks and tests call them alike.
//!
//! ```
//! use geokern_bench::{cas, hand, points, DualRoute, Kerr, Route};
//!
//! let [m, a] = points::PARAMS;
//! let (x, u) = points::KERR_BL[0];
//! let generated = Kerr::new(m, a).geodesic_accel(&x, &u);
//! for other in [
//!     cas::CasKerrBl::new(m, a).geodesic_accel(&x, &u),
//!     DualRoute(hand::KerrBl { m, a }).geodesic_accel(&x, &u),
//! ] {
//!     assert!(geokern_bench::relative_error(&other, &generated) < 1e-12);
//! }
//! ```
#![warn(missing_docs)]

pub mod cas;
pub mod generic;
pub mod hand;
pub mod points;

pub use generic::{DualRoute, FiniteDifferenceRoute};

geokern::include_metric!("../examples/metrics/kerr_bl.gk");
geokern::include_metric!("../examples/metrics/kerr_schild.gk");

/// The Christoffel symbols and the geodesic acceleration of a four-dimensional metric with its
/// parameters bound, in `f64`; index conventions as in [`geokern::MetricKernels`].
pub trait Route {
    /// The Christoffel symbols Γ^a_bc at `x`, index order `[a][b][c]`.
    fn christoffel(&self, x: &[f64; 4]) -> [[[f64; 4]; 4]; 4];
    /// The geodesic acceleration −Γ^a_bc u^b u^c.
    fn geodesic_accel(&self, x: &[f64; 4], u: &[f64; 4]) -> [f64; 4];
}

/// The generated kernels, called through [`Route`] like the others.
macro_rules! generated_route {
    ($($name:ident),*) => {$(
        impl Route for $name<f64> {
            #[inline]
            fn christoffel(&self, x: &[f64; 4]) -> [[[f64; 4]; 4]; 4] {
                $name::christoffel(self, x)
            }
            #[inline]
            fn geodesic_accel(&self, x: &[f64; 4], u: &[f64; 4]) -> [f64; 4] {
                $name::geodesic_accel(self, x, u)
            }
        }
    )*};
}
generated_route!(Kerr, KerrSchild);

/// The largest difference between `value` and `reference`, relative to the largest magnitude
/// in `reference` (a norm-wise relative error, so a component that happens to be near zero
/// does not dominate). Zero for two empty slices.
pub fn relative_error(value: &[f64], reference: &[f64]) -> f64 {
    let scale = reference.iter().fold(0.0_f64, |s, r| s.max(r.abs()));
    let worst = value
        .iter()
        .zip(reference)
        .fold(0.0_f64, |w, (v, r)| w.max((v - r).abs()));
    if scale > 0.0 {
        worst / scale
    } else {
        worst
    }
}

/// The 64 Christoffel symbols in index order `[a][b][c]`, flattened.
pub fn flatten(gamma: &[[[f64; 4]; 4]; 4]) -> [f64; 64] {
    let mut flat = [0.0; 64];
    for (o, v) in flat
        .iter_mut()
        .zip(gamma.iter().flatten().flatten().copied())
    {
        *o = v;
    }
    flat
}
