//! Native code against the engine's reference interpreter and the tape, bit for bit.

use super::*;
use crate::source;
use crate::tape::{Registers, Tape};
use geokern_symbolic::program::InputArray;

/// Every example metric shipped with the tool, by name.
const EXAMPLES: [(&str, &str); 10] = [
    (
        "ellis_wormhole.gk",
        include_str!("../../../examples/metrics/ellis_wormhole.gk"),
    ),
    ("flrw.gk", include_str!("../../../examples/metrics/flrw.gk")),
    (
        "kerr_bl.gk",
        include_str!("../../../examples/metrics/kerr_bl.gk"),
    ),
    (
        "kerr_schild.gk",
        include_str!("../../../examples/metrics/kerr_schild.gk"),
    ),
    (
        "kerr_schild_ginv.gk",
        include_str!("../../../examples/metrics/kerr_schild_ginv.gk"),
    ),
    (
        "schwarzschild.gk",
        include_str!("../../../examples/metrics/schwarzschild.gk"),
    ),
    (
        "sphere.gk",
        include_str!("../../../examples/metrics/sphere.gk"),
    ),
    (
        "tangherlini.gk",
        include_str!("../../../examples/metrics/tangherlini.gk"),
    ),
    (
        "twisted_shear.gk",
        include_str!("../../../examples/metrics/twisted_shear.gk"),
    ),
    (
        "vesper.gk",
        include_str!("../../../examples/metrics/vesper.gk"),
    ),
];

/// Bits, except that every NaN is one NaN: its sign and payload carry no meaning.
fn bits(v: &[f64]) -> Vec<u64> {
    v.iter()
        .map(|f| if f.is_nan() { u64::MAX } else { f.to_bits() })
        .collect()
}

/// A small deterministic generator of points (a linear congruential step), so a failure
/// can be replayed.
struct Points(u64);

impl Points {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        // 53 random bits scaled to [-4, 4).
        ((self.0 >> 11) as f64 / (1u64 << 53) as f64) * 8.0 - 4.0
    }

    fn vector(&mut self, n: usize) -> Vec<f64> {
        (0..n).map(|_| self.next()).collect()
    }
}

/// Every kernel of `kernels`, compiled natively, against the reference interpreter (one
/// rounding per instruction, as written) and the tape, at `points`.
fn assert_native_exact(
    name: &str,
    kernels: &geokern_symbolic::kernels::KernelSet,
    params: &[f64],
    points: &[[Vec<f64>; 4]],
) {
    for program in &kernels.programs {
        let native = NativeKernel::compile(program, params.len()).expect("engine programs compile");
        let tape = Tape::compile(program, params.len()).expect("engine programs compile");
        let mut registers: Registers = tape.registers(params);
        for [x, u, p, v] in points {
            let inputs = Inputs { x, u, p, v };
            let mut got = vec![0.0; native.output_len()];
            native.eval(params, &inputs, &mut got);
            let mut on_tape = vec![0.0; tape.output_len()];
            tape.eval(&mut registers, &inputs, &mut on_tape);
            let mut want = Vec::new();
            program.eval_f64(
                &|a| match a {
                    InputArray::Params => params.to_vec(),
                    InputArray::X => x.clone(),
                    InputArray::U => u.clone(),
                    InputArray::P => p.clone(),
                    InputArray::V => v.clone(),
                },
                &mut want,
            );
            assert_eq!(
                bits(&got),
                bits(&want),
                "{name} {:?} at x = {x:?}: {got:?} vs {want:?}",
                program.kind
            );
            assert_eq!(bits(&got), bits(&on_tape), "{name} {:?}", program.kind);
        }
    }
}

#[test]
fn every_example_kernel_matches_interpreter_and_tape() {
    let mut random = Points(0x9e37_79b9_7f4a_7c15);
    for (name, text) in EXAMPLES {
        let loaded = source::load_bytes(name, text.as_bytes(), None).expect("examples derive");
        let kernels = &loaded.kernels;
        let n = kernels.coords.len();
        let params: Vec<f64> = (0..kernels.params.len())
            .map(|k| 0.9 - 0.2 * k as f64)
            .collect();
        let mut points: Vec<[Vec<f64>; 4]> = (0..6)
            .map(|_| std::array::from_fn(|_| random.vector(n)))
            .collect();
        // Zeros of either sign (on axes, sin θ = 0), where kernels divide by zero and
        // produce infinities and NaN.
        points.push([vec![0.0; n], vec![-0.0; n], vec![0.0; n], vec![-0.0; n]]);
        points.push([
            vec![f64::INFINITY; n],
            vec![f64::NAN; n],
            vec![f64::MAX; n],
            vec![f64::MIN_POSITIVE / 4.0; n],
        ]);
        assert_native_exact(name, kernels, &params, &points);
    }
}

