//! End to end: every command, its report, its `--json` shape, and its option errors.

mod common;

use common::{example, floats, geokern, geokern_in, geokern_stdin, scratch_dir};
use serde_json::Value;

const KERNELS: [&str; 9] = [
    "metric",
    "inverse_metric",
    "christoffel",
    "accel",
    "hamilton",
    "transport",
    "norm",
    "conserved",
    "invariants",
];

fn keys(v: &Value) -> Vec<String> {
    v.as_object().expect("an object").keys().cloned().collect()
}

#[test]
fn check_reports_what_was_derived() {
    let run = geokern(&["check", &example("schwarzschild")]);
    assert_eq!(run.code, Some(0), "{}", run.stderr);
    let out = &run.stdout;
    for needle in [
        "Schwarzschild: Schwarzschild black hole",
        "dimension     4 (t, r, theta, phi)",
        "parameters    m",
        "Christoffel   9 nonzero symbols",
        "Γ^r_tt",
        "Γ^θ_φφ",
        "cyclic        t, phi (conserved p_t, p_phi)",
        "christoffel",
        "derived in ",
    ] {
        assert!(out.contains(needle), "missing {needle:?} in:\n{out}");
    }
}

#[test]
fn check_json_lists_the_nonzero_symbols() {
    let v = geokern(&["check", &example("schwarzschild"), "--json"]).json();
    assert_eq!(v["dim"], 4);
    assert_eq!(v["cyclic"], serde_json::json!(["t", "phi"]));
    assert_eq!(v["conserved"], serde_json::json!(["p_t", "p_phi"]));
    let symbols: Vec<&str> = v["christoffel_nonzero"]
        .as_array()
        .expect("list")
        .iter()
        .map(|s| s["symbol"].as_str().expect("symbol"))
        .collect();
    // The nine independent nonzero symbols of Schwarzschild in these coordinates (any
    // general-relativity textbook; common practice).
    assert_eq!(
        symbols,
        [
            "Γ^t_tr",
            "Γ^r_tt",
            "Γ^r_rr",
            "Γ^r_θθ",
            "Γ^r_φφ",
            "Γ^θ_rθ",
            "Γ^θ_φφ",
            "Γ^φ_rφ",
            "Γ^φ_θφ"
        ]
    );
    assert_eq!(
        v["christoffel_nonzero"][1]["index"],
        serde_json::json!([1, 0, 0])
    );
    assert!(v["derivation_ms"].as_f64().expect("a time") >= 0.0);
    for k in KERNELS {
        assert!(v["ops"][k]["total"].is_u64(), "ops of {k}");
    }
}

#[test]
fn stats_json_has_every_kernel_and_consistent_totals() {
    let v = geokern(&["stats", &example("kerr_bl"), "--json"]).json();
    assert_eq!(keys(&v).len(), KERNELS.len());
    for k in KERNELS {
        let c = &v[k];
        assert_eq!(keys(c), ["add", "call", "div", "mul", "total"], "{k}");
        let sum: u64 = ["add", "mul", "div", "call"]
            .iter()
            .map(|f| c[f].as_u64().expect("count"))
            .sum();
        assert_eq!(c["total"].as_u64(), Some(sum), "{k}");
    }
    assert!(v["christoffel"]["total"].as_u64() > Some(0));
    assert_eq!(v["invariants"]["total"], 0, "Kerr declares no invariant");
    let check = geokern(&["check", &example("kerr_bl"), "--json"]).json();
    assert_eq!(check["ops"], v, "check and stats agree");
    let text = geokern(&["stats", &example("kerr_bl")]);
    assert!(
        text.stdout.contains("kernel") && text.stdout.contains("hamilton"),
        "{}",
        text.stdout
    );
}

#[test]
fn eval_json_shape_without_and_with_velocity() {
    let base = [
        "eval",
        "examples/metrics/schwarzschild.gk",
        "--param",
        "m=1",
        "--x",
        "0,10,pi/2,0",
        "--json",
    ];
    let v = geokern(&base).json();
    assert_eq!(v["metric"].as_array().map(Vec::len), Some(4));
    assert_eq!(v["metric"][0].as_array().map(Vec::len), Some(4));
    assert_eq!(v["christoffel"][0][0].as_array().map(Vec::len), Some(4));
    assert!(
        v.get("accel").is_none() && v.get("norm").is_none(),
        "no --u, no accel or norm"
    );
    // g_tt = -(1 - 2m/r) = -0.8 and Γ^r_tt = m (r - 2m) / r^3 = 0.008 at r = 10, m = 1.
    assert_eq!(v["metric"][0][0].as_f64(), Some(-0.8));
    assert!((v["christoffel"][1][0][0].as_f64().expect("number") - 0.008).abs() < 1e-17);

    let mut with_u = base.to_vec();
    with_u.extend(["--u", "1.2,0,0,0.04"]);
    let v = geokern(&with_u).json();
    assert_eq!(floats(&v["accel"]).len(), 4);
    // g(u,u) = -0.8 * 1.44 + 100 * 0.0016 = -0.992
    assert!((v["norm"].as_f64().expect("norm") + 0.992).abs() < 1e-15);
    assert!((v["conserved"]["p_t"].as_f64().expect("p_t") + 0.96).abs() < 1e-15);
}

