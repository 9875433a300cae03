//! The kernel program: the one intermediate form every backend reads.
//!
//! A [`KernelProgram`] is a straight-line SSA program: a flat list of [`Instr`]uctions, each
//! defining the value numbered by its position, whose operands are earlier values. There is no
//! branch, no loop and no memory but the inputs and outputs, so every backend is a plain
//! printer and the op counts are exact.

mod factor;
mod lower;

pub use lower::lower;

use std::fmt;

use crate::expr::{q_to_f64, Func, NamedConst, Q};

/// An SSA value: the index of the instruction that defines it.
pub type Val = u32;

/// The input arrays a kernel may read, in the order they appear in signatures.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub enum InputArray {
    /// The metric parameters, in declared order.
    Params,
    /// Position x^a.
    X,
    /// Velocity u^a.
    U,
    /// Covariant momentum p_a.
    P,
    /// Transported vector v^a.
    V,
}

impl InputArray {
    /// The argument name used by backends.
    pub fn name(self) -> &'static str {
        match self {
            InputArray::Params => "params",
            InputArray::X => "x",
            InputArray::U => "u",
            InputArray::P => "p",
            InputArray::V => "v",
        }
    }
}

/// One instruction. Commutative operands are stored in ascending order.
#[derive(Clone, PartialEq, Eq, Hash, Debug)]
pub enum Instr {
    /// Element `index` of an input array.
    Input(InputArray, u16),
    /// An exact constant (printed as the nearest float of the target type).
    Const(Q),
    /// A named constant.
    Named(NamedConst),
    /// a + b.
    Add(Val, Val),
    /// a − b.
    Sub(Val, Val),
    /// a · b.
    Mul(Val, Val),
    /// a / b.
    Div(Val, Val),
    /// −a.
    Neg(Val),
    /// √a.
    Sqrt(Val),
    /// f(a).
    Call(Func, Val),
    /// a^b for real b.
    Powf(Val, Val),
}

/// Which kernel a program computes.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub enum KernelKind {
    /// g_ab.
    Metric,
    /// g^ab.
    InverseMetric,
    /// Γ^a_bc.
    Christoffel,
    /// −Γ^a_bc u^b u^c.
    Accel,
    /// (dx/dλ, dp/dλ).
    Hamilton,
    /// −Γ^a_bc u^b v^c.
    Transport,
    /// g_ab u^a u^b.
    Norm,
    /// Conserved momenta.
    Conserved,
    /// User invariants.
    Invariants,
    /// R^a_bcd (with `options: [curvature]`).
    Riemann,
    /// R_ab (with `options: [curvature]`).
    Ricci,
    /// R (with `options: [curvature]`).
    RicciScalar,
    /// G_ab (with `options: [curvature]`).
    Einstein,
    /// R_abcd R^abcd (with `options: [curvature]`).
    Kretschmann,
    /// −R^a_bcd u^b ξ^c u^d, the geodesic-deviation right-hand side (with `options: [curvature]`).
    Deviation,
}

impl KernelKind {
    /// Every kernel, in the order backends emit them.
    pub const ALL: [KernelKind; 9] = [
        KernelKind::Metric,
        KernelKind::InverseMetric,
        KernelKind::Christoffel,
        KernelKind::Accel,
        KernelKind::Hamilton,
        KernelKind::Transport,
        KernelKind::Norm,
        KernelKind::Conserved,
        KernelKind::Invariants,
    ];

    /// The curvature kernels, generated when a declaration asks for them.
    pub const CURVATURE: [KernelKind; 6] = [
        KernelKind::Riemann,
        KernelKind::Ricci,
        KernelKind::RicciScalar,
        KernelKind::Einstein,
        KernelKind::Kretschmann,
        KernelKind::Deviation,
    ];

    /// The kernel's short name (`christoffel`, `accel`, `hamilton`, …).
    pub fn name(self) -> &'static str {
        match self {
            KernelKind::Metric => "metric",
            KernelKind::InverseMetric => "inverse_metric",
            KernelKind::Christoffel => "christoffel",
            KernelKind::Accel => "accel",
            KernelKind::Hamilton => "hamilton",
            KernelKind::Transport => "transport",
            KernelKind::Norm => "norm",
            KernelKind::Conserved => "conserved",
            KernelKind::Invariants => "invariants",
            KernelKind::Riemann => "riemann",
            KernelKind::Ricci => "ricci",
            KernelKind::RicciScalar => "ricci_scalar",
            KernelKind::Einstein => "einstein",
            KernelKind::Kretschmann => "kretschmann",
            KernelKind::Deviation => "deviation",
        }
    }

    /// The input arrays of this kernel, in signature order.
    pub fn inputs(self) -> &'static [InputArray] {
        use InputArray::*;
        match self {
            KernelKind::Metric
            | KernelKind::InverseMetric
            | KernelKind::Christoffel
            | KernelKind::Riemann
            | KernelKind::Ricci
            | KernelKind::RicciScalar
            | KernelKind::Einstein
            | KernelKind::Kretschmann => &[Params, X],
            KernelKind::Deviation => &[Params, X, U, V],
            KernelKind::Accel | KernelKind::Norm | KernelKind::Conserved => &[Params, X, U],
            KernelKind::Invariants => &[Params, X, U],
            KernelKind::Hamilton => &[Params, X, P],
            KernelKind::Transport => &[Params, X, U, V],
        }
    }
}

