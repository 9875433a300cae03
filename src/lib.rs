//! geokern: declare a metric, get its Christoffel symbols and geodesic equations as optimized,
//! branch-free kernels, derived exactly at compile time.
//!
//! ```
//! geokern::metric! {
//!     /// Schwarzschild black hole of mass m.
//!     pub struct Schwarzschild {
//!         coords: [t, r, theta, phi],
//!         params: [m],
//!         let f = 1.0 - 2.0 * m / r;
//!         g[t, t] = -f;
//!         g[r, r] = 1.0 / f;
//!         g[theta, theta] = r.powi(2);
//!         g[phi, phi] = (r * theta.sin()).powi(2);
//!     }
//! }
//!
//! // `Schwarzschild` alone means `Schwarzschild<f64>`; f32, dual numbers and SIMD lanes work too.
//! let bh: Schwarzschild = Schwarzschild::new(1.0);
//! let x = [0.0, 10.0, 1.0, 0.0];
//! let gamma = bh.christoffel(&x);
//! // Γ^r_tt = m (r − 2m) / r³
//! assert!((gamma[1][0][0] - 8.0 / 1000.0).abs() < 1e-15);
//! // t and φ are cyclic: their momenta are conserved.
//! assert_eq!(Schwarzschild::<f64>::CONSERVED, ["p_t", "p_phi"]);
//! ```
#![warn(missing_docs)]

// Lets the macro's `::geokern::..` paths resolve inside this crate's own tests and docs.
extern crate self as geokern;

pub use geokern_macros::{include_metric, metric};
pub use geokern_runtime::*;

/// The runtime crate, for paths that name it explicitly.
pub use geokern_runtime as runtime;