#[test]
fn eval_text_report() {
    let run = geokern(&[
        "eval",
        &example("sphere"),
        "--param",
        "rho=2",
        "--x",
        "pi/2,0",
        "--u",
        "0,1",
    ]);
    assert_eq!(run.code, Some(0), "{}", run.stderr);
    assert!(run.stdout.contains("metric g_ab"), "{}", run.stdout);
    assert!(run.stdout.contains("norm g(u,u)   4"), "{}", run.stdout);
}

/// The circular equatorial orbit of Schwarzschild at r0 = 8m: u^t = 1/sqrt(1 - 3m/r0) and
/// u^phi = sqrt(m / r0^3) u^t (common practice). Every method must keep r = r0.
#[test]
fn trace_keeps_a_circular_orbit_with_every_method() {
    let (m, r0) = (1.0_f64, 8.0_f64);
    let ut = 1.0 / (1.0 - 3.0 * m / r0).sqrt();
    let uphi = (m / r0.powi(3)).sqrt() * ut;
    let u = format!("{ut:?},0,0,{uphi:?}");
    let x = format!("0,{r0:?},pi/2,0");
    for (method, step) in [
        ("dp54", None),
        ("dp853", None),
        ("rk4", Some("0.5")),
        ("gl4", Some("0.5")),
        ("gl6", Some("1")),
    ] {
        let mut args = vec![
            "trace",
            "examples/metrics/schwarzschild.gk",
            "--param",
            "m=1",
        ];
        args.extend([
            "--x", &x, "--u", &u, "--lambda", "200", "--method", method, "--json",
        ]);
        if let Some(h) = step {
            args.extend(["--step", h]);
        }
        let v = geokern(&args).json();
        for key in ["x", "u", "lambda", "steps", "rejected", "stop", "drift"] {
            assert!(v.get(key).is_some(), "{method}: key {key}");
        }
        assert_eq!(v["stop"], "end", "{method}");
        assert_eq!(v["lambda"].as_f64(), Some(200.0), "{method}");
        assert_eq!(v["method"], method);
        let x = floats(&v["x"]);
        assert!((x[1] - r0).abs() < 1e-6, "{method}: r = {}", x[1]);
        // phi advances at u^phi per unit lambda.
        assert!(
            (x[3] - uphi * 200.0).abs() < 1e-6,
            "{method}: phi = {}",
            x[3]
        );
        assert_eq!(keys(&v["drift"]), ["norm", "p_phi", "p_t"], "{method}");
        assert!(
            v["drift"]["norm"].as_f64().expect("drift") < 1e-8,
            "{method}: {}",
            v["drift"]
        );
        assert!(v["steps"].as_u64().expect("steps") > 0);
    }
}

/// The native evaluator and the tape round alike, so a whole integration (hundreds of
/// adaptive steps, each step size depending on the last error estimate) ends on the same
/// bits whichever runs the kernels.
#[test]
fn trace_is_the_same_with_either_evaluator() {
    let run = |evaluator: &str| {
        let v = geokern(&[
            "trace",
            "examples/metrics/kerr_bl.gk",
            "--param",
            "m=1",
            "--param",
            "a=0.9",
            "--x",
            "0,9,1.3,0",
            "--u",
            "1.1,0.02,0.01,0.035",
            "--lambda",
            "500",
            "--evaluator",
            evaluator,
            "--json",
        ])
        .json();
        assert_eq!(v["stop"], "end", "{evaluator}");
        v
    };
    let (tape, native, auto) = (run("tape"), run("native"), run("auto"));
    assert_eq!(tape["evaluator"], "tape");
    assert_eq!(native["evaluator"], "native");
    assert_eq!(
        auto["evaluator"], "native",
        "this machine has a code generator"
    );
    for key in ["x", "u", "lambda", "steps", "rejected", "drift"] {
        assert_eq!(tape[key], native[key], "{key}");
    }
    assert!(tape["steps"].as_u64().expect("steps") > 50);
    let bad = geokern(&["demo", "--evaluator", "jit"]);
    assert_eq!(bad.code, Some(2));
    assert!(
        bad.stderr.contains("choose one of auto, native, tape"),
        "{}",
        bad.stderr
    );
}

