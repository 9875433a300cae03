//! The WGSL backend: single-precision functions to call from a compute shader.
//!
//! WGSL has no portable f64, so the kernels run in f32. Arrays pass by value:
//! `kerr_metric(params: array<f32, 2>, x: array<f32, 4>) -> array<f32, 16>`, Hamilton's
//! equations return a struct `KerrHamilton { dx, dp }`, the norm an `f32`. A metric without
//! parameters takes no `params`, and a kernel with nothing to compute (no conserved momenta,
//! no invariants) is left out, since WGSL has no empty arrays. The caller owns the bindings
//! and the entry point.
//!
//! ```
//! use geokern_symbolic::{backend::wgsl, model, parse};
//! let file = parse::parse_str("struct Sphere { coords: [theta, phi], params: [rho],
//!     g[theta, theta] = rho.powi(2); g[phi, phi] = (rho * theta.sin()).powi(2); }").unwrap();
//! let source = wgsl::emit(&model::compile(&file.metrics[0]).unwrap());
//! assert!(source.contains("fn sphere_accel(params: array<f32, 1>, x: array<f32, 2>, u: array<f32, 2>) -> array<f32, 2> {"));
//! ```

use super::cfamily::{self, c_func, float_literal, value_name, Dialect, KernelIo};
use crate::kernels::KernelSet;
use crate::program::{InputArray, KernelKind, KernelProgram, Val};

/// What the header of a single-precision unit says about accuracy.
pub(crate) fn f32_note(language: &str) -> String {
    format!(
        "Single precision (f32), since f64 is not portable in {language}: expect relative \
         errors around 1e-6 times the kernel's conditioning (f32 rounds to about 6e-8), and \
         far larger where terms cancel (near horizons, turning points and coordinate \
         singularities)."
    )
}

/// The arguments a shader function takes: parameters only when there are some.
pub(crate) fn shader_inputs(io: &KernelIo) -> Vec<(InputArray, usize)> {
    io.inputs
        .iter()
        .copied()
        .filter(|&(a, len)| !(a == InputArray::Params && len == 0))
        .collect()
}

/// Values as a comma list, eight to a line, for long array constructors.
pub(crate) fn value_list(values: &[Val], indent: &str) -> String {
    let names: Vec<String> = values.iter().map(|&v| value_name(v)).collect();
    let lines: Vec<String> = names.chunks(8).map(|c| c.join(", ")).collect();
    if lines.len() <= 1 {
        lines.concat()
    } else {
        format!(
            "\n{indent}{}\n{}",
            lines.join(&format!(",\n{indent}")),
            &indent[4..]
        )
    }
}

fn dialect() -> Dialect {
    Dialect {
        define: |name, rhs| format!("let {name}: f32 = {rhs};"),
        input: |array, index| format!("{}[{index}]", array.name()),
        literal: float_literal,
        func: c_func,
        sqrt: "sqrt",
        pow: "pow",
        sincos: None,
    }
}

fn hamilton_struct(ks: &KernelSet) -> String {
    format!("{}Hamilton", ks.name)
}

/// The return expression of a kernel.
fn result(ks: &KernelSet, io: &KernelIo, p: &KernelProgram) -> String {
    let arr = |vals: &[Val]| {
        format!(
            "array<f32, {}>({})",
            vals.len(),
            value_list(vals, "        ")
        )
    };
    match io.kind {
        _ if io.scalar => value_name(p.outputs[0]),
        KernelKind::Hamilton => {
            let n = ks.dim();
            format!(
                "{}({}, {})",
                hamilton_struct(ks),
                arr(&p.outputs[..n]),
                arr(&p.outputs[n..])
            )
        }
        _ => arr(&p.outputs),
    }
}

/// One kernel: `(signature, definition)`, or `None` when it has no output.
fn function(ks: &KernelSet, kind: KernelKind) -> Option<(String, String)> {
    let io = KernelIo::new(ks, kind);
    if io.output_len() == 0 {
        return None;
    }
    let p = ks.program(kind);
    let args: Vec<String> = shader_inputs(&io)
        .iter()
        .map(|(a, len)| format!("{}: array<f32, {len}>", a.name()))
        .collect();
    let ret = match kind {
        _ if io.scalar => "f32".to_string(),
        KernelKind::Hamilton => hamilton_struct(ks),
        _ => format!("array<f32, {}>", io.output_len()),
    };
    let signature = format!(
        "fn {}_{}({}) -> {ret}",
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
    text.push_str(&format!("    return {};\n}}\n", result(ks, &io, p)));
    Some((signature, text))
}

/// Emits the WGSL functions of every kernel of `ks`.
pub fn emit(ks: &KernelSet) -> String {
    let n = ks.dim();
    let mut signatures = vec![format!(
        "struct {} {{ dx: array<f32, {n}>, dp: array<f32, {n}> }}",
        hamilton_struct(ks)
    )];
    let mut functions = Vec::new();
    for kind in cfamily::kernel_kinds(ks) {
        if let Some((signature, text)) = function(ks, kind) {
            signatures.push(signature);
            functions.push(text);
        }
    }
    let notes = [
        f32_note("WGSL"),
        "Arrays pass by value; matrices come back flattened row-major. Kernels without \
         outputs (no conserved momenta or invariants) are left out."
            .to_string(),
    ];
    let header = cfamily::header(ks, "WGSL", &notes, &signatures);
    let mut out = cfamily::comment(&header, "//");
    out.push_str(&format!(
        "\nstruct {} {{\n    dx: array<f32, {n}>,\n    dp: array<f32, {n}>,\n}}\n",
        hamilton_struct(ks)
    ));
    for f in functions {
        out.push('\n');
        out.push_str(&f);
    }
    out
}
