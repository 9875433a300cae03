//! The instructions of a tape and the loop that runs them.

use geokern_symbolic::expr::Func;
use geokern_symbolic::program::InputArray;

use super::MAX_REGISTERS;

/// A register number.
pub(super) type Reg = u16;

/// `d = (a·b)·e + c`: `d | a << 16 | b << 32 | c << 48` in one word, `e` in the next, so it is
/// read with two loads.
#[derive(Clone, Copy, Debug, PartialEq)]
#[repr(C, align(16))]
pub(super) struct Uniform {
    pub main: u64,
    pub e: u64,
}

impl Uniform {
    pub(super) fn new(d: Reg, f: Form) -> Uniform {
        let main =
            u64::from(d) | u64::from(f.a) << 16 | u64::from(f.b) << 32 | u64::from(f.c) << 48;
        Uniform {
            main,
            e: u64::from(f.e),
        }
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

/// The interpreter loop. Register numbers are 16-bit and the file holds 2^16 registers, so
/// no index can be out of range.
#[inline]
pub(super) fn run(steps: &[Step], uniform: &[Uniform], r: &mut [f64; MAX_REGISTERS]) {
    for step in steps {
        match *step {
            Step::Uniform { start, end } => {
                for word in uniform.get(start as usize..end as usize).unwrap_or(&[]) {
                    let field = |k: u32| usize::from((word.main >> (16 * k)) as Reg);
                    let e = usize::from(word.e as Reg);
                    r[field(0)] = r[field(1)] * r[field(2)] * r[e] + r[field(3)];
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