#[test]
fn trace_stops_where_asked() {
    let v = geokern(&[
        "trace",
        "examples/metrics/schwarzschild.gk",
        "--param",
        "m=1",
        "--x",
        "0,10,pi/2,0",
        "--u",
        "1.118033988749895,0,0,0",
        "--lambda",
        "1000",
        "--stop-below",
        "r=2.5",
        "--json",
    ])
    .json();
    assert_eq!(v["stop"], "event");
    assert_eq!(v["event"], "r < 2.5");
    let r = floats(&v["x"])[1];
    assert!((r - 2.5).abs() < 1e-6, "stopped at r = {r}");
    assert!(v["lambda"].as_f64().expect("lambda") < 1000.0);
    let text = geokern(&[
        "trace",
        "examples/metrics/schwarzschild.gk",
        "--param",
        "m=1",
        "--x",
        "0,10,pi/2,0",
        "--u",
        "1.118033988749895,0,0,0",
        "--lambda",
        "1000",
        "--stop-below",
        "r=2.5",
    ]);
    assert!(
        text.stdout.contains("stopped at r < 2.5"),
        "{}",
        text.stdout
    );
    assert!(text.stdout.contains("drift"), "{}", text.stdout);
}

#[test]
fn trace_option_errors_are_one_line() {
    let base = [
        "trace",
        "examples/metrics/schwarzschild.gk",
        "--x",
        "0,10,pi/2,0",
        "--u",
        "1,0,0,0",
    ];
    let cases: &[(&[&str], &str)] = &[
        (
            &["--param", "m=1", "--lambda", "1", "--method", "euler"],
            "unknown method `euler`",
        ),
        (
            &["--param", "m=1", "--lambda", "abc"],
            "`abc` is not a finite number",
        ),
        (&["--param", "m=1"], "--lambda"),
        (
            &["--lambda", "1"],
            "missing parameter m: give --param m=VALUE",
        ),
        (
            &["--param", "m=1", "--param", "m=2", "--lambda", "1"],
            "parameter `m` is given twice",
        ),
        (
            &["--param", "q=1", "--param", "m=1", "--lambda", "1"],
            "unknown parameter `q`; Schwarzschild has parameters m",
        ),
        (
            &["--param", "m", "--lambda", "1"],
            "not of the form NAME=VALUE",
        ),
        (
            &["--param", "m=1", "--lambda", "1", "--stop-below", "rho=2"],
            "unknown coordinate `rho`",
        ),
        (
            &["--param", "m=1", "--lambda", "1", "--max-steps", "0"],
            "--max-steps must be positive",
        ),
        (
            &["--param", "m=1", "--lambda", "1", "--bogus"],
            "unexpected argument '--bogus'",
        ),
    ];
    for (extra, needle) in cases {
        let mut args = base.to_vec();
        args.extend_from_slice(extra);
        let line = geokern(&args).one_error_line();
        assert!(line.contains(needle), "{args:?}: {line}");
    }
    let line = geokern(&[
        "eval",
        &example("schwarzschild"),
        "--param",
        "m=1",
        "--x",
        "0,10,1",
    ])
    .one_error_line();
    assert!(
        line.contains("--x has 3 entries; the metric has 4 coordinates (t, r, theta, phi)"),
        "{line}"
    );
}

#[test]
fn trace_reports_integration_failures_in_one_line() {
    // A budget of three steps cannot reach lambda = 1000.
    let line = geokern(&[
        "trace",
        "examples/metrics/schwarzschild.gk",
        "--param",
        "m=1",
        "--x",
        "0,10,pi/2,0",
        "--u",
        "1.2,0,0,0.04",
        "--lambda",
        "1000",
        "--max-steps",
        "3",
    ])
    .one_error_line();
    assert!(
        line.starts_with("error: integration failed: step budget of 3 exhausted"),
        "{line}"
    );
}

#[test]
fn emit_rust_is_valid_rust() {
    let run = geokern(&["emit", &example("kerr_bl"), "--lang", "rust"]);
    assert_eq!(run.code, Some(0), "{}", run.stderr);
    let file = syn::parse_file(&run.stdout).expect("emitted Rust parses");
    assert!(!file.items.is_empty());
    for needle in [
        "pub struct Kerr",
        "fn christoffel",
        "fn geodesic_accel",
        "MetricKernels",
    ] {
        assert!(run.stdout.contains(needle), "missing {needle}");
    }
    assert!(run
        .stdout
        .starts_with("// Kerr: kernels generated by geokern"));
    let v = geokern(&["emit", &example("sphere"), "--lang", "RUST", "--json"]).json();
    assert_eq!(v["lang"], "rust");
    assert!(v["source"]
        .as_str()
        .expect("source")
        .contains("pub struct Sphere"));
}

