//! What every emitted unit says and how it is laid out: the header comment (metric,
//! parameters in order, every signature, the op counts of every kernel), byte-for-byte
//! determinism, straight-line kernel functions, and the `emit --lang` table of the CLI.

use std::process::Command;

use geokern_symbolic::backend::{c, cuda, glsl, opencl, python, wgsl};
use geokern_symbolic::kernels::KernelSet;

use crate::common::{cases, root};

type Emit = fn(&KernelSet) -> String;

/// Every backend: `--lang` name, printer, comment marker.
const BACKENDS: [(&str, Emit, &str); 6] = [
    ("c", c::emit, "//"),
    ("cuda", cuda::emit, "//"),
    ("opencl", opencl::emit, "//"),
    ("wgsl", wgsl::emit, "//"),
    ("glsl", glsl::emit, "//"),
    ("python", python::emit, "#"),
];

/// The leading comment block of a unit, markers stripped.
fn header(text: &str, marker: &str) -> Vec<String> {
    text.lines()
        .take_while(|l| l.starts_with(marker))
        .map(|l| l.trim_start_matches(marker).trim().to_string())
        .collect()
}

#[test]
fn every_unit_opens_with_metric_parameters_signatures_and_op_counts() {
    for case in cases() {
        let ks = &case.kernels;
        for (lang, emit, marker) in BACKENDS {
            let text = emit(ks);
            let what = format!("{} {lang}", case.key);
            assert_eq!(text, emit(ks), "{what}: output is deterministic");
            let head = header(&text, marker);
            assert!(
                head[0].starts_with(&format!("{}: geodesic kernels in", ks.name)),
                "{what}: {}",
                head[0]
            );
            let params = if ks.params.is_empty() {
                "none".to_string()
            } else {
                ks.params.join(", ")
            };
            let line = format!("Parameters, read from `params` in this order: {params}.");
            assert!(head.contains(&line), "{what}: no line {line:?}");
            // Every kernel's op counts, as the engine states them.
            for kind in geokern_symbolic::backend::cfamily::kernel_kinds(ks) {
                let line = format!("{:<18} {}", kind.name(), ks.program(kind).op_counts());
                assert!(head.contains(&line), "{what}: no op-count line {line:?}");
            }
            // Every function the unit defines is listed in the header, with its arguments.
            let mut defined = 0;
            for line in text.lines() {
                if line.starts_with([' ', '#', '/'])
                    || !line.contains(&format!("{}_", case.prefix()))
                    || !line.contains('(')
                {
                    continue;
                }
                let signature = line
                    .trim_start_matches("def ")
                    .trim_end_matches(':')
                    .trim_end_matches(" {");
                assert!(
                    head.iter().any(|h| h.contains(signature)),
                    "{what}: {signature:?} is not in the header"
                );
                defined += 1;
            }
            let kernels = geokern_symbolic::backend::cfamily::kernel_kinds(ks).len();
            assert!(
                defined + 2 >= kernels,
                "{what}: only {defined} functions found"
            );
        }
    }
}

#[test]
fn kernel_functions_are_straight_line_code() {
    for case in cases() {
        for (lang, emit, marker) in BACKENDS {
            let text = emit(&case.kernels);
            // Split into functions at unindented lines; batch entry points are exempt.
            let mut name = String::new();
            for line in text.lines().filter(|l| !l.starts_with(marker)) {
                if !line.starts_with(' ') && !line.starts_with('{') && !line.starts_with('}') {
                    name = line.to_string();
                    continue;
                }
                if name.contains("_batch(") {
                    continue;
                }
                let code = line.trim();
                for word in [
                    "if ", "if(", "for ", "for(", "while", "malloc", "? ", "goto",
                ] {
                    assert!(
                        !code.starts_with(word) && !code.contains(&format!(" {word}")),
                        "{} {lang}: `{word}` in {name}: {code}",
                        case.key
                    );
                }
            }
        }
    }
}

#[test]
fn the_cli_emits_every_language_through_the_library_functions() {
    let case = cases()
        .iter()
        .find(|c| c.key == "kerr_bl")
        .expect("kerr_bl case");
    for (lang, emit, _) in BACKENDS {
        let out = Command::new(env!("CARGO_BIN_EXE_geokern"))
            .args(["emit", "examples/metrics/kerr_bl.gk", "--lang", lang])
            .current_dir(root())
            .output()
            .expect("geokern runs");
        assert!(
            out.status.success(),
            "{lang}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        assert_eq!(
            String::from_utf8_lossy(&out.stdout),
            emit(&case.kernels),
            "{lang}"
        );
    }
}
