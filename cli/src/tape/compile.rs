//! From a kernel program to a tape: checking, fusing arithmetic into the uniform
//! instruction, and ordering by level.

use geokern_symbolic::expr::{q_to_f64, Func};
use geokern_symbolic::program::{InputArray, Instr, KernelProgram, Val};

use super::code::{Form, Load, Preset, Reg, Special, Step, Uniform};
use super::{Tape, MAX_REGISTERS, RESERVED};

/// Why a program could not be put on a tape. Programs made by the engine always can; this
/// guards against a hand-made or corrupted one.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum TapeError {
    /// An instruction reads a value that is not defined before it.
    #[error("instruction {at} reads value {operand}, which is not defined before it")]
    ForwardReference {
        /// The instruction.
        at: usize,
        /// The value it reads.
        operand: u32,
    },
    /// An output names a value the program does not define.
    #[error("output {index} names value {value}, which the program does not define")]
    BadOutput {
        /// Position of the output.
        index: usize,
        /// The value named.
        value: u32,
    },
    /// The program has more values than a tape addresses.
    #[error("the program has {count} values; a tape holds at most {}", MAX_REGISTERS - RESERVED)]
    TooLarge {
        /// The number of values.
        count: usize,
    },
    /// A parameter index is not below the number of parameters.
    #[error("the program reads parameter {index}, but the metric has {count}")]
    BadParameter {
        /// The index read.
        index: u16,
        /// The number of parameters.
        count: usize,
    },
}

impl Tape {
    /// Compiles `program`, for a metric with `param_count` parameters.
    pub fn compile(program: &KernelProgram, param_count: usize) -> Result<Tape, TapeError> {
        check_program(program, param_count)?;
        let count = program.instrs.len();
        // From here on every value fits in 16 bits and every operand precedes its user
        // (both checked just above).
        let reg = |v: Val| v as Reg;
        let (one, minus_one, minus_zero) = (count as Reg, count as Reg + 1, count as Reg + 2);
        let mut presets = vec![
            (one, Preset::Constant(1.0)),
            (minus_one, Preset::Constant(-1.0)),
            (minus_zero, Preset::Constant(-0.0)),
        ];
        // Each sine paired with a cosine of the same argument (and vice versa) runs as one
        // `sin_cos`, placed at whichever of the two comes first.
        let mut partner: Vec<Option<Val>> = vec![None; count];
        for (s, c) in program.sin_cos_pairs() {
            partner[s as usize] = Some(c);
            partner[c as usize] = Some(s);
        }
        let constants = Constants {
            one,
            minus_one,
            minus_zero,
        };
        let (forms, absorbed) = arithmetic_forms(program, constants);
        let mut loads = Vec::new();
        let mut schedule = Schedule::new(count + RESERVED, constants);
        for (i, ins) in program.instrs.iter().enumerate() {
            let d = i as Reg;
            let special = match ins {
                Instr::Input(InputArray::Params, k) => {
                    presets.push((d, Preset::Parameter(*k as usize)));
                    continue;
                }
                Instr::Input(array, k) => {
                    loads.push(Load {
                        array: *array,
                        index: *k as usize,
                        register: d,
                    });
                    continue;
                }
                Instr::Const(q) => {
                    presets.push((d, Preset::Constant(q_to_f64(q))));
                    continue;
                }
                Instr::Named(c) => {
                    presets.push((d, Preset::Constant(c.value())));
                    continue;
                }
                Instr::Add(..) | Instr::Sub(..) | Instr::Mul(..) | Instr::Neg(_) => {
                    if let (Some(f), false) = (forms[i], absorbed[i]) {
                        schedule.uniform(d, f);
                    }
                    continue;
                }
                Instr::Div(a, b) => Special::Div {
                    d,
                    a: reg(*a),
                    b: reg(*b),
                },
                Instr::Sqrt(a) => Special::Sqrt { d, a: reg(*a) },
                Instr::Powf(a, b) => Special::Powf {
                    d,
                    a: reg(*a),
                    b: reg(*b),
                },
                Instr::Call(f, a) => {
                    let a = reg(*a);
                    match (f, partner[i]) {
                        (Func::Sin, Some(c)) if c as usize > i => {
                            Special::SinCos { d, c: reg(c), a }
                        }
                        (Func::Cos, Some(s)) if s as usize > i => {
                            Special::SinCos { d: reg(s), c: d, a }
                        }
                        // The partner came first and already wrote this register.
                        (Func::Sin | Func::Cos, Some(_)) => continue,
                        _ => Special::Call { d, a, f: *f },
                    }
                }
            };
            schedule.special(special);
        }
        let order = schedule.finish();
        // Registers are renumbered: those written by presets, loads and special operations
        // first, in their old order, then one per uniform instruction in tape order, so a
        // uniform instruction's destination is implicit. Every register an instruction or
        // an output reads is written by one of those (absorbed values are never read), and
        // there are at most `count + RESERVED` of them.
        let total = count + RESERVED;
        let mut fixed = vec![false; total];
        for &(r, _) in &presets {
            fixed[usize::from(r)] = true;
        }
        for load in &loads {
            fixed[usize::from(load.register)] = true;
        }
        for special in order.iter().filter_map(|op| op.as_ref().err()) {
            for r in special.writes().into_iter().flatten() {
                fixed[usize::from(r)] = true;
            }
        }
        let mut map = vec![0 as Reg; total];
        let mut next = 0;
        for (old, _) in fixed.iter().enumerate().filter(|(_, &f)| f) {
            map[old] = next as Reg;
            next += 1;
        }
        let base = next as Reg;
        for &(d, _) in order.iter().filter_map(|op| op.as_ref().ok()) {
            map[usize::from(d)] = next as Reg;
            next += 1;
        }
        let m = |r: Reg| map[usize::from(r)];
        let (steps, uniform) = lay_out(&order, m);
        Ok(Tape {
            kind: program.kind,
            presets: presets.into_iter().map(|(r, p)| (m(r), p)).collect(),
            loads: loads
                .into_iter()
                .map(|l| Load {
                    register: m(l.register),
                    ..l
                })
                .collect(),
            steps,
            uniform,
            base,
            outputs: program.outputs.iter().map(|&v| m(reg(v))).collect(),
            shape: program.shape.clone(),
        })
    }
}

