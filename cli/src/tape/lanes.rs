//! A lane-parallel tape: one kernel program evaluated on `W` points per instruction.
//!
//! The scalar [`Tape`](super::Tape) pays one dispatch per instruction per point. Work that
//! evaluates a kernel at many independent points at once (one light ray per pixel) can share
//! that dispatch: here every register holds `W` values, one per *lane*, and every instruction
//! runs on all lanes in a loop over a fixed-size array that the compiler turns into vector
//! instructions. So a kernel costs one dispatch per instruction per `W` points.
//!
//! The evaluator is built straight from a [`KernelProgram`] and performs exactly the operations
//! [`KernelProgram::eval_f64`] performs, in the same order, so each lane's result is bit for
//! bit the reference value (no fused multiply-add: Rust never contracts).
//!
//! ```
//! use geokern_cli::tape::lanes::{LaneInputs, LaneProgram};
//! use geokern_symbolic::{model, parse, program::KernelKind};
//!
//! let file = parse::parse_str(
//!     "struct Polar { coords: [r, phi], g[r, r] = 1; g[phi, phi] = r.powi(2); }",
//! )
//! .unwrap();
//! let kernels = model::compile(&file.metrics[0]).unwrap();
//! let program = LaneProgram::<2>::new(kernels.program(KernelKind::Accel)).unwrap();
//! let mut registers = program.registers(&[]);
//! // Two points at once: r = 2 and r = 3, both with dphi/dlambda = 1.
//! let x = [[2.0, 3.0], [0.0, 0.0]];
//! let u = [[0.0, 0.0], [1.0, 1.0]];
//! let mut accel = [[0.0; 2]; 2];
//! program.eval(&mut registers, &LaneInputs { x: &x, u: &u, ..LaneInputs::default() }, &mut accel);
//! // r'' = r phi'^2 in each lane.
//! assert_eq!(accel[0], [2.0, 3.0]);
//! ```

use geokern_symbolic::expr::{q_to_f64, Func};
use geokern_symbolic::program::{InputArray, Instr, KernelKind, KernelProgram};

/// Registers a lane program may use: register numbers are 16-bit, and a register file holds
/// all of them, so indexing needs no bounds check.
pub const MAX_LANE_REGISTERS: usize = 1 << 16;

/// Why a program cannot be put on lanes.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum LaneError {
    /// The program has more values than a register file holds.
    #[error("kernel `{kernel}` has {values} values; a lane program holds at most {max}")]
    TooLarge {
        /// The kernel's name.
        kernel: &'static str,
        /// How many values it defines.
        values: usize,
        /// The limit.
        max: usize,
    },
    /// An instruction names a value not defined before it (a malformed program).
    #[error("kernel `{kernel}`: instruction {index} reads a value not yet defined")]
    Malformed {
        /// The kernel's name.
        kernel: &'static str,
        /// The offending instruction.
        index: usize,
    },
}

/// One computing instruction; the destination is kept beside it.
#[derive(Clone, Copy, Debug)]
enum Op {
    Add(u16, u16),
    Sub(u16, u16),
    Mul(u16, u16),
    Div(u16, u16),
    Neg(u16),
    Sqrt(u16),
    Call(Func, u16),
    Powf(u16, u16),
}

/// Where a point-dependent input comes from: slot 0 to 3 is x, u, p, v.
#[derive(Clone, Copy, Debug)]
struct Load {
    register: u16,
    slot: u8,
    index: u16,
}

/// What a register holds before any point is seen.
#[derive(Clone, Copy, Debug)]
enum Preset {
    Constant(f64),
    Parameter(usize),
}

/// The point-dependent inputs of one lane evaluation: one `[f64; W]` per component (component
/// major, lane minor). Arrays the kernel does not read may be empty; a component the kernel
/// reads but the array lacks reads as NaN, as with the scalar tape.
#[derive(Clone, Copy, Debug)]
pub struct LaneInputs<'a, const W: usize> {
    /// Position x^a.
    pub x: &'a [[f64; W]],
    /// Velocity u^a.
    pub u: &'a [[f64; W]],
    /// Covariant momentum p_a.
    pub p: &'a [[f64; W]],
    /// Transported vector v^a.
    pub v: &'a [[f64; W]],
}

impl<const W: usize> Default for LaneInputs<'_, W> {
    fn default() -> Self {
        LaneInputs {
            x: &[],
            u: &[],
            p: &[],
            v: &[],
        }
    }
}

