//! Native code on `W` points at once, for work with many independent points (one light ray
//! per pixel): the layout of the [lane tape](crate::tape::lanes), each operation on two lanes
//! per vector instruction, and bit for bit the lane tape's results.

use std::sync::Arc;

use geokern_symbolic::program::{KernelKind, KernelProgram};

use super::lower::{Form, ARRAYS, VECTOR};
use super::{Code, Compiled, Entry, NativeError};
use crate::tape::lanes::LaneInputs;

/// A kernel program compiled to machine code for `W` points per call (`W` even).
///
/// Cheap to clone and safe to call from many threads at once, like
/// [`NativeKernel`](super::NativeKernel).
#[derive(Clone)]
pub struct NativeLanes<const W: usize> {
    kind: KernelKind,
    entry: Entry,
    /// How many rows of each of [`ARRAYS`] the code reads.
    reads: [usize; ARRAYS.len()],
    output_len: usize,
    _code: Arc<Code>,
}

impl<const W: usize> std::fmt::Debug for NativeLanes<W> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("NativeLanes")
            .field("lanes", &W)
            .field("kind", &self.kind)
            .field("output_len", &self.output_len)
            .finish_non_exhaustive()
    }
}

impl<const W: usize> NativeLanes<W> {
    /// Compiles `program` for `W` lanes, for a metric with `param_count` parameters. `W` must
    /// be a positive multiple of two (the lanes of one vector).
    pub fn compile(
        program: &KernelProgram,
        param_count: usize,
    ) -> Result<NativeLanes<W>, NativeError> {
        if W == 0 || !W.is_multiple_of(VECTOR) {
            return Err(NativeError::Codegen(format!(
                "{W} lanes: native lanes come in multiples of {VECTOR}"
            )));
        }
        let compiled = Compiled::new(program, param_count, Form::Lanes(W))?;
        Ok(NativeLanes {
            kind: program.kind,
            entry: compiled.entry,
            reads: compiled.reads,
            output_len: program.outputs.len(),
            _code: compiled.code,
        })
    }

    /// Which kernel this is.
    pub fn kind(&self) -> KernelKind {
        self.kind
    }

    /// How many rows one evaluation writes.
    pub fn output_len(&self) -> usize {
        self.output_len
    }

