//! The NumPy backend: a Python module of functions vectorised over arrays of points.
//!
//! Every input is an array whose last axis is the vector (`params` (..., P), `x` (..., N),
//! …); the leading axes broadcast against each other and lead the outputs: the metric comes
//! back (..., N, N), the Christoffel symbols (..., N, N, N), the acceleration (..., N), the
//! norm (...). Hamilton's equations return the pair `(dx, dp)`. The functions use the C
//! backend's names and argument order: `kerr_accel(params, x, u)`.
//!
//! ```
//! use geokern_symbolic::{backend::python, model, parse};
//! let file = parse::parse_str("struct Sphere { coords: [theta, phi], params: [rho],
//!     g[theta, theta] = rho.powi(2); g[phi, phi] = (rho * theta.sin()).powi(2); }").unwrap();
//! let module = python::emit(&model::compile(&file.metrics[0]).unwrap());
//! assert!(module.contains("def sphere_christoffel(params, x):"));
//! assert!(module.contains("np.sin("));
//! ```

use super::cfamily::{self, double_literal, value_name, Dialect, KernelIo};
use crate::expr::Func;
use crate::kernels::KernelSet;
use crate::program::{KernelKind, KernelProgram};

fn numpy_func(f: Func) -> &'static str {
    match f {
        Func::Sin => "np.sin",
        Func::Cos => "np.cos",
        Func::Tan => "np.tan",
        Func::Exp => "np.exp",
        Func::Ln => "np.log",
        Func::Sinh => "np.sinh",
        Func::Cosh => "np.cosh",
        Func::Tanh => "np.tanh",
        Func::Asin => "np.arcsin",
        Func::Acos => "np.arccos",
        Func::Atan => "np.arctan",
    }
}

fn dialect() -> Dialect {
    Dialect {
        define: |name, rhs| format!("{name} = {rhs}"),
        input: |array, index| format!("{}[..., {index}]", array.name()),
        literal: |x| double_literal(x, "np.inf"),
        func: numpy_func,
        sqrt: "np.sqrt",
        pow: "np.power",
        sincos: None,
    }
}

/// The trailing shape of each output (`(4, 4)` for the metric, `()` for the norm): the
/// program's shape, except that Hamilton's equations return two vectors.
fn output_shapes(io: &KernelIo, p: &KernelProgram) -> Vec<(&'static str, Vec<usize>)> {
    match io.outputs.as_slice() {
        [single] => vec![(single.name, p.shape.clone())],
        several => several.iter().map(|o| (o.name, vec![o.len])).collect(),
    }
}

/// A shape as a Python tuple: `()`, `(4,)`, `(4, 4)`.
fn tuple(shape: &[usize]) -> String {
    match shape {
        [] => "()".to_string(),
        [a] => format!("({a},)"),
        _ => {
            let parts: Vec<String> = shape.iter().map(usize::to_string).collect();
            format!("({})", parts.join(", "))
        }
    }
}

/// The index of flat entry `k` of an array of trailing shape `shape`: `[..., 1, 2]`.
fn index(k: usize, shape: &[usize]) -> String {
    let mut rest = k;
    let mut idx = vec![0; shape.len()];
    for (d, &len) in shape.iter().enumerate().rev() {
        idx[d] = rest % len;
        rest /= len;
    }
    let parts: Vec<String> = idx.iter().map(usize::to_string).collect();
    if parts.is_empty() {
        "[...]".to_string()
    } else {
        format!("[..., {}]", parts.join(", "))
    }
}

/// One kernel: `(signature line for the header, definition)`.
fn function(ks: &KernelSet, kind: KernelKind) -> (String, String) {
    let io = KernelIo::new(ks, kind);
    let p = ks.program(kind);
    let inputs: Vec<&str> = io.inputs.iter().map(|(a, _)| a.name()).collect();
    let shapes = output_shapes(&io, p);
    let name = format!("{}_{}", cfamily::snake_case(&ks.name), kind.name());
    let in_shapes: Vec<String> = io
        .inputs
        .iter()
        .map(|(a, len)| format!("{} (..., {len})", a.name()))
        .collect();
    let out_shapes: Vec<String> = shapes
        .iter()
        .map(|(o, s)| {
            let dims: Vec<String> = s.iter().map(usize::to_string).collect();
            let mut all = vec!["...".to_string()];
            all.extend(dims);
            format!("{o} ({})", all.join(", "))
        })
        .collect();
    let signature = format!("{name}({}) -> {}", inputs.join(", "), out_shapes.join(", "));
    let mut text = format!("def {name}({}):\n", inputs.join(", "));
    text.push_str(&format!(
        "    \"\"\"{} -> {}.\"\"\"\n",
        in_shapes.join(", "),
        out_shapes.join(", ")
    ));
    for a in &inputs {
        text.push_str(&format!("    {a} = np.asarray({a}, dtype=np.float64)\n"));
    }
    let leading: Vec<String> = inputs.iter().map(|a| format!("{a}.shape[:-1]")).collect();
    text.push_str(&format!(
        "    batch = np.broadcast_shapes({})\n",
        leading.join(", ")
    ));
    for (o, s) in &shapes {
        text.push_str(&format!("    {o} = np.empty(batch + {})\n", tuple(s)));
    }
    for line in cfamily::statements(p, &dialect()).lines {
        text.push_str("    ");
        text.push_str(&line);
        text.push('\n');
    }
    let mut at = 0;
    for (o, s) in &shapes {
        let len: usize = s.iter().product();
        for k in 0..len {
            text.push_str(&format!(
                "    {o}{} = {}\n",
                index(k, s),
                value_name(p.outputs[at + k])
            ));
        }
        at += len;
    }
    let names: Vec<&str> = shapes.iter().map(|(o, _)| *o).collect();
    text.push_str(&format!("    return {}\n", names.join(", ")));
    (signature, text)
}

/// Emits the NumPy module of every kernel of `ks`.
pub fn emit(ks: &KernelSet) -> String {
    let mut signatures = Vec::new();
    let mut functions = Vec::new();
    let kinds = cfamily::kernel_kinds(ks);
    for &kind in &kinds {
        let (signature, text) = function(ks, kind);
        signatures.push(signature);
        functions.push(text);
    }
    let notes = [
        "Python 3 with NumPy, double precision. Inputs are arrays whose last axis is the \
         vector; leading axes broadcast together and lead every output."
            .to_string(),
    ];
    let header = cfamily::header(ks, "NumPy", &notes, &signatures);
    let mut out = cfamily::comment(&header, "#");
    let prefix = cfamily::snake_case(&ks.name);
    out.push_str("\nimport numpy as np\n\n__all__ = [\n");
    for k in &kinds {
        out.push_str(&format!("    \"{prefix}_{}\",\n", k.name()));
    }
    out.push_str("]\n");
    for f in functions {
        out.push_str("\n\n");
        out.push_str(&f);
    }
    out
}