/// Checks what every evaluator of `program` relies on: at most [`MAX_REGISTERS`] values
/// (less the reserved constants), every operand defined before its user, every output
/// defined, every parameter index below `param_count`.
pub(crate) fn check_program(program: &KernelProgram, param_count: usize) -> Result<(), TapeError> {
    let count = program.instrs.len();
    if count > MAX_REGISTERS - RESERVED {
        return Err(TapeError::TooLarge { count });
    }
    for (index, &value) in program.outputs.iter().enumerate() {
        if value as usize >= count {
            return Err(TapeError::BadOutput { index, value });
        }
    }
    for (at, ins) in program.instrs.iter().enumerate() {
        if let Some(operand) = operands(ins).find(|&o| o as usize >= at) {
            return Err(TapeError::ForwardReference { at, operand });
        }
        if let Instr::Input(InputArray::Params, k) = ins {
            if *k as usize >= param_count {
                return Err(TapeError::BadParameter {
                    index: *k,
                    count: param_count,
                });
            }
        }
    }
    Ok(())
}

/// The values an instruction reads.
fn operands(ins: &Instr) -> impl Iterator<Item = Val> {
    let (a, b) = match *ins {
        Instr::Add(a, b)
        | Instr::Sub(a, b)
        | Instr::Mul(a, b)
        | Instr::Div(a, b)
        | Instr::Powf(a, b) => (Some(a), Some(b)),
        Instr::Neg(a) | Instr::Sqrt(a) | Instr::Call(_, a) => (Some(a), None),
        Instr::Input(..) | Instr::Const(_) | Instr::Named(_) => (None, None),
    };
    a.into_iter().chain(b)
}

/// The registers holding 1, -1 and -0.
#[derive(Clone, Copy, Debug)]
struct Constants {
    one: Reg,
    minus_one: Reg,
    minus_zero: Reg,
}

