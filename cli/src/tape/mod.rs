//! A compact tape evaluator for kernel programs.
//!
//! A [`KernelProgram`](geokern_symbolic::program::KernelProgram) is straight-line SSA code; the macro turns it into Rust, the tool turns
//! it into a [`Tape`]: a flat array of instructions over numbered `f64` registers, evaluated
//! with no allocation (the caller keeps the [`Registers`]).
//!
//! Four choices make it fast:
//!
//! - **One uniform instruction.** Additions, subtractions, multiplications and negations,
//!   nearly all of a kernel's work, are each `d = (a·b)·e + c` over registers, with the
//!   constants 1, -1 and -0 kept in registers: `x·y` is `(x·1)·y + (-0)`, `x + y` is
//!   `(1·1)·x + y`, `x - y` is `(1·(-1))·y + x`. Multiplying by ±1 and adding -0 are exact,
//!   so the result is bit for bit the one compiled code gets, signed zeros and non-finite
//!   values included. A product used once is fused into its user (`(a·b)·e`, `(a·b)·e + c`,
//!   `x - a·b`), rounding exactly as compiled code does, step by step. So the interpreter's
//!   inner loop has no branch to mispredict. The operand computed last goes where the
//!   fewest operations follow it (`c`, then `e`), where swapping is exact.
//! - **One word per instruction.** Registers are numbered so that the uniform instruction
//!   at position `k` of the tape writes register `base + k`: the destination is implicit, and
//!   the four operands, 16 bits each, fill one 64-bit word. The loop runs two instructions
//!   per iteration (each completes before the next reads).
//! - **Level order.** Instructions run ordered by their depth in the expression graph, so
//!   neighbours on the tape are mostly independent and the processor overlaps them, instead
//!   of waiting on each result in turn. Divisions, square roots and functions, rare, are
//!   dispatched one by one between runs of uniform instructions; a sine and a cosine of one
//!   argument run as one `sin_cos`.
//! - **No bounds checks, safely.** Register numbers are 16-bit and a register file holds all
//!   2^16 registers, so indexing cannot fail and the compiler checks nothing. The file's
//!   memory is allocated zeroed (lazily mapped), so only the registers a tape uses are ever
//!   touched.
//!
//! Work that does not depend on the point is done once, when a register file is made
//! ([`Tape::registers`]): constants converted to `f64`, the metric's parameters written in.
//!
//! ```
//! use geokern_cli::tape::{Inputs, Tape};
//! use geokern_symbolic::{model, parse, program::KernelKind};
//!
//! let file = parse::parse_str(
//!     "struct Polar { coords: [r, phi], g[r, r] = 1; g[phi, phi] = r.powi(2); }",
//! )
//! .unwrap();
//! let kernels = model::compile(&file.metrics[0]).unwrap();
//! let tape = Tape::compile(kernels.program(KernelKind::Accel), 0).unwrap();
//! let mut registers = tape.registers(&[]);
//! let mut accel = [0.0; 2];
//! // At r = 2 moving with dphi/dlambda = 1: r'' = r phi'^2 = 2, phi'' = -2 r' phi' / r = 0.
//! let at = Inputs { x: &[2.0, 0.0], u: &[0.0, 1.0], ..Inputs::default() };
//! tape.eval(&mut registers, &at, &mut accel);
//! assert_eq!(accel, [2.0, 0.0]);
//! ```

mod code;
mod compile;
pub mod lanes;
#[cfg(test)]
mod tests;

use geokern_symbolic::program::{InputArray, KernelKind};

use code::{run, Load, Preset, Reg, Step, Uniform};

pub(crate) use compile::check_program;
pub use compile::TapeError;

/// Registers a tape addresses: register numbers are 16-bit.
pub const MAX_REGISTERS: usize = 1 << 16;

/// Registers reserved after a program's values for the constants of the uniform instruction.
const RESERVED: usize = 3;

/// The point-dependent inputs of one evaluation; arrays a kernel does not read may be empty.
/// An element a kernel reads but the array lacks reads as NaN.
#[derive(Clone, Copy, Debug, Default)]
pub struct Inputs<'a> {
    /// Position x^a.
    pub x: &'a [f64],
    /// Velocity u^a.
    pub u: &'a [f64],
    /// Covariant momentum p_a.
    pub p: &'a [f64],
    /// Transported vector v^a.
    pub v: &'a [f64],
}

