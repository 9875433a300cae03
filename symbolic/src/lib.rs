//! geokern's engine: from a metric declaration to optimized straight-line kernels.
#![warn(missing_docs)]

pub mod backend;
pub mod expr;
pub mod geometry;
pub mod kernels;
pub mod model;
pub mod parse;
pub mod program;