/// The form of every arithmetic value, and which values are absorbed into their one user
/// instead of being computed on their own.
///
/// A value is absorbed when it is used exactly once, is not an output, and its user can take
/// it in: a product `a·b` into a product (`(a·b)·y`), a sum (`(a·b)·e + y`), the subtrahend
/// of a difference (`(a·b)·(-1) + x`) or a negation; any product form `(a·b)·e` into a sum.
/// Every form performs the same roundings, in the same order, as compiled code.
fn arithmetic_forms(program: &KernelProgram, k: Constants) -> (Vec<Option<Form>>, Vec<bool>) {
    let count = program.instrs.len();
    let mut uses = vec![0u32; count];
    let mut user = vec![usize::MAX; count];
    for (i, ins) in program.instrs.iter().enumerate() {
        for o in operands(ins) {
            if let Some(u) = uses.get_mut(o as usize) {
                *u += 1;
                user[o as usize] = i;
            }
        }
    }
    for &o in &program.outputs {
        if let Some(u) = uses.get_mut(o as usize) {
            *u += 2;
        }
    }
    let reg = |v: Val| v as Reg;
    let mut form: Vec<Option<Form>> = vec![None; count];
    let mut absorbed = vec![false; count];
    let mut claimed = vec![false; count];
    for (i, ins) in program.instrs.iter().enumerate() {
        let taken = |v: &Val| {
            if absorbed[*v as usize] {
                form[*v as usize]
            } else {
                None
            }
        };
        let f = match ins {
            Instr::Mul(x, y) => match (taken(x), taken(y)) {
                (Some(p), _) => Form { e: reg(*y), ..p },
                (None, Some(p)) => Form { e: reg(*x), ..p },
                (None, None) => Form {
                    a: reg(*x),
                    b: reg(*y),
                    e: k.one,
                    c: k.minus_zero,
                },
            },
            Instr::Add(x, y) => match (taken(x), taken(y)) {
                (Some(p), _) => Form { c: reg(*y), ..p },
                (None, Some(p)) => Form { c: reg(*x), ..p },
                (None, None) => Form {
                    a: reg(*x),
                    b: k.one,
                    e: k.one,
                    c: reg(*y),
                },
            },
            Instr::Sub(x, y) => match taken(y) {
                Some(p) => Form {
                    e: k.minus_one,
                    c: reg(*x),
                    ..p
                },
                None => Form {
                    a: reg(*y),
                    b: k.minus_one,
                    e: k.one,
                    c: reg(*x),
                },
            },
            Instr::Neg(x) => match taken(x) {
                Some(p) => Form {
                    e: k.minus_one,
                    ..p
                },
                None => Form {
                    a: reg(*x),
                    b: k.minus_one,
                    e: k.one,
                    c: k.minus_zero,
                },
            },
            _ => continue,
        };
        form[i] = Some(f);
        let u = user[i];
        if uses[i] != 1 || f.c != k.minus_zero || claimed.get(u).copied().unwrap_or(true) {
            continue;
        }
        let plain = f.e == k.one;
        let takes = match program.instrs.get(u) {
            Some(Instr::Mul(..) | Instr::Neg(_)) => plain,
            Some(Instr::Add(..)) => true,
            Some(Instr::Sub(_, y)) => plain && *y as usize == i,
            _ => false,
        };
        if takes {
            absorbed[i] = true;
            claimed[u] = true;
        }
    }
    (form, absorbed)
}

/// A uniform instruction with the register it writes, or a special operation.
type Op = Result<(Reg, Form), Special>;

/// Orders the operations by level and collects uniform instructions into runs between
/// special operations.
///
/// An operation's level is one more than the highest level of its operands (inputs and
/// constants are level 0). Within a level the uniform instructions come first, so each level
/// adds at most one run.
struct Schedule {
    constants: Constants,
    level: Vec<u32>,
    ops: Vec<(u32, bool, usize, Op)>,
}

impl Schedule {
    fn new(registers: usize, constants: Constants) -> Self {
        Schedule {
            constants,
            level: vec![0; registers],
            ops: Vec::new(),
        }
    }

