//! The OpenCL backend: OpenCL C functions in double precision with the C backend's names and
//! arguments, and one `__kernel` batch entry point per kernel, one work-item per state.
//!
//! The functions take private pointers, as OpenCL C 1.2 has no generic address space; a
//! batch entry point copies its state from global memory into private arrays, calls the
//! function and copies the results back, all unrolled. Its layout is the CUDA backend's:
//! `n` states laid end to end, one shared `params` array. The bounds check `if (i < n)`
//! lives only in the entry points.
//!
//! ```
//! use geokern_symbolic::{backend::opencl, model, parse};
//! let file = parse::parse_str("struct Sphere { coords: [theta, phi], params: [rho],
//!     g[theta, theta] = rho.powi(2); g[phi, phi] = (rho * theta.sin()).powi(2); }").unwrap();
//! let source = opencl::emit(&model::compile(&file.metrics[0]).unwrap());
//! assert!(source.contains("#pragma OPENCL EXTENSION cl_khr_fp64 : enable"));
//! assert!(source.contains("__kernel void sphere_accel_batch("));
//! ```

use super::c::{c_dialect, guard, pointer_units, PointerStyle};
use super::cfamily::{self, KernelIo};
use super::cuda::batch_args;
use crate::kernels::KernelSet;
use crate::program::KernelKind;

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
            format!("__global {konst}double *{}", a.name)
        })
        .collect();
    params.push("const int n".to_string());
    let prototype = format!("__kernel void {name}_batch({})", params.join(", "));

    let mut body = Vec::new();
    // A scalar is returned, not written through a pointer, so it needs no private copy.
    let copied: Vec<_> = args.iter().filter(|a| !(io.scalar && a.output)).collect();
    for a in &copied {
        let len = if a.stride == 0 {
            ks.params.len()
        } else {
            a.stride
        };
        // A zero-length array is not C; a metric without parameters passes an unread one.
        body.push(format!("double priv_{}[{}];", a.name, len.max(1)));
        if !a.output {
            for j in 0..len {
                let from = match a.stride {
                    0 => format!("{}[{j}]", a.name),
                    s => format!("{}[{s} * i + {j}]", a.name),
                };
                body.push(format!("priv_{}[{j}] = {from};", a.name));
            }
        }
    }
    let call_args: Vec<String> = copied.iter().map(|a| format!("priv_{}", a.name)).collect();
    if io.scalar {
        body.push(format!(
            "{}[i] = {name}({});",
            kind.name(),
            call_args.join(", ")
        ));
    } else {
        body.push(format!("{name}({});", call_args.join(", ")));
        for a in copied.iter().filter(|a| a.output) {
            for j in 0..a.stride {
                body.push(format!(
                    "{n}[{s} * i + {j}] = priv_{n}[{j}];",
                    n = a.name,
                    s = a.stride
                ));
            }
        }
    }
    let mut text =
        format!("{prototype}\n{{\n    const long i = (long)get_global_id(0);\n    if (i < n) {{\n");
    for line in body {
        text.push_str("        ");
        text.push_str(&line);
        text.push('\n');
    }
    text.push_str("    }\n}\n");
    Some((prototype, text))
}

/// Emits the OpenCL C source of every kernel of `ks`, with batch entry points.
pub fn emit(ks: &KernelSet) -> String {
    let dialect = c_dialect(Some(|s, c, a| {
        vec![
            format!("double {c};"),
            format!("const double {s} = sincos({a}, &{c});"),
        ]
    }));
    let style = PointerStyle {
        qualifiers: "static inline ",
        dialect: &dialect,
    };
    let (signatures, functions) = pointer_units(ks, &style, batch_function);
    let notes = [
        "OpenCL C 1.2, double precision (needs cl_khr_fp64); functions take private pointers."
            .to_string(),
        "Batch entry points take n states laid end to end and one shared params array; \
         enqueue a global size of at least n, one work-item per state."
            .to_string(),
    ];
    let header = cfamily::header(ks, "OpenCL C", &notes, &signatures);
    let guard = guard(ks, "CL");
    let mut out = cfamily::comment(&header, "//");
    out.push_str(&format!(
        "\n#ifndef {guard}\n#define {guard}\n\n#pragma OPENCL EXTENSION cl_khr_fp64 : enable\n"
    ));
    for f in functions {
        out.push('\n');
        out.push_str(&f);
    }
    out.push_str(&format!("\n#endif /* {guard} */\n"));
    out
}