impl Inputs<'_> {
    fn get(&self, array: InputArray, index: usize) -> f64 {
        let values = match array {
            InputArray::X => self.x,
            InputArray::U => self.u,
            InputArray::P => self.p,
            InputArray::V => self.v,
            // Parameters are preset in the registers and never loaded.
            InputArray::Params => &[],
        };
        values.get(index).copied().unwrap_or(f64::NAN)
    }
}

/// A register file: constants and parameters of one tape already in place.
///
/// Made by [`Tape::registers`] and reused for every evaluation of that tape.
pub struct Registers {
    values: Box<[f64; MAX_REGISTERS]>,
}

impl std::fmt::Debug for Registers {
    /// A summary: the file is mostly untouched zeros.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let used = self
            .values
            .iter()
            .rposition(|v| v.to_bits() != 0)
            .map_or(0, |k| k + 1);
        f.debug_struct("Registers").field("used", &used).finish()
    }
}

impl Registers {
    fn zeroed() -> Registers {
        // `vec![0.0; n]` allocates zeroed memory, which the system maps lazily: untouched
        // registers cost no memory and no time.
        let values = vec![0.0; MAX_REGISTERS].into_boxed_slice();
        match values.try_into() {
            Ok(values) => Registers { values },
            // The length is MAX_REGISTERS by construction.
            Err(_) => unreachable!("a boxed slice of MAX_REGISTERS converts to an array"),
        }
    }
}

/// A kernel program compiled for fast repeated evaluation in `f64`.
#[derive(Clone, Debug)]
pub struct Tape {
    kind: KernelKind,
    presets: Vec<(Reg, Preset)>,
    loads: Vec<Load>,
    steps: Vec<Step>,
    uniform: Vec<Uniform>,
    /// The register the first uniform instruction writes.
    base: Reg,
    outputs: Vec<Reg>,
    shape: Vec<usize>,
}

impl Tape {
    /// Which kernel this tape computes.
    pub fn kind(&self) -> KernelKind {
        self.kind
    }

    /// How many values one evaluation writes (the product of [`shape`](Self::shape)).
    pub fn output_len(&self) -> usize {
        self.outputs.len()
    }

    /// The shape of the output, as in
    /// [`KernelProgram::shape`](geokern_symbolic::program::KernelProgram::shape).
    pub fn shape(&self) -> &[usize] {
        &self.shape
    }

    /// How many instructions run per evaluation (loads not counted; a fused product and sum
    /// count once).
    pub fn op_len(&self) -> usize {
        self.uniform.len()
            + self
                .steps
                .iter()
                .filter(|s| matches!(s, Step::Special(_)))
                .count()
    }

    /// A register file for this tape, with the metric's parameters `params` in declared order
    /// (a parameter missing from `params` reads as NaN). Keep it and pass it to every
    /// [`eval`](Self::eval): it is the only allocation.
    pub fn registers(&self, params: &[f64]) -> Registers {
        let mut registers = Registers::zeroed();
        self.preset(&mut registers, params);
        registers
    }

    fn preset(&self, registers: &mut Registers, params: &[f64]) {
        for &(r, preset) in &self.presets {
            registers.values[usize::from(r)] = match preset {
                Preset::Constant(c) => c,
                Preset::Parameter(k) => params.get(k).copied().unwrap_or(f64::NAN),
            };
        }
    }

    /// Evaluates the kernel at `inputs`, writing the flattened outputs (row-major over
    /// [`shape`](Self::shape)) into `out`; `out` should hold [`output_len`](Self::output_len)
    /// values (extra entries are left alone, missing ones are not written).
    ///
    /// `registers` must come from this tape's [`registers`](Self::registers): another tape's
    /// file lacks this one's constants.
    pub fn eval(&self, registers: &mut Registers, inputs: &Inputs<'_>, out: &mut [f64]) {
        let r = &mut *registers.values;
        for load in &self.loads {
            r[usize::from(load.register)] = inputs.get(load.array, load.index);
        }
        run(&self.steps, &self.uniform, self.base, r);
        for (o, &v) in out.iter_mut().zip(&self.outputs) {
            *o = r[usize::from(v)];
        }
    }
}
