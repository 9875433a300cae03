//! geokern's engine: from a metric declaration to optimized straight-line kernels.
#![warn(missing_docs)]
// Tensor code reads best with the indices of the formulas it implements.
#![allow(clippy::needless_range_loop)]

pub mod backend;
pub mod expr;
pub mod geometry;
pub mod kernels;
pub mod model;
pub mod parse;
pub mod program;
