//! What the printers of C-like languages share: names, signatures' shape, the header comment,
//! float literals and the statements of one kernel.
//!
//! The C, CUDA, OpenCL, WGSL, GLSL and NumPy backends all print a kernel program the same
//! way: one immutable definition per live SSA value, in program order, then the outputs. They
//! differ only in the spelling captured by a [`Dialect`].

use std::collections::BTreeSet;

use crate::expr::{q_to_f64, Func, NamedConst};
use crate::kernels::KernelSet;
use crate::program::{InputArray, Instr, KernelKind, KernelProgram, Val};

/// The snake_case prefix of a struct name (`KerrNewman` → `kerr_newman`, `FLRWMetric` →
/// `flrw_metric`, `Tangherlini5` → `tangherlini5`): every emitted function starts with it.
pub fn snake_case(name: &str) -> String {
    let chars: Vec<char> = name.chars().collect();
    let mut out = String::with_capacity(name.len() + 4);
    for (i, &c) in chars.iter().enumerate() {
        if c.is_ascii_uppercase() {
            let prev = i.checked_sub(1).map(|j| chars[j]);
            let next = chars.get(i + 1).copied();
            let after_lower = prev.is_some_and(|p| p.is_ascii_lowercase() || p.is_ascii_digit());
            let ends_acronym = prev.is_some_and(|p| p.is_ascii_uppercase())
                && next.is_some_and(|n| n.is_ascii_lowercase());
            if after_lower || ends_acronym {
                out.push('_');
            }
            out.push(c.to_ascii_lowercase());
        } else {
            out.push(c);
        }
    }
    out
}

/// An output array of a kernel: its argument name and length.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct OutputArray {
    /// Argument name (`g`, `gamma`, `dx`, …).
    pub name: &'static str,
    /// Number of entries.
    pub len: usize,
}

/// The inputs and outputs of one kernel, as every C-like backend names them.
#[derive(Clone, Debug)]
pub struct KernelIo {
    /// Which kernel.
    pub kind: KernelKind,
    /// Input arrays in signature order, with their lengths.
    pub inputs: Vec<(InputArray, usize)>,
    /// Output arrays in signature order. A scalar kernel has one of length 1, named after the
    /// kernel (`norm`), which backends return instead of writing where they can.
    pub outputs: Vec<OutputArray>,
    /// Whether the kernel computes one value (the norm, the Ricci scalar, …).
    pub scalar: bool,
}

impl KernelIo {
    /// The inputs and outputs of `kind` for the metric `ks`.
    pub fn new(ks: &KernelSet, kind: KernelKind) -> Self {
        let n = ks.dim();
        let p = ks.program(kind);
        let inputs = kind
            .inputs()
            .iter()
            .map(|&a| {
                (
                    a,
                    if a == InputArray::Params {
                        ks.params.len()
                    } else {
                        n
                    },
                )
            })
            .collect();
        let scalar = p.shape.is_empty();
        let out = |name| OutputArray {
            name,
            len: p.outputs.len(),
        };
        let outputs = match kind {
            KernelKind::Hamilton => vec![
                OutputArray { name: "dx", len: n },
                OutputArray { name: "dp", len: n },
            ],
            KernelKind::Metric => vec![out("g")],
            KernelKind::InverseMetric => vec![out("ginv")],
            KernelKind::Christoffel => vec![out("gamma")],
            KernelKind::Transport => vec![out("dv")],
            other => vec![out(other.name())],
        };
        KernelIo {
            kind,
            inputs,
            outputs,
            scalar,
        }
    }

    /// Total number of values computed: the program's output count.
    pub fn output_len(&self) -> usize {
        self.outputs.iter().map(|o| o.len).sum()
    }

    /// The program's outputs, split over the output arrays: `(array, index in array, value)`.
    pub fn assignments<'a>(&'a self, p: &'a KernelProgram) -> Vec<(&'a OutputArray, usize, Val)> {
        let mut res = Vec::with_capacity(p.outputs.len());
        let mut at = 0;
        for o in &self.outputs {
            for j in 0..o.len {
                res.push((o, j, p.outputs[at + j]));
            }
            at += o.len;
        }
        res
    }
}

