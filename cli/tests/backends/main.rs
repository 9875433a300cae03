//! The emitted kernels in other languages, checked by the languages' own tools: C with gcc,
//! NumPy with python3, OpenCL on the CPU with PoCL, CUDA compiled to PTX with clang, WGSL
//! and GLSL parsed and validated with naga. Values are held to the Rust kernels that
//! `include_metric!` compiles from the same metric files.
//!
//! The tools are installed by `scripts/setup.sh`; a missing one fails its test with a line
//! saying so, never a silent pass.

mod c;
mod common;
mod cuda;
mod opencl;
mod python;
mod shader_ir;
mod shaders;
mod text;
