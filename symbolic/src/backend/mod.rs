//! Printers of kernel programs: one module per target language.
//!
//! Each module reads a metric's [`KernelSet`](crate::kernels::KernelSet) and returns source
//! text through a plain function, so build scripts can generate code without the CLI. The
//! C-like printers share [`cfamily`].

pub mod c;
pub mod cfamily;
pub mod cuda;
pub mod glsl;
pub mod opencl;
pub mod python;
pub mod rust;
pub mod wgsl;
