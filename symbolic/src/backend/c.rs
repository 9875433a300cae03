//! The C backend: a self-contained C99 header of `static inline` functions.
//!
//! For a struct `KerrNewman` it defines `kerr_newman_metric(params, x, g)`,
//! `kerr_newman_christoffel(params, x, gamma)`, `kerr_newman_accel(params, x, u, accel)`,
//! `kerr_newman_hamilton(params, x, p, dx, dp)` and the other kernels in the same style:
//! `const double *` inputs, `double *` outputs written row-major, parameters read from
//! `params` in declared order. Scalar kernels (the norm; with curvature, the Ricci and
//! Kretschmann scalars) return their value. CUDA and OpenCL reuse these
//! functions' shape.
//!
//! ```
//! use geokern_symbolic::{backend::c, model, parse};
//! let file = parse::parse_str("struct Sphere { coords: [theta, phi], params: [rho],
//!     g[theta, theta] = rho.powi(2); g[phi, phi] = (rho * theta.sin()).powi(2); }").unwrap();
//! let header = c::emit(&model::compile(&file.metrics[0]).unwrap());
//! assert!(header.contains("static inline void sphere_christoffel(const double *params, const double *x, double *gamma)"));
//! ```

use super::cfamily::{self, c_func, double_literal, value_name, Dialect, KernelIo, SinCos};
use crate::kernels::KernelSet;
use crate::program::KernelKind;

/// The spelling of double-precision C: `const double v3 = v1 * v2;`.
pub(crate) fn c_dialect(sincos: Option<SinCos>) -> Dialect {
    Dialect {
        define: |name, rhs| format!("const double {name} = {rhs};"),
        input: |array, index| format!("{}[{index}]", array.name()),
        literal: |x| double_literal(x, "INFINITY"),
        func: c_func,
        sqrt: "sqrt",
        pow: "pow",
        sincos,
    }
}

/// How a pointer-passing C dialect dresses a function.
pub(crate) struct PointerStyle<'a> {
    /// What precedes the return type (`static inline `, `__device__ inline `).
    pub qualifiers: &'a str,
    /// The statement spelling.
    pub dialect: &'a Dialect,
}

/// One kernel as a C-family function taking pointers: `(prototype, definition)`. The
/// prototype is the signature without qualifiers, as listed in the header comment.
pub(crate) fn pointer_function(
    ks: &KernelSet,
    kind: KernelKind,
    style: &PointerStyle,
) -> (String, String) {
    let io = KernelIo::new(ks, kind);
    let p = ks.program(kind);
    let prefix = cfamily::snake_case(&ks.name);
    let mut args: Vec<String> = io
        .inputs
        .iter()
        .map(|(a, _)| format!("const double *{}", a.name()))
        .collect();
    if !io.scalar {
        args.extend(io.outputs.iter().map(|o| format!("double *{}", o.name)));
    }
    let ret = if io.scalar { "double" } else { "void" };
    let prototype = format!("{ret} {prefix}_{}({})", kind.name(), args.join(", "));

    let body = cfamily::statements(p, style.dialect);
    let mut text = format!("{}{prototype}\n{{\n", style.qualifiers);
    // An argument the kernel never touches would trip -Wunused-parameter.
    for (a, _) in &io.inputs {
        if !body.reads.contains(a) {
            text.push_str(&format!("    (void){};\n", a.name()));
        }
    }
    for o in io.outputs.iter().filter(|o| o.len == 0) {
        text.push_str(&format!("    (void){};\n", o.name));
    }
    for line in &body.lines {
        text.push_str("    ");
        text.push_str(line);
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
    (prototype, text)
}

/// The lengths of a kernel's arrays, for the header: `params[2], x[4] -> g[16]`.
pub(crate) fn array_lengths(io: &KernelIo) -> String {
    let ins: Vec<String> = io
        .inputs
        .iter()
        .map(|(a, len)| format!("{}[{len}]", a.name()))
        .collect();
    let outs: Vec<String> = if io.scalar {
        vec!["returns the value".to_string()]
    } else {
        io.outputs
            .iter()
            .map(|o| format!("{}[{}]", o.name, o.len))
            .collect()
    };
    format!("{} -> {}", ins.join(", "), outs.join(", "))
}

/// Every kernel of `ks` as a pointer function, then the batch entry points `batch` makes
/// (none for plain C): the signatures for the header comment and the definitions, in the
/// order every C-family backend prints them.
pub(crate) fn pointer_units(
    ks: &KernelSet,
    style: &PointerStyle,
    batch: impl Fn(&KernelSet, KernelKind) -> Option<(String, String)>,
) -> (Vec<String>, Vec<String>) {
    let mut signatures = Vec::new();
    let mut functions = Vec::new();
    let kinds = cfamily::kernel_kinds(ks);
    for &kind in &kinds {
        let (prototype, text) = pointer_function(ks, kind, style);
        signatures.push(format!(
            "{}{prototype};  {}",
            style.qualifiers,
            array_lengths(&KernelIo::new(ks, kind))
        ));
        functions.push(text);
    }
    for &kind in &kinds {
        if let Some((prototype, text)) = batch(ks, kind) {
            signatures.push(format!("{prototype};"));
            functions.push(text);
        }
    }
    (signatures, functions)
}

/// The include-guard macro of a metric's header (`GEOKERN_KERR_NEWMAN_H`).
pub(crate) fn guard(ks: &KernelSet, suffix: &str) -> String {
    format!(
        "GEOKERN_{}_{suffix}",
        cfamily::snake_case(&ks.name).to_ascii_uppercase()
    )
}

/// Emits the C99 header of every kernel of `ks`.
pub fn emit(ks: &KernelSet) -> String {
    let dialect = c_dialect(None);
    let style = PointerStyle {
        qualifiers: "static inline ",
        dialect: &dialect,
    };
    let (signatures, functions) = pointer_units(ks, &style, |_, _| None);
    let notes = [
        "C99, double precision; needs only <math.h> (link with -lm where the platform asks)."
            .to_string(),
        "`params` may be NULL for a metric without parameters.".to_string(),
    ];
    let header = cfamily::header(ks, "C", &notes, &signatures);
    let guard = guard(ks, "H");
    let mut out = cfamily::comment(&header, "//");
    out.push_str(&format!(
        "\n#ifndef {guard}\n#define {guard}\n\n#include <math.h>\n"
    ));
    for f in functions {
        out.push('\n');
        out.push_str(&f);
    }
    out.push_str(&format!("\n#endif /* {guard} */\n"));
    out
}
