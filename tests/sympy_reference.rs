//! The macro's kernels against independent values: `tests/data/sympy_reference.json` is
//! written by `scripts/sympy_reference.py`, which derives every metric a second time with
//! SymPy (core only) and evaluates it with mpmath at 50 digits. The kernels must agree to
//! 1e-12 relative to the size of each array.

use geokern::MetricKernels;
use serde_json::Value;

#[macro_use]
#[path = "support/examples.rs"]
mod examples;

geokern::include_metric!("examples/metrics/schwarzschild.gk");
geokern::include_metric!("examples/metrics/kerr_bl.gk");
geokern::include_metric!("examples/metrics/kerr_schild.gk");
geokern::include_metric!("examples/metrics/kerr_schild_ginv.gk");
geokern::include_metric!("examples/metrics/flrw.gk");
geokern::include_metric!("examples/metrics/sphere.gk");
geokern::include_metric!("examples/metrics/tangherlini.gk");
geokern::include_metric!("examples/metrics/twisted_shear.gk");
geokern::include_metric!("examples/metrics/ellis_wormhole.gk");

const TOL: f64 = 1e-12;

fn reference() -> Value {
    let text = include_str!("data/sympy_reference.json");
    serde_json::from_str(text).expect("reference data is valid JSON")
}

fn floats(v: &Value) -> Vec<f64> {
    match v {
        Value::Array(items) => items.iter().flat_map(floats).collect(),
        Value::Number(n) => vec![n.as_f64().expect("number")],
        other => panic!("unexpected JSON value {other}"),
    }
}

/// Compares flattened arrays relative to the largest reference entry, so that exact zeros
/// and tiny entries are held to the array's scale.
fn assert_close(what: &str, got: &[f64], want: &[f64]) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    let scale = want.iter().fold(0.0_f64, |m, v| m.max(v.abs())).max(1e-300);
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        let err = (g - w).abs() / scale;
        assert!(
            err <= TOL,
            "{what}[{i}]: got {g:e}, want {w:e} (relative error {err:e})"
        );
    }
}

fn check<M: MetricKernels<f64, N>, const N: usize>(key: &str, make: impl Fn(&[f64]) -> M) {
    let data = reference();
    let entry = &data["metrics"][key];
    assert!(entry.is_object(), "no reference data for {key}");
    let params = floats(&entry["params"]);
    let metric = make(&params);
    let samples = entry["samples"].as_array().expect("samples");
    assert!(!samples.is_empty());
    for (k, s) in samples.iter().enumerate() {
        let arr = |name: &str| -> [f64; N] {
            floats(&s[name])
                .try_into()
                .expect("vector of the metric's dimension")
        };
        let (x, u, p) = (arr("x"), arr("u"), arr("p"));
        let tag = |what: &str| format!("{key} sample {k} {what}");
        let flat2 = |m: [[f64; N]; N]| m.iter().flatten().copied().collect::<Vec<_>>();
        assert_close(
            &tag("metric"),
            &flat2(metric.metric(&x)),
            &floats(&s["metric"]),
        );
        assert_close(
            &tag("inverse"),
            &flat2(metric.inverse_metric(&x)),
            &floats(&s["inverse"]),
        );
        let gamma = metric.christoffel(&x);
        let gamma: Vec<f64> = gamma.iter().flatten().flatten().copied().collect();
        assert_close(&tag("christoffel"), &gamma, &floats(&s["christoffel"]));
        assert_close(
            &tag("accel"),
            &metric.geodesic_accel(&x, &u),
            &floats(&s["accel"]),
        );
        let (dx, dp) = metric.hamilton_rhs(&x, &p);
        assert_close(&tag("hamilton dx"), &dx, &floats(&s["hamilton_dx"]));
        assert_close(&tag("hamilton dp"), &dp, &floats(&s["hamilton_dp"]));
        assert_close(&tag("norm"), &[metric.norm(&x, &u)], &floats(&s["norm"]));
    }
}

test_each_example!(check);
