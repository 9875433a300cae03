//! Arbitrary input never crashes the reader: any bytes, and example files mutated at random,
//! either derive or fail with clean errors (`FILE:LINE:COL: message` lines inside the text,
//! or one line for text that is not UTF-8). Mutants that still derive are odd programs for
//! the evaluators: native code and the tape must agree on them bit for bit.

mod common;

use geokern_cli::native::NativeKernel;
use geokern_cli::tape::{Inputs, Tape};
use geokern_cli::{source, CliError};
use proptest::prelude::*;

const EXAMPLES: [&str; 4] = [
    include_str!("../../examples/metrics/schwarzschild.gk"),
    include_str!("../../examples/metrics/sphere.gk"),
    include_str!("../../examples/metrics/twisted_shear.gk"),
    include_str!("../../examples/metrics/flrw.gk"),
];

/// Bytes that keep mutated text close to the grammar, so mutations reach past the tokenizer.
const PIECES: &[&str] = &[
    "(",
    ")",
    "[",
    "]",
    "{",
    "}",
    ",",
    ";",
    "=",
    "+",
    "-",
    "*",
    "/",
    ".",
    "0",
    "2.5",
    "x",
    "r",
    "t",
    "g",
    "ginv",
    "let",
    "struct",
    "coords",
    "params",
    "powi",
    "sin()",
    "sqrt",
    "u[r]",
    "line_element",
    "dt",
    "invariant",
    " ",
    "\n",
    "///",
    "\"",
    "'",
    "é",
    "\u{0}",
    "1e400",
    "0/0",
];

/// Checks the outcome of reading `bytes` as `name`.
fn assert_clean(name: &str, bytes: &[u8], outcome: Result<source::Loaded, CliError>) {
    let Err(error) = outcome else { return };
    let text = error.render();
    assert!(!text.is_empty());
    match &error {
        CliError::Declaration { rendered } => {
            let line_count = String::from_utf8_lossy(bytes).split('\n').count();
            for line in rendered.lines() {
                let rest = line
                    .strip_prefix(&format!("{name}:"))
                    .unwrap_or_else(|| panic!("{line:?}"));
                let mut parts = rest.splitn(3, ':');
                let l: usize = parts
                    .next()
                    .and_then(|p| p.parse().ok())
                    .unwrap_or_else(|| panic!("{line:?}"));
                let c: usize = parts
                    .next()
                    .and_then(|p| p.parse().ok())
                    .unwrap_or_else(|| panic!("{line:?}"));
                assert!(
                    l >= 1 && l <= line_count,
                    "line {l} of {line_count}: {line:?}"
                );
                assert!(c >= 1, "{line:?}");
                assert!(
                    parts.next().is_some_and(|m| !m.trim().is_empty()),
                    "{line:?}"
                );
            }
        }
        other => assert_eq!(text.lines().count(), 1, "{other:?}"),
    }
}

/// Every kernel of `loaded`, natively and on the tape, at one point: the same bits (any NaN
/// counts as one NaN).
fn assert_evaluators_agree(loaded: &source::Loaded) {
    let ks = &loaded.kernels;
    let n = ks.coords.len();
    let params: Vec<f64> = (0..ks.params.len()).map(|k| 0.7 + 0.3 * k as f64).collect();
    let x: Vec<f64> = (0..n).map(|k| 1.3 + 0.4 * k as f64).collect();
    let u: Vec<f64> = (0..n).map(|k| 0.2 - 0.15 * k as f64).collect();
    let inputs = Inputs {
        x: &x,
        u: &u,
        p: &u,
        v: &x,
    };
    let bits = |v: &[f64]| {
        v.iter()
            .map(|f| if f.is_nan() { u64::MAX } else { f.to_bits() })
            .collect::<Vec<_>>()
    };
    for program in &ks.programs {
        let tape = Tape::compile(program, params.len()).expect("engine programs go on a tape");
        let native = NativeKernel::compile(program, params.len()).expect("and compile natively");
        let mut registers = tape.registers(&params);
        let (mut a, mut b) = (vec![0.0; tape.output_len()], vec![0.0; native.output_len()]);
        tape.eval(&mut registers, &inputs, &mut a);
        native.eval(&params, &inputs, &mut b);
        assert_eq!(bits(&a), bits(&b), "{:?}", program.kind);
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn arbitrary_bytes_never_crash(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        let outcome = source::load_bytes("fuzz.gk", &bytes, None);
        assert_clean("fuzz.gk", &bytes, outcome);
    }

    #[test]
    fn arbitrary_text_never_crashes(text in "\\PC{0,300}") {
        let outcome = source::load_bytes("fuzz.gk", text.as_bytes(), None);
        assert_clean("fuzz.gk", text.as_bytes(), outcome);
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 96, ..ProptestConfig::default() })]

    /// An example with a few random edits: a span deleted, a piece of syntax inserted.
    #[test]
    fn mutated_examples_never_crash(
        which in 0..EXAMPLES.len(),
        edits in proptest::collection::vec((any::<prop::sample::Index>(), 0usize..6, any::<prop::sample::Index>()), 1..4),
    ) {
        let mut text = EXAMPLES[which].to_string();
        for (at, delete, piece) in edits {
            let mut cut = at.index(text.len() + 1);
            while !text.is_char_boundary(cut) {
                cut -= 1;
            }
            let mut end = (cut + delete).min(text.len());
            while !text.is_char_boundary(end) {
                end += 1;
            }
            text.replace_range(cut..end, PIECES[piece.index(PIECES.len())]);
        }
        match source::load_bytes("mutant.gk", text.as_bytes(), None) {
            Ok(loaded) => assert_evaluators_agree(&loaded),
            outcome => assert_clean("mutant.gk", text.as_bytes(), outcome),
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 12, ..ProptestConfig::default() })]

    /// The same through the binary and standard input: exit status 1, diagnostics only.
    #[test]
    fn the_binary_fails_cleanly_on_garbage(bytes in proptest::collection::vec(any::<u8>(), 1..200)) {
        let run = common::geokern_stdin(&["check", "-"], &bytes);
        prop_assume!(run.code != Some(0));
        prop_assert_eq!(run.code, Some(1));
        prop_assert!(run.stdout.is_empty());
        prop_assert!(!run.stderr.contains("panicked"));
        for line in run.stderr.lines() {
            prop_assert!(line.starts_with("<stdin>:") || line.starts_with("error: "), "{}", line);
        }
    }
}