/// The kernels a metric has, in the order backends emit them: every [`KernelKind::ALL`]
/// kernel, then the curvature kernels when the declaration asked for them.
pub fn kernel_kinds(ks: &KernelSet) -> Vec<KernelKind> {
    let mut kinds = KernelKind::ALL.to_vec();
    kinds.extend(
        KernelKind::CURVATURE
            .iter()
            .copied()
            .filter(|&k| ks.try_program(k).is_some()),
    );
    kinds
}

/// Statements computing a sine and a cosine of one argument together, given
/// `(sine name, cosine name, argument)`.
pub type SinCos = fn(&str, &str, &str) -> Vec<String>;

/// How one language spells values, inputs, constants and calls.
pub struct Dialect {
    /// A definition of value `name` as `rhs` (`const double v3 = rhs;`).
    pub define: fn(name: &str, rhs: &str) -> String,
    /// Element `index` of an input array (`x[2]`, `x[..., 2]`).
    pub input: fn(array: InputArray, index: usize) -> String,
    /// A constant as a literal of the target's scalar type.
    pub literal: fn(f64) -> String,
    /// The name of an elementary function.
    pub func: fn(Func) -> &'static str,
    /// The square root's name.
    pub sqrt: &'static str,
    /// The real power's name (`pow`, `np.power`).
    pub pow: &'static str,
    /// The joint sine and cosine; `None` where the language has no such call.
    pub sincos: Option<SinCos>,
}

/// The C names of the elementary functions, shared by C, CUDA, OpenCL, WGSL and GLSL.
pub fn c_func(f: Func) -> &'static str {
    match f {
        Func::Sin => "sin",
        Func::Cos => "cos",
        Func::Tan => "tan",
        Func::Exp => "exp",
        Func::Ln => "log",
        Func::Sinh => "sinh",
        Func::Cosh => "cosh",
        Func::Tanh => "tanh",
        Func::Asin => "asin",
        Func::Acos => "acos",
        Func::Atan => "atan",
    }
}

/// A double-precision literal that reads back as exactly `x`: Rust's shortest round-trip
/// form (`2.0`, `0.1`, `1e-5`, `1.2345678901234568e20`) is valid C, CUDA, OpenCL and Python.
/// A constant beyond the double range becomes `inf_spelling` with its sign.
pub fn double_literal(x: f64, inf_spelling: &str) -> String {
    if x.is_finite() {
        format!("{x:?}")
    } else if x > 0.0 {
        inf_spelling.to_string()
    } else {
        format!("-{inf_spelling}")
    }
}

/// A single-precision literal that reads back as the f32 nearest to `x` (`2.0`, `1e-5`,
/// `3.1415927`). A constant beyond the f32 range keeps its f64 digits, which shader
/// compilers reject as out of range rather than run with a wrong value.
pub fn float_literal(x: f64) -> String {
    let y = x as f32;
    if y.is_finite() {
        format!("{y:?}")
    } else {
        format!("{x:?}")
    }
}

/// The SSA name of a value.
pub fn value_name(v: Val) -> String {
    format!("v{v}")
}

/// Values that reach an output; dead ones are not printed.
fn live_values(p: &KernelProgram) -> Vec<bool> {
    let mut live = vec![false; p.instrs.len()];
    for &o in &p.outputs {
        live[o as usize] = true;
    }
    for i in (0..p.instrs.len()).rev() {
        if !live[i] {
            continue;
        }
        match &p.instrs[i] {
            Instr::Input(..) | Instr::Const(_) | Instr::Named(_) => {}
            Instr::Neg(a) | Instr::Sqrt(a) | Instr::Call(_, a) => live[*a as usize] = true,
            Instr::Add(a, b)
            | Instr::Sub(a, b)
            | Instr::Mul(a, b)
            | Instr::Div(a, b)
            | Instr::Powf(a, b) => {
                live[*a as usize] = true;
                live[*b as usize] = true;
            }
        }
    }
    live
}

