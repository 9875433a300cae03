//! The native evaluator: kernel programs compiled to machine code when the tool runs.
//!
//! A [`KernelProgram`] is straight-line code over `f64`; [`NativeKernel::compile`] hands it
//! to the Cranelift code generator (one IR value per program value, the same operations in
//! the same order) and keeps the function it returns. Register allocation is the code
//! generator's, so values stay in machine registers where the [`tape`](crate::tape) moves
//! each one through memory. Nothing is reassociated or fused: every addition,
//! multiplication, division and square root rounds exactly as in the program, and the
//! elementary functions are the routines the tape calls, so the two evaluators agree bit
//! for bit (the tests hold them to it on every example metric).
//!
//! [`NativeLanes`] compiles the same program for many points per call, in the layout of the
//! [lane tape](crate::tape::lanes), two points per vector instruction.
//!
//! Compiling takes about a millisecond per kernel of a few hundred operations (the `tape` bench
//! times a whole metric); the tape needs none. Hosts the code
//! generator does not support are reported as [`NativeError::Host`], and the tool falls back
//! to the tape.
//!
//! ```
//! use geokern_cli::native::NativeKernel;
//! use geokern_cli::tape::Inputs;
//! use geokern_symbolic::{model, parse, program::KernelKind};
//!
//! let file = parse::parse_str(
//!     "struct Polar { coords: [r, phi], g[r, r] = 1; g[phi, phi] = r.powi(2); }",
//! )
//! .unwrap();
//! let kernels = model::compile(&file.metrics[0]).unwrap();
//! let Ok(accel) = NativeKernel::compile(kernels.program(KernelKind::Accel), 0) else {
//!     return; // a host without a code generator
//! };
//! let mut out = [0.0; 2];
//! // At r = 2 moving with dphi/dlambda = 1: r'' = r phi'^2 = 2, phi'' = -2 r' phi' / r = 0.
//! let at = Inputs { x: &[2.0, 0.0], u: &[0.0, 1.0], ..Inputs::default() };
//! accel.eval(&[], &at, &mut out);
//! assert_eq!(out, [2.0, 0.0]);
//! ```

mod calls;
mod lanes;
mod lower;
#[cfg(test)]
mod tests;

use std::sync::{Arc, Mutex};

use cranelift_codegen::settings::{self, Configurable};
use cranelift_jit::{JITBuilder, JITModule};
use cranelift_module::default_libcall_names;
use geokern_symbolic::program::{Instr, KernelKind, KernelProgram};

use crate::tape::{check_program, Inputs, TapeError};

use lower::{Form, ARRAYS};

pub use lanes::NativeLanes;

/// Why a program could not be compiled to machine code.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum NativeError {
    /// The program itself is malformed (the checks the tape makes).
    #[error(transparent)]
    Program(#[from] TapeError),
    /// The code generator does not support this machine.
    #[error("no native code generator for this machine: {0}")]
    Host(String),
    /// The code generator failed (a bug, reported as text).
    #[error("native code generation failed: {0}")]
    Codegen(String),
    /// The program's output does not fit the addressing of one function.
    #[error("the program has too many outputs for one native function")]
    TooLarge,
}

/// The compiled function: input arrays `x, u, p, v, params`, then the output array.
type Entry =
    unsafe extern "C" fn(*const f64, *const f64, *const f64, *const f64, *const f64, *mut f64);

/// The executable memory of one kernel, freed when the last [`NativeKernel`] using it goes.
struct Code(Mutex<Option<JITModule>>);

impl Drop for Code {
    fn drop(&mut self) {
        let module = match self.0.get_mut() {
            Ok(module) => module.take(),
            Err(poisoned) => poisoned.into_inner().take(),
        };
        if let Some(module) = module {
            // SAFETY: the only pointer into this memory is the `Entry` of the kernels
            // holding this `Code`, and the last of them is being dropped.
            unsafe { module.free_memory() };
        }
    }
}

/// A kernel program compiled to machine code for this processor.
///
/// Cheap to clone (the code is shared) and safe to call from many threads at once: a call
/// touches only its arguments and its own stack.
#[derive(Clone)]
pub struct NativeKernel {
    kind: KernelKind,
    entry: Entry,
    /// How many elements of each of [`ARRAYS`] the code reads.
    reads: [usize; ARRAYS.len()],
    output_len: usize,
    shape: Vec<usize>,
    _code: Arc<Code>,
}

impl std::fmt::Debug for NativeKernel {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("NativeKernel")
            .field("kind", &self.kind)
            .field("reads", &self.reads)
            .field("output_len", &self.output_len)
            .finish_non_exhaustive()
    }
}

impl NativeKernel {
    /// Compiles `program`, for a metric with `param_count` parameters.
    pub fn compile(
        program: &KernelProgram,
        param_count: usize,
    ) -> Result<NativeKernel, NativeError> {
        let compiled = Compiled::new(program, param_count, Form::Scalar)?;
        Ok(NativeKernel {
            kind: program.kind,
            entry: compiled.entry,
            reads: compiled.reads,
            output_len: program.outputs.len(),
            shape: program.shape.clone(),
            _code: compiled.code,
        })
    }