/// Operation counts of a kernel after elimination: the figure of merit for generated code.
#[derive(Clone, Copy, PartialEq, Eq, Hash, Debug, Default)]
pub struct OpCounts {
    /// Additions, subtractions and negations.
    pub add: u32,
    /// Multiplications.
    pub mul: u32,
    /// Divisions.
    pub div: u32,
    /// Function calls (square roots included; a sine and cosine of one argument count once).
    pub call: u32,
}

impl OpCounts {
    /// All operations together.
    pub fn total(&self) -> u32 {
        self.add + self.mul + self.div + self.call
    }
}

impl fmt::Display for OpCounts {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} ops ({} add, {} mul, {} div, {} call)",
            self.total(),
            self.add,
            self.mul,
            self.div,
            self.call
        )
    }
}

/// A kernel as a straight-line program.
#[derive(Clone, PartialEq, Debug)]
pub struct KernelProgram {
    /// Which kernel this is.
    pub kind: KernelKind,
    /// Dimension of the metric.
    pub dim: usize,
    /// Instructions; value `i` is defined by `instrs[i]`.
    pub instrs: Vec<Instr>,
    /// The output values, flattened row-major over `shape`.
    pub outputs: Vec<Val>,
    /// The shape of the output (e.g. `[4, 4, 4]` for Christoffel symbols, `[2, 4]` for
    /// Hamilton's equations).
    pub shape: Vec<usize>,
}

impl KernelProgram {
    /// Values that are the cosine of an argument whose sine is also computed (and so can
    /// share one `sin_cos` call): `(sin value, cos value)` pairs in program order.
    pub fn sin_cos_pairs(&self) -> Vec<(Val, Val)> {
        let mut sin_of = std::collections::BTreeMap::new();
        for (i, ins) in self.instrs.iter().enumerate() {
            if let Instr::Call(Func::Sin, a) = ins {
                sin_of.insert(*a, i as Val);
            }
        }
        let mut pairs = Vec::new();
        for (i, ins) in self.instrs.iter().enumerate() {
            if let Instr::Call(Func::Cos, a) = ins {
                if let Some(&s) = sin_of.get(a) {
                    pairs.push((s, i as Val));
                }
            }
        }
        pairs.sort();
        pairs
    }

    /// Operation counts of the program.
    pub fn op_counts(&self) -> OpCounts {
        let mut c = OpCounts::default();
        for ins in &self.instrs {
            match ins {
                Instr::Input(..) | Instr::Const(_) | Instr::Named(_) => {}
                Instr::Add(..) | Instr::Sub(..) | Instr::Neg(_) => c.add += 1,
                Instr::Mul(..) => c.mul += 1,
                Instr::Div(..) => c.div += 1,
                Instr::Sqrt(_) | Instr::Call(..) | Instr::Powf(..) => c.call += 1,
            }
        }
        c.call -= self.sin_cos_pairs().len() as u32;
        c
    }

    /// Runs the program in f64. `inputs` holds one slice per array the kernel reads (absent
    /// arrays may be empty); `out` receives the flattened outputs. Used by tests and as the
    /// reference for the CLI's faster tape.
    pub fn eval_f64(&self, inputs: &dyn Fn(InputArray) -> Vec<f64>, out: &mut Vec<f64>) {
        let arrays: Vec<(InputArray, Vec<f64>)> =
            self.kind.inputs().iter().map(|&a| (a, inputs(a))).collect();
        let mut v = vec![0.0; self.instrs.len()];
        for (i, ins) in self.instrs.iter().enumerate() {
            let g = |k: &Val| v[*k as usize];
            v[i] = match ins {
                Instr::Input(a, k) => arrays
                    .iter()
                    .find(|(arr, _)| arr == a)
                    .and_then(|(_, vals)| vals.get(*k as usize).copied())
                    .unwrap_or(f64::NAN),
                Instr::Const(q) => q_to_f64(q),
                Instr::Named(c) => c.value(),
                Instr::Add(a, b) => g(a) + g(b),
                Instr::Sub(a, b) => g(a) - g(b),
                Instr::Mul(a, b) => g(a) * g(b),
                Instr::Div(a, b) => g(a) / g(b),
                Instr::Neg(a) => -g(a),
                Instr::Sqrt(a) => g(a).sqrt(),
                Instr::Call(f, a) => f.eval(g(a)),
                Instr::Powf(a, b) => g(a).powf(g(b)),
            };
        }
        out.clear();
        out.extend(self.outputs.iter().map(|&o| v[o as usize]));
    }
}

impl fmt::Display for KernelProgram {
    /// A plain listing, one instruction a line, for debugging and golden tests.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, ins) in self.instrs.iter().enumerate() {
            write!(f, "v{i} = ")?;
            match ins {
                Instr::Input(a, k) => write!(f, "{}[{k}]", a.name())?,
                Instr::Const(q) => write!(f, "{q}")?,
                Instr::Named(c) => write!(f, "{c:?}")?,
                Instr::Add(a, b) => write!(f, "v{a} + v{b}")?,
                Instr::Sub(a, b) => write!(f, "v{a} - v{b}")?,
                Instr::Mul(a, b) => write!(f, "v{a} * v{b}")?,
                Instr::Div(a, b) => write!(f, "v{a} / v{b}")?,
                Instr::Neg(a) => write!(f, "-v{a}")?,
                Instr::Sqrt(a) => write!(f, "sqrt(v{a})")?,
                Instr::Call(func, a) => write!(f, "{}(v{a})", func.name())?,
                Instr::Powf(a, b) => write!(f, "pow(v{a}, v{b})")?,
            }
            writeln!(f)?;
        }
        let outs: Vec<String> = self.outputs.iter().map(|o| format!("v{o}")).collect();
        writeln!(f, "out = [{}]", outs.join(", "))
    }
}