/// A register file of a lane program: its constants and parameters already in place.
pub struct LaneRegisters<const W: usize> {
    values: Box<[[f64; W]; MAX_LANE_REGISTERS]>,
}

impl<const W: usize> std::fmt::Debug for LaneRegisters<W> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("LaneRegisters")
            .field("lanes", &W)
            .finish_non_exhaustive()
    }
}

/// A kernel program compiled for evaluation on `W` points at once.
#[derive(Clone, Debug)]
pub struct LaneProgram<const W: usize> {
    kind: KernelKind,
    presets: Vec<(u16, Preset)>,
    loads: Vec<Load>,
    ops: Vec<(u16, Op)>,
    outputs: Vec<u16>,
    shape: Vec<usize>,
}

impl<const W: usize> LaneProgram<W> {
    /// Compiles `program`. Instructions no output depends on are dropped; constants and
    /// parameters become presets of the register file; the rest run in program order.
    pub fn new(program: &KernelProgram) -> Result<LaneProgram<W>, LaneError> {
        let kernel = program.kind.name();
        let n = program.instrs.len();
        if n > MAX_LANE_REGISTERS {
            return Err(LaneError::TooLarge {
                kernel,
                values: n,
                max: MAX_LANE_REGISTERS,
            });
        }
        let reg = |v: u32, at: usize| -> Result<u16, LaneError> {
            if (v as usize) < at {
                // `at <= n <= 2^16`, so a value below it fits in 16 bits.
                u16::try_from(v).map_err(|_| LaneError::Malformed { kernel, index: at })
            } else {
                Err(LaneError::Malformed { kernel, index: at })
            }
        };
        // Which values the outputs need, found walking backwards.
        let mut live = vec![false; n];
        for &o in &program.outputs {
            match live.get_mut(o as usize) {
                Some(l) => *l = true,
                None => return Err(LaneError::Malformed { kernel, index: n }),
            }
        }
        for i in (0..n).rev() {
            if !live[i] {
                continue;
            }
            let operands: [Option<u32>; 2] = match &program.instrs[i] {
                Instr::Add(a, b)
                | Instr::Sub(a, b)
                | Instr::Mul(a, b)
                | Instr::Div(a, b)
                | Instr::Powf(a, b) => [Some(*a), Some(*b)],
                Instr::Neg(a) | Instr::Sqrt(a) | Instr::Call(_, a) => [Some(*a), None],
                Instr::Input(..) | Instr::Const(_) | Instr::Named(_) => [None, None],
            };
            for a in operands.into_iter().flatten() {
                reg(a, i)?;
                live[a as usize] = true;
            }
        }
        let mut presets = Vec::new();
        let mut loads = Vec::new();
        let mut ops = Vec::new();
        for (i, ins) in program.instrs.iter().enumerate() {
            if !live[i] {
                continue;
            }
            let d = reg(i as u32, n)?;
            match ins {
                Instr::Input(InputArray::Params, k) => {
                    presets.push((d, Preset::Parameter(usize::from(*k))))
                }
                Instr::Input(array, k) => {
                    let slot = match array {
                        InputArray::X => 0,
                        InputArray::U => 1,
                        InputArray::P => 2,
                        // Params is handled above.
                        InputArray::V | InputArray::Params => 3,
                    };
                    loads.push(Load {
                        register: d,
                        slot,
                        index: *k,
                    });
                }
                Instr::Const(q) => presets.push((d, Preset::Constant(q_to_f64(q)))),
                Instr::Named(c) => presets.push((d, Preset::Constant(c.value()))),
                Instr::Add(a, b) => ops.push((d, Op::Add(reg(*a, i)?, reg(*b, i)?))),
                Instr::Sub(a, b) => ops.push((d, Op::Sub(reg(*a, i)?, reg(*b, i)?))),
                Instr::Mul(a, b) => ops.push((d, Op::Mul(reg(*a, i)?, reg(*b, i)?))),
                Instr::Div(a, b) => ops.push((d, Op::Div(reg(*a, i)?, reg(*b, i)?))),
                Instr::Powf(a, b) => ops.push((d, Op::Powf(reg(*a, i)?, reg(*b, i)?))),
                Instr::Neg(a) => ops.push((d, Op::Neg(reg(*a, i)?))),
                Instr::Sqrt(a) => ops.push((d, Op::Sqrt(reg(*a, i)?))),
                Instr::Call(f, a) => ops.push((d, Op::Call(*f, reg(*a, i)?))),
            }
        }
        let outputs = program
            .outputs
            .iter()
            .map(|&o| reg(o, n))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(LaneProgram {
            kind: program.kind,
            presets,
            loads,
            ops,
            outputs,
            shape: program.shape.clone(),
        })
    }