    /// Which kernel this is.
    pub fn kind(&self) -> KernelKind {
        self.kind
    }

    /// How many values one evaluation writes.
    pub fn output_len(&self) -> usize {
        self.output_len
    }

    /// The shape of the output, as in [`KernelProgram::shape`].
    pub fn shape(&self) -> &[usize] {
        &self.shape
    }

    /// Evaluates the kernel with parameter values `params` (declared order) at `inputs`,
    /// writing the flattened outputs into `out`, exactly as
    /// [`Tape::eval`](crate::tape::Tape::eval) does: an element the kernel reads but an
    /// array lacks reads as NaN, extra entries of `out` are left alone and missing ones are
    /// not written. Allocates only when an array is shorter than the kernel reads.
    pub fn eval(&self, params: &[f64], inputs: &Inputs<'_>, out: &mut [f64]) {
        let given = [inputs.x, inputs.u, inputs.p, inputs.v, params];
        // Arrays shorter than the code reads are copied into NaN-padded ones.
        let mut padded: [Vec<f64>; ARRAYS.len()] = Default::default();
        let mut pointers = [std::ptr::null::<f64>(); ARRAYS.len()];
        for (slot, array) in given.iter().enumerate() {
            let needed = self.reads[slot];
            pointers[slot] = if array.len() >= needed {
                array.as_ptr()
            } else {
                let mut copy = vec![f64::NAN; needed];
                copy[..array.len()].copy_from_slice(array);
                padded[slot] = copy;
                padded[slot].as_ptr()
            };
        }
        let mut spare = Vec::new();
        let target = if out.len() >= self.output_len {
            out.as_mut_ptr()
        } else {
            spare = vec![0.0; self.output_len];
            spare.as_mut_ptr()
        };
        let [x, u, p, v, k] = pointers;
        // SAFETY: the code reads elements `0..reads[slot]` of array `slot`, and every
        // pointer passed is valid for that many `f64`s (`given` or its padded copy, both
        // alive until the call returns); it writes `0..output_len` of `target`, which is
        // `out` when long enough or `spare`, allocated to that length.
        unsafe { (self.entry)(x, u, p, v, k, target) };
        if !spare.is_empty() {
            let n = out.len();
            out.copy_from_slice(&spare[..n]);
        }
    }
}

/// A program compiled in one [`Form`]: its entry point, how many elements of each of
/// [`ARRAYS`] it reads, and the memory holding it.
struct Compiled {
    entry: Entry,
    reads: [usize; ARRAYS.len()],
    code: Arc<Code>,
}

impl Compiled {
    fn new(
        program: &KernelProgram,
        param_count: usize,
        form: Form,
    ) -> Result<Compiled, NativeError> {
        check_program(program, param_count)?;
        let mut reads = [0; ARRAYS.len()];
        for ins in &program.instrs {
            if let Instr::Input(array, k) = *ins {
                if let Some(slot) = ARRAYS.iter().position(|a| *a == array) {
                    reads[slot] = reads[slot].max(usize::from(k) + 1);
                }
            }
        }
        let mut builder = JITBuilder::with_isa(host_isa()?, default_libcall_names());
        for (name, address) in calls::symbols() {
            builder.symbol(name, address);
        }
        let mut module = JITModule::new(builder);
        let id = lower::define(&mut module, "kernel", program, form)?;
        module
            .finalize_definitions()
            .map_err(|e| NativeError::Codegen(e.to_string()))?;
        let address = module.get_finalized_function(id);
        // SAFETY: `lower::define` built this function with the signature of `Entry` in the
        // host's default calling convention, which is the C convention `Entry` names.
        let entry = unsafe { std::mem::transmute::<*const u8, Entry>(address) };
        Ok(Compiled {
            entry,
            reads,
            code: Arc::new(Code(Mutex::new(Some(module)))),
        })
    }
}

/// The code generator for this processor, tuned for speed.
fn host_isa() -> Result<cranelift_codegen::isa::OwnedTargetIsa, NativeError> {
    let mut flags = settings::builder();
    let set = |flags: &mut settings::Builder, name: &str, value: &str| {
        flags
            .set(name, value)
            .map_err(|e| NativeError::Codegen(format!("setting {name}={value}: {e}")))
    };
    set(&mut flags, "opt_level", "speed")?;
    // The JIT places imported functions anywhere in the address space.
    set(&mut flags, "use_colocated_libcalls", "false")?;
    set(&mut flags, "is_pic", "false")?;
    let isa = cranelift_native::builder().map_err(|e| NativeError::Host(e.to_string()))?;
    isa.finish(settings::Flags::new(flags))
        .map_err(|e| NativeError::Host(e.to_string()))
}
