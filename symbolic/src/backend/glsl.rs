//! The GLSL backend: single-precision functions to call from a compute shader.
//!
//! GLSL's f64 is optional, so the kernels run in `float`. Inputs are arrays passed in and
//! outputs `out` arrays, in the C backend's order: `kerr_hamilton(float params[2],
//! float x[4], float p[4], out float dx[4], out float dp[4])`; the norm returns a `float`.
//! A metric without parameters takes no `params`, and a kernel with nothing to compute is
//! left out, since GLSL has no empty arrays. No `#version` line is emitted so the functions
//! can be pasted or included into any shader of version 1.30 or later.
//!
//! ```
//! use geokern_symbolic::{backend::glsl, model, parse};
//! let file = parse::parse_str("struct Sphere { coords: [theta, phi], params: [rho],
//!     g[theta, theta] = rho.powi(2); g[phi, phi] = (rho * theta.sin()).powi(2); }").unwrap();
//! let source = glsl::emit(&model::compile(&file.metrics[0]).unwrap());
//! assert!(source.contains("void sphere_metric(float params[1], float x[2], out float g[4]) {"));
//! ```

use super::cfamily::{self, c_func, float_literal, value_name, Dialect, KernelIo};
use super::wgsl::{f32_note, shader_inputs};
use crate::kernels::KernelSet;
use crate::program::KernelKind;

fn dialect() -> Dialect {
    Dialect {
        define: |name, rhs| format!("float {name} = {rhs};"),
        input: |array, index| format!("{}[{index}]", array.name()),
        literal: float_literal,
        func: c_func,
        sqrt: "sqrt",
        pow: "pow",
        sincos: None,
    }
}

/// One kernel: `(signature, definition)`, or `None` when it has no output.
fn function(ks: &KernelSet, kind: KernelKind) -> Option<(String, String)> {
    let io = KernelIo::new(ks, kind);
    if io.output_len() == 0 {
        return None;
    }
    let p = ks.program(kind);
    let mut args: Vec<String> = shader_inputs(&io)
        .iter()
        .map(|(a, len)| format!("float {}[{len}]", a.name()))
        .collect();
    if !io.scalar {
        args.extend(
            io.outputs
                .iter()
                .map(|o| format!("out float {}[{}]", o.name, o.len)),
        );
    }
    let ret = if io.scalar { "float" } else { "void" };
    let signature = format!(
        "{ret} {}_{}({})",
        cfamily::snake_case(&ks.name),
        kind.name(),
        args.join(", ")
    );
    let mut text = format!("{signature} {{\n");
    for line in cfamily::statements(p, &dialect()).lines {
        text.push_str("    ");
        text.push_str(&line);
        text.push('\n');
    }
    if io.scalar {
        text.push_str(&format!("    return {};\n", value_name(p.outputs[0])));
    } else {
        for (o, j, v) in io.assignments(p) {
            text.push_str(&format!("    {}[{j}] = {};\n", o.name, value_name(v)));
        }
    }
    text.push_str("}\n");
    Some((signature, text))
}

/// Emits the GLSL functions of every kernel of `ks`.
pub fn emit(ks: &KernelSet) -> String {
    let mut signatures = Vec::new();
    let mut functions = Vec::new();
    for kind in cfamily::kernel_kinds(ks) {
        if let Some((signature, text)) = function(ks, kind) {
            signatures.push(format!("{signature};"));
            functions.push(text);
        }
    }
    let notes = [
        f32_note("GLSL"),
        "Needs GLSL 1.30 or later (or ESSL 3.00); no #version line is emitted. Kernels \
         without outputs (no conserved momenta or invariants) are left out."
            .to_string(),
    ];
    let header = cfamily::header(ks, "GLSL", &notes, &signatures);
    let mut out = cfamily::comment(&header, "//");
    for f in functions {
        out.push('\n');
        out.push_str(&f);
    }
    out
}
