//! geokern's runtime: the scalar trait, the trait every generated metric implements, and the
//! integrators, events and monitors that drive the kernels.
//!
//! Generated code depends only on this crate, never on the symbolic engine.
//!
//! # Example
//!
//! A hand-written metric (the Euclidean plane in polar coordinates, whose geodesics are
//! straight lines) integrated with the eighth-order Dormand-Prince pair:
//!
//! ```
//! use geokern_runtime::{integrate, MetricKernels, Method, Options, StopReason};
//!
//! struct Polar;
//! impl MetricKernels<f64, 2> for Polar {
//!     fn coordinate_names(&self) -> &[&str] { &["r", "phi"] }
//!     fn metric(&self, x: &[f64; 2]) -> [[f64; 2]; 2] { [[1.0, 0.0], [0.0, x[0] * x[0]]] }
//!     fn inverse_metric(&self, x: &[f64; 2]) -> [[f64; 2]; 2] {
//!         [[1.0, 0.0], [0.0, 1.0 / (x[0] * x[0])]]
//!     }
//!     fn christoffel(&self, x: &[f64; 2]) -> [[[f64; 2]; 2]; 2] {
//!         let r = x[0];
//!         [[[0.0, 0.0], [0.0, -r]], [[0.0, 1.0 / r], [1.0 / r, 0.0]]]
//!     }
//!     fn geodesic_accel(&self, x: &[f64; 2], u: &[f64; 2]) -> [f64; 2] {
//!         let r = x[0];
//!         [r * u[1] * u[1], -2.0 * u[0] * u[1] / r]
//!     }
//!     fn hamilton_rhs(&self, x: &[f64; 2], p: &[f64; 2]) -> ([f64; 2], [f64; 2]) {
//!         let r = x[0];
//!         ([p[0], p[1] / (r * r)], [p[1] * p[1] / (r * r * r), 0.0])
//!     }
//!     fn parallel_transport(&self, x: &[f64; 2], u: &[f64; 2], v: &[f64; 2]) -> [f64; 2] {
//!         let r = x[0];
//!         [r * u[1] * v[1], -(u[0] * v[1] + u[1] * v[0]) / r]
//!     }
//!     fn norm(&self, x: &[f64; 2], u: &[f64; 2]) -> f64 { u[0] * u[0] + x[0] * x[0] * u[1] * u[1] }
//!     fn conserved_names(&self) -> &[&str] { &["p_phi"] }
//!     fn conserved(&self, x: &[f64; 2], u: &[f64; 2], out: &mut [f64]) {
//!         if let Some(o) = out.first_mut() { *o = x[0] * x[0] * u[1]; }
//!     }
//!     fn invariant_names(&self) -> &[&str] { &[] }
//!     fn invariants(&self, _: &[f64; 2], _: &[f64; 2], _: &mut [f64]) {}
//! }
//!
//! // Start at (x, y) = (1, 0) moving with unit speed along +y: the line x = 1.
//! let out = integrate(&Polar, [1.0, 0.0], [0.0, 1.0], 1.0, &Options::with_method(Method::DormandPrince853))?;
//! assert_eq!(out.stop, StopReason::End);
//! assert!((out.x[0] - 2f64.sqrt()).abs() < 1e-8); // reached (1, 1)
//! assert!(out.drift.conserved()[0] < 1e-9);
//! # Ok::<(), geokern_runtime::Error>(())
//! ```
#![cfg_attr(not(feature = "std"), no_std)]
#![warn(missing_docs)]

#[cfg(feature = "std")]
mod batch;
mod control;
pub mod dop853;
mod driver;
mod dual;
mod error;
mod events;
mod explicit;
mod gauss_legendre;
mod initial;
mod integrate;
mod kernels;
mod monitor;
mod rational;
mod scalar;
#[cfg(feature = "simd")]
mod simd;
mod state;
mod stats;
mod stepper;
pub mod tableau;

#[cfg(feature = "std")]
pub use batch::integrate_batch;
pub use control::{initial_step, PiController, Tolerance};
pub use driver::{run, Outcome};
pub use dual::Dual;
pub use error::Error;
pub use events::{illinois, CoordinateCrossing, Crossing, Direction, Event, MAX_EVENTS};
pub use explicit::{DormandPrince54, DormandPrince853, Rk4};
pub use gauss_legendre::{GaussLegendre, GaussLegendre4, GaussLegendre6};
pub use initial::{on_shell, pinhole_ray, static_frame};
pub use integrate::{integrate, integrate_with_events, Method, Options};
pub use kernels::{MetricKernels, OpCount};
pub use monitor::{project_time_component, Drift, Monitor, Projection, MAX_MONITORED};
pub use rational::{Coefficient, QuadraticSurd, Rational};
pub use scalar::Scalar;
pub use state::{GeodesicSystem, MomentumForm, State, System, VelocityForm};
pub use stats::{Stats, StopReason};
pub use stepper::{StepFailure, Stepper};
pub use tableau::ButcherTableau;
#[cfg(feature = "simd")]
pub use wide::f64x4;
