//! The tape against the engine's reference interpreter, and its refusals.

use super::code::{Special, Step};
use super::*;
use geokern_symbolic::expr::Func;
use geokern_symbolic::program::{InputArray, Instr, KernelKind};
use geokern_symbolic::{model, parse};

fn kernels(src: &str) -> geokern_symbolic::kernels::KernelSet {
    let file = parse::parse_str(src).expect("test metric parses");
    model::compile(&file.metrics[0]).expect("test metric compiles")
}

const KERR: &str = "struct K { coords: [t, r, theta, phi], params: [m, a],
    let sigma = r.powi(2) + (a * theta.cos()).powi(2);
    let delta = r.powi(2) - 2.0 * m * r + a.powi(2);
    g[t, t] = -(1.0 - 2.0 * m * r / sigma);
    g[t, phi] = -2.0 * m * a * r * theta.sin().powi(2) / sigma;
    g[r, r] = sigma / delta;
    g[theta, theta] = sigma;
    g[phi, phi] = (r.powi(2) + a.powi(2)
        + 2.0 * m * r * (a * theta.sin()).powi(2) / sigma) * theta.sin().powi(2);
    invariant odd = -(u[t] * u[r]) - (r - u[phi]).powf(0.5) + u[theta] / p[phi];
}";

/// Every kernel of `src` on the tape equals, bit for bit, the engine's reference
/// interpreter (which runs the program as written, one rounding per instruction): fusing and
/// reordering must not change a single rounding, a signed zero, an infinity or a NaN.
fn assert_bit_exact(src: &str, params: &[f64], points: &[[&[f64]; 4]]) {
    let ks = kernels(src);
    for program in &ks.programs {
        let tape = Tape::compile(program, params.len()).expect("engine programs compile");
        let mut regs = tape.registers(params);
        for [x, u, p, v] in points {
            let mut got = vec![0.0; tape.output_len()];
            tape.eval(&mut regs, &Inputs { x, u, p, v }, &mut got);
            let mut want = Vec::new();
            program.eval_f64(
                &|a| match a {
                    InputArray::Params => params.to_vec(),
                    InputArray::X => x.to_vec(),
                    InputArray::U => u.to_vec(),
                    InputArray::P => p.to_vec(),
                    InputArray::V => v.to_vec(),
                },
                &mut want,
            );
            // Bits, except that every NaN is one NaN: its sign and payload carry no meaning.
            let bits = |v: &[f64]| {
                v.iter()
                    .map(|f| if f.is_nan() { u64::MAX } else { f.to_bits() })
                    .collect::<Vec<_>>()
            };
            assert_eq!(
                bits(&got),
                bits(&want),
                "{:?} at x = {x:?}: {got:?} vs {want:?}",
                program.kind
            );
        }
    }
}

#[test]
fn tape_matches_reference_interpreter() {
    let generic: [&[f64]; 4] = [
        &[0.3, 7.5, 1.1, 0.4],
        &[1.1, 0.05, -0.01, 0.03],
        &[-0.95, 0.04, 0.3, 3.1],
        &[0.2, 0.1, 0.0, -0.3],
    ];
    // On the axis (sin θ = 0, signed zeros), at the horizon (infinities), inside it (NaN from
    // the square root) and at zeros of the velocity.
    let axis: [&[f64]; 4] = [
        &[0.0, 3.0, 0.0, 0.0],
        &[-0.0, 0.0, 1.0, -0.0],
        &[0.0, -0.0, 0.0, 0.0],
        &[0.0; 4],
    ];
    let horizon: [&[f64]; 4] = [
        &[0.0, 1.714_142_842_854_285, 1.5, 0.0],
        &[1.0, 0.0, 0.0, 0.0],
        &[-1.0, 0.0, 0.0, 2.0],
        &[1.0; 4],
    ];
    let inside: [&[f64]; 4] = [
        &[0.0, 1.0, 2.0, 0.0],
        &[1.0, 2.0, 0.0, 3.0],
        &[1.0; 4],
        &[0.5; 4],
    ];
    assert_bit_exact(KERR, &[1.0, 0.7], &[generic, axis, horizon, inside]);
}

#[test]
fn every_function_matches_reference_interpreter() {
    let src = "struct F { coords: [x, y],
        g[x, x] = 1.0 + x.tan().powi(2) + y.exp() - (2.0 + x).ln() + x.sinh() * y.cosh();
        g[x, y] = x.tanh() * (y * 0.5).asin() + (y * 0.25).acos() - x.atan() + PI * E;
        g[y, y] = 2.0 + (x * y).sin() * (x * y).cos() + x.powi(2).powf(y) + (3.0 + y).sqrt();
    }";
    let point: [&[f64]; 4] = [&[0.4, 0.9], &[1.5, -0.25], &[0.5, 2.0], &[1.0, -1.0]];
    assert_bit_exact(src, &[], &[point]);
}