    /// Evaluates the kernel on every lane of `inputs` with parameter values `params`, writing
    /// output `k` of lane `l` to `out[k][l]`, exactly as
    /// [`LaneProgram::eval`](crate::tape::lanes::LaneProgram::eval) does: a row the kernel
    /// reads but an array lacks reads as NaN, extra rows of `out` are left alone and missing
    /// ones are not written. Allocates only when an array is shorter than the kernel reads.
    pub fn eval(&self, params: &[f64], inputs: &LaneInputs<'_, W>, out: &mut [[f64; W]]) {
        let rows = [inputs.x, inputs.u, inputs.p, inputs.v];
        // Rows shorter than the code reads are copied into NaN-padded ones; parameters are
        // one scalar each, shared by all lanes.
        let mut padded: [Vec<[f64; W]>; 4] = Default::default();
        let mut pointers = [std::ptr::null::<f64>(); ARRAYS.len()];
        for (slot, array) in rows.iter().enumerate() {
            let needed = self.reads[slot];
            pointers[slot] = if array.len() >= needed {
                array.as_ptr().cast()
            } else {
                let mut copy = vec![[f64::NAN; W]; needed];
                copy[..array.len()].copy_from_slice(array);
                padded[slot] = copy;
                padded[slot].as_ptr().cast()
            };
        }
        let params_needed = self.reads[ARRAYS.len() - 1];
        let padded_params;
        pointers[ARRAYS.len() - 1] = if params.len() >= params_needed {
            params.as_ptr()
        } else {
            let mut copy = vec![f64::NAN; params_needed];
            copy[..params.len()].copy_from_slice(params);
            padded_params = copy;
            padded_params.as_ptr()
        };
        let mut spare = Vec::new();
        let target: *mut f64 = if out.len() >= self.output_len {
            out.as_mut_ptr().cast()
        } else {
            spare = vec![[0.0; W]; self.output_len];
            spare.as_mut_ptr().cast()
        };
        let [x, u, p, v, k] = pointers;
        // SAFETY: the code reads rows `0..reads[slot]` (each `W` contiguous `f64`s) of array
        // `slot` and elements `0..reads[params]` of the parameters, and every pointer passed
        // is valid for that much (the caller's slices or their padded copies, alive until the
        // call returns); it writes rows `0..output_len` of `target`, which is `out` when long
        // enough or `spare`, allocated to that length.
        unsafe { (self.entry)(x, u, p, v, k, target) };
        if !spare.is_empty() {
            let n = out.len();
            out.copy_from_slice(&spare[..n]);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::source;
    use crate::tape::lanes::LaneProgram;

    /// Every kernel of two metrics with functions, divisions and square roots, on 16 lanes of
    /// varied points (some on the axis and at zero radius, giving infinities and NaN): the
    /// lane tape's bits in every lane.
    #[test]
    fn lanes_match_the_lane_tape() {
        let texts = [
            include_str!("../../../examples/metrics/kerr_bl.gk"),
            "struct F { coords: [x, y], params: [c],
                g[x, x] = 1.0 + x.tan().powi(2) + y.exp() - (2.0 + x).ln() + c * x.sinh();
                g[x, y] = x.tanh() * (y * 0.5).asin() + (y * 0.25).acos() - x.atan();
                g[y, y] = 2.0 + (x * y).sin() * (x * y).cos() + x.powi(2).powf(y) + (3.0 + y).sqrt(); }",
        ];
        for text in texts {
            let loaded = source::load_bytes("m.gk", text.as_bytes(), None).expect("derives");
            let ks = &loaded.kernels;
            let n = ks.coords.len();
            let params: Vec<f64> = (0..ks.params.len()).map(|k| 1.0 - 0.1 * k as f64).collect();
            let row = |seed: f64| -> Vec<[f64; 16]> {
                (0..n)
                    .map(|c| {
                        std::array::from_fn(|l| match l {
                            0 => 0.0,
                            1 => -0.0,
                            _ => seed + 0.37 * c as f64 + 0.11 * l as f64,
                        })
                    })
                    .collect()
            };
            let (x, u, p, v) = (row(0.3), row(-0.7), row(0.9), row(0.1));
            let inputs = LaneInputs {
                x: &x,
                u: &u,
                p: &p,
                v: &v,
            };
            for program in &ks.programs {
                let tape = LaneProgram::<16>::new(program).expect("lane tape");
                let native = NativeLanes::<16>::compile(program, params.len()).expect("compiles");
                let mut registers = tape.registers(&params);
                let mut want = vec![[0.0; 16]; tape.output_len()];
                tape.eval(&mut registers, &inputs, &mut want);
                let mut got = vec![[0.0; 16]; native.output_len()];
                native.eval(&params, &inputs, &mut got);
                let bits = |rows: &[[f64; 16]]| {
                    rows.iter()
                        .flatten()
                        .map(|f| if f.is_nan() { u64::MAX } else { f.to_bits() })
                        .collect::<Vec<_>>()
                };
                assert_eq!(bits(&got), bits(&want), "{:?}", program.kind);
            }
        }
    }

    #[test]
    fn short_inputs_read_as_nan_and_odd_widths_are_refused() {
        let loaded = source::load_bytes(
            "p.gk",
            b"struct P { coords: [x, y], params: [c], g[x, x] = c; g[y, y] = x.powi(2); }",
            None,
        )
        .expect("derives");
        let program = loaded.kernels.program(KernelKind::Metric);
        let metric = NativeLanes::<4>::compile(program, 1).expect("compiles");
        let mut out = [[7.0; 4]; 5];
        metric.eval(&[], &LaneInputs::default(), &mut out);
        assert!(
            out[0].iter().all(|v| v.is_nan()),
            "a missing parameter reads as NaN"
        );
        assert!(
            out[3].iter().all(|v| v.is_nan()),
            "a missing row reads as NaN"
        );
        assert_eq!(out[4], [7.0; 4], "rows past the output are left alone");
        let x = [[1.0, 2.0, 3.0, 4.0], [0.0; 4]];
        let mut short = [[0.0; 4]; 4];
        metric.eval(
            &[2.0],
            &LaneInputs {
                x: &x,
                ..LaneInputs::default()
            },
            &mut short,
        );
        assert_eq!(short[0], [2.0; 4]);
        assert_eq!(short[3], [1.0, 4.0, 9.0, 16.0]);
        assert!(NativeLanes::<3>::compile(program, 1).is_err());
    }
}
