//! The CUDA backend: the emitted source of every case compiles to PTX with clang in CUDA
//! device-only mode, so its types and syntax are checked by a real CUDA front end, and every
//! batch kernel appears as an entry point under its C name.
//!
//! The CUDA toolkit is not needed: a short prelude declares what its headers would
//! (`__device__`, `__global__` and the device math functions), and the built-in thread
//! indices come from clang's own header.

use geokern_symbolic::backend::cfamily::{kernel_kinds, KernelIo};
use geokern_symbolic::backend::cuda;

use crate::common::{assert_success, cases, run_tool, scratch};

const PRELUDE: &str = r#"#define __device__ __attribute__((device))
#define __global__ __attribute__((global))
#include <__clang_cuda_builtin_vars.h>
extern "C" {
__device__ double sqrt(double);
__device__ double pow(double, double);
__device__ double sin(double);
__device__ double cos(double);
__device__ void sincos(double, double *, double *);
__device__ double tan(double);
__device__ double exp(double);
__device__ double log(double);
__device__ double sinh(double);
__device__ double cosh(double);
__device__ double tanh(double);
__device__ double asin(double);
__device__ double acos(double);
__device__ double atan(double);
}
"#;

#[test]
fn cuda_source_compiles_to_ptx_with_every_batch_entry_point() {
    let cases = cases();
    let dir = scratch("cuda");
    let mut source = PRELUDE.to_string();
    for case in cases {
        let emitted = cuda::emit(&case.kernels);
        // The guard lets the same unit be included twice.
        source.push_str(&emitted);
        source.push_str(&emitted);
    }
    std::fs::write(dir.join("kernels.cu"), source).expect("write source");
    let out = run_tool(
        "clang",
        &[
            "-x",
            "cuda",
            "--cuda-device-only",
            "-nocudainc",
            "-nocudalib",
            "--cuda-gpu-arch=sm_70",
            "-Wall",
            "-Wextra",
            "-Werror",
            "-S",
            "-o",
            "kernels.ptx",
            "kernels.cu",
        ],
        &dir,
        "the CUDA backend test needs clang (scripts/setup.sh installs it)",
    );
    assert_success("clang on the emitted CUDA", &out);
    let ptx = std::fs::read_to_string(dir.join("kernels.ptx")).expect("PTX written");
    for case in cases {
        for kind in kernel_kinds(&case.kernels) {
            let entry = format!(".entry {}_{}_batch(", case.prefix(), kind.name());
            let expected = KernelIo::new(&case.kernels, kind).output_len() > 0;
            assert_eq!(
                ptx.contains(&entry),
                expected,
                "{}: PTX entry {entry} present: {expected}",
                case.key
            );
        }
    }
}