#[test]
fn sine_and_cosine_are_fused() {
    let ks = kernels("struct S { coords: [theta, phi], g[theta, theta] = 1; g[phi, phi] = theta.sin().powi(2); }");
    let program = ks.program(KernelKind::Christoffel);
    let tape = Tape::compile(program, 0).expect("compiles");
    let fused = tape
        .steps
        .iter()
        .filter(|s| matches!(s, Step::Special(Special::SinCos { .. })))
        .count();
    assert_eq!(fused, program.sin_cos_pairs().len());
    assert!(fused >= 1, "Γ^theta_phiphi = -sin cos needs both");
    let unfused = |s: &Step| {
        matches!(
            s,
            Step::Special(Special::Call {
                f: Func::Sin | Func::Cos,
                ..
            })
        )
    };
    assert!(!tape.steps.iter().any(unfused));
}

#[test]
fn corrupt_programs_are_refused() {
    let ks = kernels("struct P { coords: [x], params: [c], g[x, x] = c; }");
    let mut program = ks.program(KernelKind::Metric).clone();
    assert_eq!(
        Tape::compile(&program, 0).unwrap_err(),
        TapeError::BadParameter { index: 0, count: 0 }
    );
    program.outputs.push(99);
    assert!(matches!(
        Tape::compile(&program, 1),
        Err(TapeError::BadOutput { value: 99, .. })
    ));
    program.outputs.pop();
    program.instrs.push(Instr::Add(0, 7));
    assert!(matches!(
        Tape::compile(&program, 1),
        Err(TapeError::ForwardReference { .. })
    ));
}

#[test]
fn missing_inputs_read_as_nan() {
    let ks = kernels("struct P { coords: [x, y], g[x, x] = 1; g[y, y] = x.powi(2); }");
    let tape = Tape::compile(ks.program(KernelKind::Metric), 0).expect("compiles");
    let mut regs = tape.registers(&[]);
    let mut out = [0.0; 4];
    tape.eval(&mut regs, &Inputs::default(), &mut out);
    assert!(out[3].is_nan());
    assert_eq!(out[0], 1.0);
}

/// Additions, subtractions, multiplications and negations with the late operand on either
/// side (so the operand placement takes both branches), a fused `z - x·y` and `-(y·z)`, at
/// every combination of signed zeros, infinities, NaN, the largest and the smallest
/// subnormal value: bit for bit the reference interpreter's.
#[test]
fn placed_operands_keep_every_bit() {
    use Instr::{Add, Input, Mul, Neg, Sub};
    let x = InputArray::X;
    let program = geokern_symbolic::program::KernelProgram {
        kind: KernelKind::Metric,
        dim: 3,
        instrs: vec![
            Input(x, 0),
            Input(x, 1),
            Input(x, 2),
            Add(0, 1),
            // Value 4 is two levels deep, so it arrives after the inputs.
            Mul(3, 2),
            Add(4, 0),
            Add(0, 4),
            Sub(4, 0),
            Sub(0, 4),
            Mul(4, 0),
            Mul(0, 4),
            Neg(4),
            Neg(0),
            Mul(0, 1),
            Sub(2, 13),
            Mul(1, 2),
            Neg(15),
        ],
        outputs: vec![3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 14, 16],
        shape: vec![12],
    };
    let tape = Tape::compile(&program, 0).expect("compiles");
    // The two single-use products are fused into their users.
    assert_eq!(tape.op_len(), 12);
    let values = [
        0.0,
        -0.0,
        1.5,
        -2.25,
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::NAN,
        f64::MAX,
        f64::from_bits(1),
    ];
    let bits = |v: &[f64]| {
        v.iter()
            .map(|f| if f.is_nan() { u64::MAX } else { f.to_bits() })
            .collect::<Vec<_>>()
    };
    let mut regs = tape.registers(&[]);
    for a in values {
        for b in values {
            for c in values {
                let point = [a, b, c];
                let mut got = vec![0.0; tape.output_len()];
                tape.eval(
                    &mut regs,
                    &Inputs {
                        x: &point,
                        ..Inputs::default()
                    },
                    &mut got,
                );
                let mut want = Vec::new();
                program.eval_f64(
                    &|array| match array {
                        InputArray::X => point.to_vec(),
                        _ => Vec::new(),
                    },
                    &mut want,
                );
                assert_eq!(bits(&got), bits(&want), "at {point:?}: {got:?} vs {want:?}");
            }
        }
    }
}

/// Renumbering gives every register one writer: presets, loads and special operations
/// below `base`, uniform instruction `k` at `base + k`, nothing beyond.
#[test]
fn every_register_has_one_writer() {
    let ks = kernels(KERR);
    for program in &ks.programs {
        let tape = Tape::compile(program, 2).expect("engine programs compile");
        let base = usize::from(tape.base);
        let mut writes: Vec<usize> = tape.presets.iter().map(|&(r, _)| usize::from(r)).collect();
        writes.extend(tape.loads.iter().map(|l| usize::from(l.register)));
        for step in &tape.steps {
            if let Step::Special(special) = step {
                writes.extend(special.writes().into_iter().flatten().map(usize::from));
            }
        }
        assert!(writes.iter().all(|&r| r < base), "{:?}", program.kind);
        writes.extend(base..base + tape.uniform.len());
        let count = writes.len();
        writes.sort_unstable();
        writes.dedup();
        assert_eq!(
            writes.len(),
            count,
            "{:?}: a register written twice",
            program.kind
        );
        assert_eq!(
            writes.last().copied(),
            Some(count - 1),
            "{:?}",
            program.kind
        );
        assert!(count <= program.instrs.len() + RESERVED);
    }
}