    /// Which kernel this is.
    pub fn kind(&self) -> KernelKind {
        self.kind
    }

    /// How many values one evaluation writes per lane.
    pub fn output_len(&self) -> usize {
        self.outputs.len()
    }

    /// The shape of the output, as in [`KernelProgram::shape`].
    pub fn shape(&self) -> &[usize] {
        &self.shape
    }

    /// How many computing instructions run per evaluation (each on all `W` lanes).
    pub fn op_len(&self) -> usize {
        self.ops.len()
    }

    /// A register file with the metric's parameters `params` (declared order; a missing one
    /// reads as NaN). Keep it for every [`eval`](Self::eval) of this program.
    pub fn registers(&self, params: &[f64]) -> LaneRegisters<W> {
        // Zeroed memory is mapped lazily: only the registers the program uses are touched.
        let values = vec![[0.0; W]; MAX_LANE_REGISTERS].into_boxed_slice();
        let mut registers = match values.try_into() {
            Ok(values) => LaneRegisters { values },
            // The length is MAX_LANE_REGISTERS by construction.
            Err(_) => unreachable!("a boxed slice of MAX_LANE_REGISTERS converts to an array"),
        };
        for &(r, preset) in &self.presets {
            let v = match preset {
                Preset::Constant(c) => c,
                Preset::Parameter(k) => params.get(k).copied().unwrap_or(f64::NAN),
            };
            registers.values[usize::from(r)] = [v; W];
        }
        registers
    }

    /// Evaluates the kernel on every lane of `inputs`, writing output `k` of lane `l` to
    /// `out[k][l]`; `out` should hold [`output_len`](Self::output_len) entries (extra ones are
    /// left alone). `registers` must come from this program's [`registers`](Self::registers).
    pub fn eval(
        &self,
        registers: &mut LaneRegisters<W>,
        inputs: &LaneInputs<'_, W>,
        out: &mut [[f64; W]],
    ) {
        let r = &mut *registers.values;
        let slots = [inputs.x, inputs.u, inputs.p, inputs.v];
        for load in &self.loads {
            r[usize::from(load.register)] = slots[usize::from(load.slot)]
                .get(usize::from(load.index))
                .copied()
                .unwrap_or([f64::NAN; W]);
        }
        for &(d, op) in &self.ops {
            let value = match op {
                Op::Add(a, b) => zip(&r[usize::from(a)], &r[usize::from(b)], |x, y| x + y),
                Op::Sub(a, b) => zip(&r[usize::from(a)], &r[usize::from(b)], |x, y| x - y),
                Op::Mul(a, b) => zip(&r[usize::from(a)], &r[usize::from(b)], |x, y| x * y),
                Op::Div(a, b) => zip(&r[usize::from(a)], &r[usize::from(b)], |x, y| x / y),
                Op::Powf(a, b) => zip(&r[usize::from(a)], &r[usize::from(b)], f64::powf),
                Op::Neg(a) => map(&r[usize::from(a)], |x| -x),
                Op::Sqrt(a) => map(&r[usize::from(a)], f64::sqrt),
                Op::Call(f, a) => map(&r[usize::from(a)], |x| f.eval(x)),
            };
            r[usize::from(d)] = value;
        }
        for (o, &v) in out.iter_mut().zip(&self.outputs) {
            *o = r[usize::from(v)];
        }
    }
}

#[inline(always)]
fn zip<const W: usize>(a: &[f64; W], b: &[f64; W], f: impl Fn(f64, f64) -> f64) -> [f64; W] {
    std::array::from_fn(|l| f(a[l], b[l]))
}

