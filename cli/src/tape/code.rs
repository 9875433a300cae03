//! The instructions of a tape and the loop that runs them.

use geokern_symbolic::expr::Func;
use geokern_symbolic::program::InputArray;

use super::MAX_REGISTERS;

/// A register number.
pub(super) type Reg = u16;

/// `d = (a·b)·e + c`: `a | b << 16 | e << 32 | c << 48`, one word read with one load. The
/// destination is implicit: registers are numbered so that the uniform instruction at
/// position `k` of the tape writes register `base + k`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct Uniform(pub u64);

impl Uniform {
    pub(super) fn new(f: Form) -> Uniform {
        Uniform(u64::from(f.a) | u64::from(f.b) << 16 | u64::from(f.e) << 32 | u64::from(f.c) << 48)
    }
}

/// The operations dispatched one by one.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) enum Special {
    Div {
        d: Reg,
        a: Reg,
        b: Reg,
    },
    Sqrt {
        d: Reg,
        a: Reg,
    },
    Call {
        d: Reg,
        a: Reg,
        f: Func,
    },
    /// `d = sin(a)` and `c = cos(a)`.
    SinCos {
        d: Reg,
        c: Reg,
        a: Reg,
    },
    Powf {
        d: Reg,
        a: Reg,
        b: Reg,
    },
}

/// A run of uniform instructions (a range of `Tape::uniform`) or one special operation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) enum Step {
    Uniform { start: u32, end: u32 },
    Special(Special),
}

/// A register whose value is loaded from an input array at every evaluation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct Load {
    pub array: InputArray,
    pub index: usize,
    pub register: Reg,
}

/// What a register file starts with, independent of the point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) enum Preset {
    Constant(f64),
    Parameter(usize),
}

/// How an arithmetic value is computed: `(a·b)·e + c`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct Form {
    pub a: Reg,
    pub b: Reg,
    pub e: Reg,
    pub c: Reg,
}

impl Special {
    /// The registers it writes.
    pub(super) fn writes(&self) -> [Option<Reg>; 2] {
        match *self {
            Special::Div { d, .. }
            | Special::Sqrt { d, .. }
            | Special::Call { d, .. }
            | Special::Powf { d, .. } => [Some(d), None],
            Special::SinCos { d, c, .. } => [Some(d), Some(c)],
        }
    }

    /// The same operation on registers renamed by `m`.
    pub(super) fn renamed(self, m: impl Fn(Reg) -> Reg) -> Special {
        match self {
            Special::Div { d, a, b } => Special::Div {
                d: m(d),
                a: m(a),
                b: m(b),
            },
            Special::Sqrt { d, a } => Special::Sqrt { d: m(d), a: m(a) },
            Special::Call { d, a, f } => Special::Call {
                d: m(d),
                a: m(a),
                f,
            },
            Special::SinCos { d, c, a } => Special::SinCos {
                d: m(d),
                c: m(c),
                a: m(a),
            },
            Special::Powf { d, a, b } => Special::Powf {
                d: m(d),
                a: m(a),
                b: m(b),
            },
        }
    }
}

/// The interpreter loop. Register numbers are 16-bit and the file holds 2^16 registers, so
/// no index can be out of range. `base` is the register the first uniform instruction
/// writes.
#[inline]
pub(super) fn run(steps: &[Step], uniform: &[Uniform], base: Reg, r: &mut [f64; MAX_REGISTERS]) {
    for step in steps {
        match *step {
            Step::Uniform { start, end } => {
                // Wrapping keeps the index 16-bit for the compiler; compiling numbered the
                // registers so that it never wraps.
                let mut d = base.wrapping_add(start as Reg);
                let words = uniform.get(start as usize..end as usize).unwrap_or(&[]);
                // Two instructions per iteration halve the loop's own counting and
                // branching; each still completes before the next reads.
                let pairs = words.chunks_exact(2);
                let last = pairs.remainder();
                for pair in pairs {
                    if let [Uniform(w), Uniform(v)] = *pair {
                        uniform_step(r, d, w);
                        uniform_step(r, d.wrapping_add(1), v);
                    }
                    d = d.wrapping_add(2);
                }
                if let [Uniform(w)] = *last {
                    uniform_step(r, d, w);
                }
            }
            Step::Special(special) => {
                let at = usize::from;
                match special {
                    Special::Div { d, a, b } => r[at(d)] = r[at(a)] / r[at(b)],
                    Special::Sqrt { d, a } => r[at(d)] = r[at(a)].sqrt(),
                    Special::Call { d, a, f } => r[at(d)] = f.eval(r[at(a)]),
                    Special::SinCos { d, c, a } => {
                        let (s, co) = r[at(a)].sin_cos();
                        r[at(d)] = s;
                        r[at(c)] = co;
                    }
                    Special::Powf { d, a, b } => r[at(d)] = r[at(a)].powf(r[at(b)]),
                }
            }
        }
    }
}

/// One uniform instruction `w`, writing register `d`.
#[inline(always)]
fn uniform_step(r: &mut [f64; MAX_REGISTERS], d: Reg, w: u64) {
    let field = |k: u32| usize::from((w >> (16 * k)) as Reg);
    r[usize::from(d)] = r[field(0)] * r[field(1)] * r[field(2)] + r[field(3)];
}
