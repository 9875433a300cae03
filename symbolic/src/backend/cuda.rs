//! The CUDA backend: `__device__` functions with the C backend's names and arguments, and
//! one `__global__` batch entry point per kernel, one thread per state.
//!
//! A batch kernel reads `n` states laid end to end (`x[n][N]`, `u[n][N]`, …), one shared
//! `params` array, and writes its outputs the same way (`accel[n][N]`, `dx[n][N]` and
//! `dp[n][N]`, `norm[n]`). The bounds check `if (i < n)` lives only there, never inside a
//! kernel function. Entry points are `extern "C"`, so they can be looked up by name.
//!
//! ```
//! use geokern_symbolic::{backend::cuda, model, parse};
//! let file = parse::parse_str("struct Sphere { coords: [theta, phi], params: [rho],
//!     g[theta, theta] = rho.powi(2); g[phi, phi] = (rho * theta.sin()).powi(2); }").unwrap();
//! let source = cuda::emit(&model::compile(&file.metrics[0]).unwrap());
//! assert!(source.contains("__device__ inline void sphere_metric(const double *params, const double *x, double *g)"));
//! assert!(source.contains("extern \"C\" __global__ void sphere_metric_batch("));
//! ```

use super::c::{c_dialect, guard, pointer_units, PointerStyle};
use super::cfamily::{self, KernelIo};
use crate::kernels::KernelSet;
use crate::program::{InputArray, KernelKind};

/// One argument of a batch entry point: name, and how many entries each state owns (0 for
/// the shared parameters).
pub(crate) struct BatchArg {
    /// Argument name, as in the per-state function.
    pub name: &'static str,
    /// Entries per state.
    pub stride: usize,
    /// Whether the kernel writes it.
    pub output: bool,
}

/// The arguments of a kernel's batch entry point, before the count `n`; `None` for a kernel
/// without outputs (a metric without cyclic coordinates has no conserved momenta), which
/// gets no entry point.
pub(crate) fn batch_args(io: &KernelIo) -> Option<Vec<BatchArg>> {
    if io.output_len() == 0 {
        return None;
    }
    let mut args: Vec<BatchArg> = io
        .inputs
        .iter()
        .map(|&(a, len)| BatchArg {
            name: a.name(),
            stride: if a == InputArray::Params { 0 } else { len },
            output: false,
        })
        .collect();
    args.extend(io.outputs.iter().map(|o| BatchArg {
        name: o.name,
        stride: o.len,
        output: true,
    }));
    Some(args)
}

/// The batch entry point of one kernel: `(prototype, definition)`.
fn batch_function(ks: &KernelSet, kind: KernelKind) -> Option<(String, String)> {
    let io = KernelIo::new(ks, kind);
    let args = batch_args(&io)?;
    let prefix = cfamily::snake_case(&ks.name);
    let name = format!("{prefix}_{}", kind.name());
    let mut params: Vec<String> = args
        .iter()
        .map(|a| {
            let konst = if a.output { "" } else { "const " };
            format!("{konst}double *{}", a.name)
        })
        .collect();
    params.push("int n".to_string());
    let prototype = format!(
        "extern \"C\" __global__ void {name}_batch({})",
        params.join(", ")
    );
    let at = |a: &BatchArg| match a.stride {
        0 => a.name.to_string(),
        s => format!("{} + {s} * i", a.name),
    };
    let call = if io.scalar {
        let ins: Vec<String> = args.iter().filter(|a| !a.output).map(at).collect();
        format!("{}[i] = {name}({});", kind.name(), ins.join(", "))
    } else {
        let all: Vec<String> = args.iter().map(at).collect();
        format!("{name}({});", all.join(", "))
    };
    let text = format!(
        "{prototype}\n{{\n    const long long i = (long long)blockIdx.x * blockDim.x + threadIdx.x;\n    \
         if (i < n) {{\n        {call}\n    }}\n}}\n"
    );
    Some((prototype, text))
}

/// Emits the CUDA source of every kernel of `ks`, with batch entry points.
pub fn emit(ks: &KernelSet) -> String {
    let dialect = c_dialect(Some(|s, c, a| {
        vec![
            format!("double {s}, {c};"),
            format!("sincos({a}, &{s}, &{c});"),
        ]
    }));
    let style = PointerStyle {
        qualifiers: "__device__ inline ",
        dialect: &dialect,
    };
    let (signatures, functions) = pointer_units(ks, &style, batch_function);
    let prefix = cfamily::snake_case(&ks.name);
    let notes = [
        "CUDA C++, double precision; device math from the CUDA toolkit, nothing included."
            .to_string(),
        format!(
            "Batch entry points take n states laid end to end and one shared params array; \
             launch one thread per state, e.g. {prefix}_accel_batch<<<(n + 255) / 256, \
             256>>>(params, x, u, accel, n)."
        ),
    ];
    let header = cfamily::header(ks, "CUDA", &notes, &signatures);
    let guard = guard(ks, "CUH");
    let mut out = cfamily::comment(&header, "//");
    out.push_str(&format!("\n#ifndef {guard}\n#define {guard}\n"));
    for f in functions {
        out.push('\n');
        out.push_str(&f);
    }
    out.push_str(&format!("\n#endif /* {guard} */\n"));
    out
}