#[inline(always)]
fn map<const W: usize>(a: &[f64; W], f: impl Fn(f64) -> f64) -> [f64; W] {
    std::array::from_fn(|l| f(a[l]))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::source;

    /// A small deterministic generator (xorshift64*, common practice): no test depends on
    /// a seed from the clock.
    struct Rng(u64);

    impl Rng {
        fn next(&mut self) -> f64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            let bits = self.0.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11;
            bits as f64 / (1u64 << 53) as f64
        }

        fn range(&mut self, low: f64, high: f64) -> f64 {
            low + (high - low) * self.next()
        }
    }

    fn kerr() -> geokern_symbolic::kernels::KernelSet {
        let text = std::fs::read("../examples/metrics/kerr_bl.gk").expect("example file");
        source::load_bytes("kerr_bl.gk", &text, None)
            .expect("derives")
            .kernels
    }

    /// Every lane agrees bit for bit with the reference evaluator, for kernels reading a
    /// velocity (accel) or a momentum (hamilton), on random points.
    fn agrees_with_reference<const W: usize>(kind: KernelKind) {
        let kernels = kerr();
        let program = kernels.program(kind);
        let lanes = LaneProgram::<W>::new(program).expect("fits");
        assert_eq!(lanes.output_len(), program.outputs.len());
        let params = [1.0, 0.9];
        let mut registers = lanes.registers(&params);
        let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
        let mut compared = 0;
        for _ in 0..40 {
            let mut x = [[0.0; W]; 4];
            let mut w = [[0.0; W]; 4];
            for l in 0..W {
                x[0][l] = rng.range(-10.0, 10.0);
                x[1][l] = rng.range(1.5, 50.0);
                x[2][l] = rng.range(0.05, 3.1);
                x[3][l] = rng.range(-3.0, 3.0);
                for c in &mut w {
                    c[l] = rng.range(-2.0, 2.0);
                }
            }
            let inputs = match kind {
                KernelKind::Hamilton => LaneInputs {
                    x: &x,
                    p: &w,
                    ..LaneInputs::default()
                },
                _ => LaneInputs {
                    x: &x,
                    u: &w,
                    ..LaneInputs::default()
                },
            };
            let mut out = vec![[f64::NAN; W]; lanes.output_len()];
            lanes.eval(&mut registers, &inputs, &mut out);
            for l in 0..W {
                let point: Vec<f64> = x.iter().map(|c| c[l]).collect();
                let other: Vec<f64> = w.iter().map(|c| c[l]).collect();
                let mut want = Vec::new();
                program.eval_f64(
                    &|array| match array {
                        InputArray::Params => params.to_vec(),
                        InputArray::X => point.clone(),
                        InputArray::U if kind != KernelKind::Hamilton => other.clone(),
                        InputArray::P if kind == KernelKind::Hamilton => other.clone(),
                        _ => Vec::new(),
                    },
                    &mut want,
                );
                for (k, want) in want.iter().enumerate() {
                    assert_eq!(
                        out[k][l].to_bits(),
                        want.to_bits(),
                        "{kind:?} output {k} lane {l}: {} vs {want}",
                        out[k][l]
                    );
                    compared += usize::from(*want != 0.0);
                }
            }
        }
        // The comparison saw real values, not only structural zeros.
        assert!(compared >= 40 * W * 3, "{compared}");
    }

    #[test]
    fn kerr_accel_matches_the_reference_bit_for_bit() {
        agrees_with_reference::<4>(KernelKind::Accel);
        agrees_with_reference::<8>(KernelKind::Accel);
    }

    #[test]
    fn kerr_hamilton_matches_the_reference_bit_for_bit() {
        agrees_with_reference::<4>(KernelKind::Hamilton);
        agrees_with_reference::<1>(KernelKind::Hamilton);
    }

    #[test]
    fn missing_inputs_read_as_nan_and_params_are_preset() {
        let kernels = kerr();
        let lanes = LaneProgram::<2>::new(kernels.program(KernelKind::Metric)).expect("fits");
        assert_eq!(lanes.kind(), KernelKind::Metric);
        assert_eq!(lanes.shape(), [4, 4]);
        assert!(lanes.op_len() > 0);
        let mut registers = lanes.registers(&[1.0, 0.0]);
        let x = [[0.0; 2], [4.0, 8.0], [1.0, 1.0], [0.0; 2]];
        let mut g = vec![[0.0; 2]; 16];
        lanes.eval(
            &mut registers,
            &LaneInputs {
                x: &x,
                ..LaneInputs::default()
            },
            &mut g,
        );
        // a = 0: Schwarzschild, g_tt = -(1 - 2m/r) (common practice).
        assert_eq!(g[0], [-0.5, -0.75]);
        g[0] = [0.0; 2];
        lanes.eval(
            &mut registers,
            &LaneInputs {
                x: &x[..2],
                ..LaneInputs::default()
            },
            &mut g,
        );
        // theta is missing: every component depending on it is NaN.
        assert!(g[15][0].is_nan());
    }
}
