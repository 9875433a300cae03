//! `geokern eval --json` on every example metric against independent values:
//!
//! - the SymPy reference (`tests/data/sympy_reference.json` at the workspace root, derived a
//!   second time with SymPy and evaluated with mpmath at 50 digits) to 1e-12, relative to the
//!   largest entry of each array;
//! - the kernels `geokern::include_metric!` compiles from the same files to 1e-13 (the tape
//!   runs the same programs, so it should agree far better than that).

mod common;
#[macro_use]
#[path = "../../tests/support/examples.rs"]
mod examples;

use common::{arg_vector, example, floats, geokern};
use geokern::MetricKernels;
use serde_json::Value;

geokern::include_metric!("../examples/metrics/schwarzschild.gk");
geokern::include_metric!("../examples/metrics/kerr_bl.gk");
geokern::include_metric!("../examples/metrics/kerr_schild.gk");
geokern::include_metric!("../examples/metrics/kerr_schild_ginv.gk");
geokern::include_metric!("../examples/metrics/flrw.gk");
geokern::include_metric!("../examples/metrics/sphere.gk");
geokern::include_metric!("../examples/metrics/tangherlini.gk");
geokern::include_metric!("../examples/metrics/twisted_shear.gk");
geokern::include_metric!("../examples/metrics/ellis_wormhole.gk");
geokern::include_metric!("../examples/metrics/vesper.gk");

fn reference() -> Value {
    let text = include_str!("../../tests/data/sympy_reference.json");
    serde_json::from_str(text).expect("reference data is JSON")
}

/// Asserts `got` equals `want` to `tol` relative to the largest entry of `want`.
fn assert_close(what: &str, got: &[f64], want: &[f64], tol: f64) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    let scale = want.iter().fold(0.0_f64, |m, v| m.max(v.abs())).max(1e-300);
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        let err = (g - w).abs() / scale;
        assert!(
            err <= tol,
            "{what}[{i}]: got {g:e}, want {w:e} (relative error {err:e})"
        );
    }
}

/// One `eval --json` run at a point, with velocity and momentum.
fn eval(stem: &str, names: &[String], params: &[f64], x: &[f64], u: &[f64], p: &[f64]) -> Value {
    let mut args: Vec<String> = vec!["eval".into(), example(stem), "--json".into()];
    for (n, v) in names.iter().zip(params) {
        args.push("--param".into());
        args.push(format!("{n}={v:?}"));
    }
    for (flag, values) in [("--x", x), ("--u", u), ("--p", p)] {
        args.push(flag.into());
        args.push(arg_vector(values));
    }
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    geokern(&args).json()
}

/// Every kernel value `eval --json` prints, flattened, in a fixed order.
fn kernel_values(out: &Value) -> Vec<(&'static str, Vec<f64>)> {
    vec![
        ("metric", floats(&out["metric"])),
        ("inverse", floats(&out["inverse"])),
        ("christoffel", floats(&out["christoffel"])),
        ("accel", floats(&out["accel"])),
        ("hamilton_dx", floats(&out["hamilton"]["dx"])),
        ("hamilton_dp", floats(&out["hamilton"]["dp"])),
        ("norm", floats(&out["norm"])),
    ]
}

/// The same values from a compiled metric.
fn compiled_values<M: MetricKernels<f64, N>, const N: usize>(
    m: &M,
    x: &[f64],
    u: &[f64],
    p: &[f64],
) -> Vec<(&'static str, Vec<f64>)> {
    let arr = |v: &[f64]| -> [f64; N] { v.try_into().expect("vector of the metric's dimension") };
    let (x, u, p) = (arr(x), arr(u), arr(p));
    let (dx, dp) = m.hamilton_rhs(&x, &p);
    vec![
        ("metric", m.metric(&x).as_flattened().to_vec()),
        ("inverse", m.inverse_metric(&x).as_flattened().to_vec()),
        (
            "christoffel",
            m.christoffel(&x).as_flattened().as_flattened().to_vec(),
        ),
        ("accel", m.geodesic_accel(&x, &u).to_vec()),
        ("hamilton_dx", dx.to_vec()),
        ("hamilton_dp", dp.to_vec()),
        ("norm", vec![m.norm(&x, &u)]),
    ]
}

fn check<M: MetricKernels<f64, N>, const N: usize>(stem: &str, make: impl Fn(&[f64]) -> M) {
    let data = reference();
    let entry = &data["metrics"][stem];
    assert!(entry.is_object(), "no reference data for {stem}");
    let names: Vec<String> = entry["param_names"]
        .as_array()
        .expect("param_names")
        .iter()
        .map(|n| n.as_str().expect("name").to_string())
        .collect();
    let params = floats(&entry["params"]);
    let compiled = make(&params);
    let samples = entry["samples"].as_array().expect("samples");
    assert!(!samples.is_empty());
    for (k, s) in samples.iter().enumerate() {
        let (x, u, p) = (floats(&s["x"]), floats(&s["u"]), floats(&s["p"]));
        let out = eval(stem, &names, &params, &x, &u, &p);
        let tape = kernel_values(&out);
        for (name, got) in &tape {
            let want = floats(&s[*name]);
            assert_close(
                &format!("{stem} sample {k} {name} vs SymPy"),
                got,
                &want,
                1e-12,
            );
        }
        for ((name, got), (_, want)) in tape.iter().zip(compiled_values(&compiled, &x, &u, &p)) {
            assert_close(
                &format!("{stem} sample {k} {name} vs compiled"),
                got,
                &want,
                1e-13,
            );
        }
    }
}

test_each_example!(check);

/// Every example file has reference data, so none escapes the checks above.
#[test]
fn every_example_has_reference_data() {
    let data = reference();
    let mut stems: Vec<String> = std::fs::read_dir(common::root().join("examples/metrics"))
        .expect("examples directory")
        .filter_map(|e| e.ok())
        .filter_map(|e| {
            e.path()
                .file_stem()
                .map(|s| s.to_string_lossy().into_owned())
        })
        .collect();
    stems.sort();
    // The demo's scenario is checked against the compiled kernels only (next test).
    stems.retain(|s| s != "vesper");
    for stem in &stems {
        assert!(
            data["metrics"][stem].is_object(),
            "examples/metrics/{stem}.gk has no reference data"
        );
    }
}

/// The demo's metric (no SymPy data): tape against compiled kernels at a few points.
#[test]
fn vesper_against_compiled() {
    let params = [1.0, 0.6, 0.4];
    let names: Vec<String> = ["m", "a", "q"].iter().map(|s| s.to_string()).collect();
    let compiled = Vesper::new(params[0], params[1], params[2]);
    let points = [
        (
            [0.0, 10.0, 1.5, 0.3],
            [1.1, 0.01, 0.002, 0.03],
            [-0.9, 0.01, 0.3, 3.3],
        ),
        (
            [2.0, 2.5, 0.4, -1.0],
            [1.9, -0.4, 0.1, 0.2],
            [-1.2, 0.7, -0.2, 1.5],
        ),
    ];
    for (x, u, p) in points {
        let out = eval("vesper", &names, &params, &x, &u, &p);
        for ((name, got), (_, want)) in kernel_values(&out)
            .iter()
            .zip(compiled_values(&compiled, &x, &u, &p))
        {
            assert_close(&format!("vesper {name} vs compiled"), got, &want, 1e-13);
        }
        let carter = floats(&out["invariants"]["carter"]);
        let want = compiled.invariants(&x, &u);
        assert_close("vesper carter vs compiled", &carter, &want, 1e-13);
    }
}