#[test]
fn every_function_and_power_matches() {
    let src = "struct F { coords: [x, y],
        g[x, x] = 1.0 + x.tan().powi(2) + y.exp() - (2.0 + x).ln() + x.sinh() * y.cosh();
        g[x, y] = x.tanh() * (y * 0.5).asin() + (y * 0.25).acos() - x.atan() + PI * E;
        g[y, y] = 2.0 + (x * y).sin() * (x * y).cos() + x.powi(2).powf(y) + (3.0 + y).sqrt();
    }";
    let loaded = source::load_bytes("f.gk", src.as_bytes(), None).expect("derives");
    let points = [
        [
            vec![0.4, 0.9],
            vec![1.5, -0.25],
            vec![0.5, 2.0],
            vec![1.0, -1.0],
        ],
        [
            vec![-1.3, 1.7],
            vec![0.2, 0.1],
            vec![0.0, 0.0],
            vec![0.0, 0.0],
        ],
    ];
    assert_native_exact("f.gk", &loaded.kernels, &[], &points);
}

#[test]
fn short_arrays_read_as_nan_and_short_outputs_are_cut() {
    let loaded = source::load_bytes(
        "p.gk",
        b"struct P { coords: [x, y], params: [c], g[x, x] = c; g[y, y] = x.powi(2); }",
        None,
    )
    .expect("derives");
    let metric =
        NativeKernel::compile(loaded.kernels.program(KernelKind::Metric), 1).expect("compiles");
    let mut out = [7.0; 5];
    metric.eval(&[], &Inputs::default(), &mut out);
    assert!(out[0].is_nan(), "a missing parameter reads as NaN");
    assert!(out[3].is_nan(), "a missing coordinate reads as NaN");
    assert_eq!(out[1], 0.0);
    assert_eq!(out[4], 7.0, "entries past the output are left alone");
    let mut short = [7.0; 3];
    metric.eval(
        &[2.0],
        &Inputs {
            x: &[3.0, 0.0],
            ..Inputs::default()
        },
        &mut short,
    );
    assert_eq!(short, [2.0, 0.0, 0.0]);
}

#[test]
fn corrupt_programs_are_refused_as_on_the_tape() {
    let loaded = source::load_bytes(
        "p.gk",
        b"struct P { coords: [x], params: [c], g[x, x] = c; }",
        None,
    )
    .expect("derives");
    let mut program = loaded.kernels.program(KernelKind::Metric).clone();
    assert_eq!(
        NativeKernel::compile(&program, 0).unwrap_err(),
        NativeError::Program(TapeError::BadParameter { index: 0, count: 0 })
    );
    program.instrs.push(Instr::Add(0, 7));
    assert!(matches!(
        NativeKernel::compile(&program, 1),
        Err(NativeError::Program(TapeError::ForwardReference { .. }))
    ));
}

/// Kernels are shared across threads (the renderer and batch tracing do), and the code
/// outlives every clone but the last.
#[test]
fn clones_share_code_across_threads() {
    let loaded = source::load_bytes("kerr_bl.gk", EXAMPLES[2].1.as_bytes(), None).expect("derives");
    let accel =
        NativeKernel::compile(loaded.kernels.program(KernelKind::Accel), 2).expect("compiles");
    let at_one_point = |kernel: &NativeKernel| {
        let mut out = [0.0; 4];
        let inputs = Inputs {
            x: &[0.0, 7.5, 1.2, 0.3],
            u: &[1.2, 0.05, 0.01, 0.03],
            ..Inputs::default()
        };
        kernel.eval(&[1.0, 0.9], &inputs, &mut out);
        out
    };
    let want = at_one_point(&accel);
    let handles: Vec<_> = (0..2)
        .map(|_| {
            let mine = accel.clone();
            std::thread::spawn(move || at_one_point(&mine))
        })
        .collect();
    drop(accel);
    for h in handles {
        let got = h.join().expect("thread ran");
        assert_eq!(bits(&got), bits(&want));
    }
}