    fn level_after(&self, operands: &[Reg]) -> u32 {
        1 + operands
            .iter()
            .map(|&o| self.level[usize::from(o)])
            .max()
            .unwrap_or(0)
    }

    fn uniform(&mut self, d: Reg, f: Form) {
        let f = placed(f, self.constants, |r| self.level[usize::from(r)]);
        let level = self.level_after(&[f.a, f.b, f.e, f.c]);
        self.level[usize::from(d)] = level;
        self.ops.push((level, false, self.ops.len(), Ok((d, f))));
    }

    fn special(&mut self, op: Special) {
        let (operands, results): (&[Reg], &[Reg]) = match &op {
            Special::Div { d, a, b } | Special::Powf { d, a, b } => (&[*a, *b], &[*d]),
            Special::Sqrt { d, a } | Special::Call { d, a, .. } => (&[*a], &[*d]),
            Special::SinCos { d, c, a } => (&[*a], &[*d, *c]),
        };
        let level = self.level_after(operands);
        for &r in results {
            self.level[usize::from(r)] = level;
        }
        self.ops.push((level, true, self.ops.len(), Err(op)));
    }

    /// The operations in tape order.
    fn finish(mut self) -> Vec<Op> {
        self.ops
            .sort_by_key(|(level, special, seq, _)| (*level, *special, *seq));
        self.ops.into_iter().map(|(_, _, _, op)| op).collect()
    }
}

/// The steps and the uniform instructions of a tape, from its operations in tape order and
/// the numbering of its registers.
fn lay_out(order: &[Op], m: impl Fn(Reg) -> Reg) -> (Vec<Step>, Vec<Uniform>) {
    let mut steps = Vec::new();
    let mut uniform = Vec::with_capacity(order.len());
    let mut start = 0;
    let close = |steps: &mut Vec<Step>, uniform: &Vec<Uniform>, start: &mut usize| {
        if uniform.len() > *start {
            steps.push(Step::Uniform {
                start: *start as u32,
                end: uniform.len() as u32,
            });
            *start = uniform.len();
        }
    };
    for op in order {
        match *op {
            Ok((_, f)) => uniform.push(Uniform::new(Form {
                a: m(f.a),
                b: m(f.b),
                e: m(f.e),
                c: m(f.c),
            })),
            Err(special) => {
                close(&mut steps, &uniform, &mut start);
                steps.push(Step::Special(special.renamed(&m)));
            }
        }
    }
    close(&mut steps, &uniform, &mut start);
    (steps, uniform)
}

/// `f` with its operands moved, where that is exact, so that the one computed last (the
/// highest `level`) goes through the fewest operations of `(a·b)·e + c`: `c` is one addition
/// from the result, `e` a multiplication and an addition, `a` and `b` all three. The
/// processor starts on the earlier operands while the late one is still being computed.
///
/// Exact because multiplying by 1 or -1 is (`(1·1)·x = x`, `(1·(-1))·y = -y`) and because
/// sums and products commute bit for bit (up to which NaN comes out, which carries no
/// meaning).
fn placed(f: Form, k: Constants, level: impl Fn(Reg) -> u32) -> Form {
    let Form { a, b, e, c } = f;
    let later_last = |x: Reg, y: Reg| {
        if level(x) > level(y) {
            (y, x)
        } else {
            (x, y)
        }
    };
    if e != k.one {
        return f;
    }
    if b == k.one {
        // x + y as (1·1)·x + y.
        let (x, y) = later_last(a, c);
        Form {
            a: k.one,
            b: k.one,
            e: x,
            c: y,
        }
    } else if b == k.minus_one {
        // c - a (and -a, with c = -0) as (1·(-1))·a + c.
        Form {
            a: k.one,
            b: k.minus_one,
            e: a,
            c,
        }
    } else if c == k.minus_zero {
        // x·y as (x·1)·y + (-0).
        let (x, y) = later_last(a, b);
        Form {
            a: x,
            b: k.one,
            e: y,
            c,
        }
    } else {
        f
    }
}