/// The statements of one kernel, before its outputs are written.
#[derive(Clone, Debug, Default)]
pub struct Statements {
    /// One statement per line, without indentation.
    pub lines: Vec<String>,
    /// The input arrays the statements read.
    pub reads: BTreeSet<InputArray>,
}

/// Prints every live instruction of `p` in program order. A sine and a cosine of one
/// argument become one joint call where the dialect has one.
pub fn statements(p: &KernelProgram, d: &Dialect) -> Statements {
    let live = live_values(p);
    let pairs: Vec<(Val, Val)> = match d.sincos {
        Some(_) => p
            .sin_cos_pairs()
            .into_iter()
            .filter(|&(s, c)| live[s as usize] && live[c as usize])
            .collect(),
        None => Vec::new(),
    };
    let v = |k: &Val| value_name(*k);
    let mut out = Statements::default();
    for (i, ins) in p.instrs.iter().enumerate() {
        let i = i as Val;
        if !live[i as usize] {
            continue;
        }
        if let Some(&(s, c)) = pairs.iter().find(|(s, c)| *s == i || *c == i) {
            if let (Some(joint), Instr::Call(_, a)) = (d.sincos, &p.instrs[s as usize]) {
                if i == s.min(c) {
                    out.lines.extend(joint(&v(&s), &v(&c), &v(a)));
                }
                continue;
            }
        }
        let rhs = match ins {
            Instr::Input(a, k) => {
                out.reads.insert(*a);
                (d.input)(*a, *k as usize)
            }
            Instr::Const(q) => (d.literal)(q_to_f64(q)),
            Instr::Named(NamedConst::Pi) => (d.literal)(std::f64::consts::PI),
            Instr::Named(NamedConst::E) => (d.literal)(std::f64::consts::E),
            Instr::Add(a, b) => format!("{} + {}", v(a), v(b)),
            Instr::Sub(a, b) => format!("{} - {}", v(a), v(b)),
            Instr::Mul(a, b) => format!("{} * {}", v(a), v(b)),
            Instr::Div(a, b) => format!("{} / {}", v(a), v(b)),
            Instr::Neg(a) => format!("-{}", v(a)),
            Instr::Sqrt(a) => format!("{}({})", d.sqrt, v(a)),
            Instr::Call(f, a) => format!("{}({})", (d.func)(*f), v(a)),
            Instr::Powf(a, b) => format!("{}({}, {})", d.pow, v(a), v(b)),
        };
        out.lines.push((d.define)(&v(&i), &rhs));
    }
    out
}

/// The description every emitted unit starts with, one line per entry, without comment
/// markers: the metric, its coordinates and parameters in order, `notes` about the target,
/// every function signature and the op counts of every kernel.
pub fn header(
    ks: &KernelSet,
    language: &str,
    notes: &[String],
    signatures: &[String],
) -> Vec<String> {
    let mut lines = vec![format!(
        "{}: geodesic kernels in {language}, generated by geokern from a metric declaration.",
        ks.name
    )];
    if !ks.docs.is_empty() {
        lines.push(String::new());
        lines.extend(ks.docs.iter().map(|d| d.trim().to_string()));
    }
    let list = |names: &[String]| {
        if names.is_empty() {
            "none".to_string()
        } else {
            names.join(", ")
        }
    };
    lines.push(String::new());
    lines.push(format!(
        "Metric {}, dimension {}: coordinates x = ({}).",
        ks.name,
        ks.dim(),
        ks.coords.join(", ")
    ));
    lines.push(format!(
        "Parameters, read from `params` in this order: {}.",
        list(&ks.params)
    ));
    lines.push(format!(
        "Conserved momenta, in output order of `conserved`: {}.",
        list(&ks.conserved_names())
    ));
    lines.push(format!(
        "Invariants, in output order of `invariants`: {}.",
        list(&ks.invariant_names)
    ));
    lines.push(
        "Arrays are row-major: g and ginv are [a][b]; gamma is [a][b][c] = Gamma^a_bc.".into(),
    );
    lines
        .push("accel = -Gamma^a_bc u^b u^c; dv = -Gamma^a_bc u^b v^c; norm = g_ab u^a u^b.".into());
    lines.push("(dx, dp) are Hamilton's equations for H = g^ab p_a p_b / 2.".into());
    if ks.has_curvature() {
        lines.push(
            "Curvature: riemann is [a][b][c][d] = R^a_bcd; ricci and einstein are [a][b]; \
             deviation = -R^a_bcd u^b v^c u^d for a separation v."
                .to_string(),
        );
    }
    lines.push(
        "Every kernel function is straight-line code: no branch, no loop, no allocation."
            .to_string(),
    );
    for note in notes {
        lines.push(note.clone());
    }
    lines.push(String::new());
    lines.push("Functions:".to_string());
    lines.extend(signatures.iter().map(|s| format!("  {s}")));
    lines.push(String::new());
    lines.push(
        "Op counts after common-subexpression elimination (a sine and a cosine of one \
         argument count as one call):"
            .to_string(),
    );
    for kind in kernel_kinds(ks) {
        lines.push(format!(
            "  {:<18} {}",
            kind.name(),
            ks.program(kind).op_counts()
        ));
    }
    lines
}

