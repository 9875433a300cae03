//! geokern's runtime: the scalar trait, the trait every generated metric implements, and
//! (as they land) the integrators, events and monitors that drive the kernels.
//!
//! Generated code depends only on this crate, never on the symbolic engine.
#![cfg_attr(not(feature = "std"), no_std)]
#![warn(missing_docs)]

mod kernels;
mod scalar;

pub use kernels::{MetricKernels, OpCount};
pub use scalar::Scalar;