#[test]
fn emit_unknown_language_lists_the_available_ones() {
    let line = geokern(&["emit", &example("sphere"), "--lang", "cobol"]).one_error_line();
    assert_eq!(
        line,
        "error: unknown language `cobol`; available: rust, c, cuda, opencl, wgsl, glsl, python"
    );
    // Names are case-insensitive, as for `rust`.
    let run = geokern(&["emit", &example("sphere"), "--lang", "OpenCL"]);
    assert_eq!(run.code, Some(0), "{}", run.stderr);
    assert!(run.stdout.contains("__kernel void sphere_accel_batch("));
}

#[test]
fn demo_report_and_json() {
    let run = geokern(&["demo"]);
    assert_eq!(run.code, Some(0), "{}", run.stderr);
    for needle in [
        "Vesper",
        "Halcyon orbit",
        "dp853",
        "gl6",
        "reached the end",
        "the horizon",
        "escape",
        "carter",
    ] {
        assert!(
            run.stdout.contains(needle),
            "missing {needle:?} in:\n{}",
            run.stdout
        );
    }
    assert!(
        run.stderr.is_empty(),
        "no progress bar off a terminal: {}",
        run.stderr
    );
    let v = geokern(&["demo", "--json"]).json();
    let geodesics = v["geodesics"].as_array().expect("geodesics");
    assert_eq!(geodesics.len(), 7);
    let orbit = &geodesics[0];
    assert_eq!(orbit["kind"], "timelike");
    assert_eq!(orbit["stop"], "end");
    for quantity in ["norm", "p_t", "p_phi", "carter"] {
        let d = orbit["drift"][quantity].as_f64().expect("drift");
        assert!(d < 1e-6, "orbit drift of {quantity}: {d}");
    }
    // The pulse aimed nearly at the centre falls in; the one fired nearly sideways escapes.
    assert_eq!(geodesics[2]["event"], "the horizon");
    assert_eq!(geodesics[6]["event"], "escape (r > 100)");
    let shown = geokern(&["demo", "--show-metric"]);
    assert!(shown.stdout.contains("pub struct Vesper"));
}

#[test]
fn metric_selection_and_standard_input() {
    let dir = scratch_dir("select");
    let two = "/// One.\nstruct Flat { coords: [x], g[x, x] = 1; }\n\
               /// Two.\nstruct Line { coords: [s], params: [k], g[s, s] = k.powi(2); }\n";
    std::fs::write(dir.join("two.gk"), two).expect("write");
    let line = geokern_in(&dir, &["check", "two.gk"]).one_error_line();
    assert_eq!(
        line,
        "error: `two.gk` declares several metrics (Flat, Line); choose one with --metric NAME"
    );
    let v = geokern_in(&dir, &["check", "two.gk", "--metric", "Line", "--json"]).json();
    assert_eq!(v["name"], "Line");
    assert_eq!(v["metrics_in_file"], serde_json::json!(["Flat", "Line"]));
    let line = geokern_in(&dir, &["check", "two.gk", "--metric", "Nope"]).one_error_line();
    assert!(
        line.contains("declares no metric `Nope`; it declares Flat, Line"),
        "{line}"
    );
    let v = geokern_stdin(
        &["stats", "-", "--metric", "Flat", "--json"],
        two.as_bytes(),
    )
    .json();
    assert_eq!(v["metric"]["total"], 0);
}

#[test]
fn unreadable_files_are_one_clear_line() {
    let line = geokern(&["check", "no/such/file.gk"]).one_error_line();
    assert!(
        line.starts_with("error: cannot read `no/such/file.gk`:"),
        "{line}"
    );
    let line = geokern(&["check", "examples"]).one_error_line();
    assert!(line.contains("it is a directory"), "{line}");
    let dir = scratch_dir("binary");
    std::fs::write(dir.join("b.gk"), [0x73, 0xff, 0xfe, 0x00]).expect("write");
    let line = geokern_in(&dir, &["check", "b.gk"]).one_error_line();
    assert_eq!(
        line,
        "error: `b.gk` is not UTF-8 text (invalid byte at offset 1)"
    );
}

#[test]
fn help_version_and_missing_command() {
    let help = geokern(&["--help"]);
    assert_eq!(help.code, Some(0));
    for command in ["check", "eval", "trace", "emit", "stats", "demo"] {
        assert!(help.stdout.contains(command), "{command} in help");
    }
    let version = geokern(&["--version"]);
    assert_eq!(version.code, Some(0));
    assert!(version.stdout.starts_with("geokern "));
    let line = geokern(&[]).one_error_line();
    assert!(line.starts_with("error: "), "{line}");
    let line = geokern(&["frobnicate"]).one_error_line();
    assert!(
        line.contains("unrecognized subcommand 'frobnicate'"),
        "{line}"
    );
}