/// `lines` as a comment block with `marker` (`//`, `#`) before each line. Prose is wrapped
/// at 96 columns; indented lines (signatures, tables) are kept whole.
pub fn comment(lines: &[String], marker: &str) -> String {
    let mut out = String::new();
    for l in lines {
        if l.is_empty() {
            out.push_str(marker);
            out.push('\n');
            continue;
        }
        let pieces = if l.starts_with(' ') {
            vec![l.clone()]
        } else {
            wrap(l, 96 - marker.len() - 1)
        };
        for piece in pieces {
            out.push_str(marker);
            out.push(' ');
            out.push_str(&piece);
            out.push('\n');
        }
    }
    out
}

/// Splits `text` at spaces into lines of at most `width` characters (a longer word stands
/// alone).
fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in text.split(' ') {
        if !line.is_empty() && line.chars().count() + 1 + word.chars().count() > width {
            lines.push(std::mem::take(&mut line));
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    lines.push(line);
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn snake_case_of_struct_names() {
        for (name, want) in [
            ("KerrNewman", "kerr_newman"),
            ("Kerr", "kerr"),
            ("FLRWMetric", "flrw_metric"),
            ("Tangherlini5", "tangherlini5"),
            ("KerrSchildInv", "kerr_schild_inv"),
            ("Ellis5D", "ellis5_d"),
            ("sphere", "sphere"),
        ] {
            assert_eq!(snake_case(name), want, "{name}");
        }
    }

    #[test]
    fn literals_read_back_exactly() {
        for x in [
            2.0,
            0.1,
            -0.5,
            1e-5,
            1.2345678901234568e20,
            std::f64::consts::PI,
        ] {
            let lit = double_literal(x, "INFINITY");
            assert_eq!(lit.parse::<f64>(), Ok(x), "{lit}");
            let lit = float_literal(x);
            assert_eq!(lit.parse::<f32>(), Ok(x as f32), "{lit}");
        }
        assert_eq!(double_literal(2.0, "INFINITY"), "2.0");
        assert_eq!(double_literal(f64::NEG_INFINITY, "INFINITY"), "-INFINITY");
        assert_eq!(float_literal(1e300), "1e300");
    }

    #[test]
    fn comments_wrap_prose_and_keep_signatures() {
        let long = "word ".repeat(40).trim_end().to_string();
        let sig = format!("  {}", "x".repeat(120));
        let text = comment(&[long.clone(), String::new(), sig.clone()], "//");
        let lines: Vec<&str> = text.lines().collect();
        assert!(lines.iter().all(|l| l.len() <= 96 || l.ends_with('x')));
        assert_eq!(lines.len(), 5);
        assert_eq!(lines[3], "//");
        assert_eq!(lines[4], format!("// {sig}"));
        let words: Vec<&str> = lines[..3].iter().map(|l| &l[3..]).collect();
        assert_eq!(words.join(" "), long);
    }
}
