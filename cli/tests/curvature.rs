//! `--curvature`: the vacuum check of `check` and the curvature values of `eval`.

mod common;

use common::{example, geokern, geokern_stdin};

#[test]
fn check_reports_schwarzschild_as_a_vacuum_solution() {
    let run = geokern(&["check", &example("schwarzschild"), "--curvature", "--json"]);
    let v = run.json();
    let curv = &v["curvature"];
    assert_eq!(curv["vacuum"], true, "{v}");
    assert_eq!(curv["ricci"].as_array().map(Vec::len), Some(10));
    // Every component is proved zero, not only sampled.
    let proved = curv["ricci"]
        .as_array()
        .into_iter()
        .flatten()
        .filter(|c| c["status"] == "zero (proved)")
        .count();
    assert_eq!(proved, 10, "{curv}");
    assert!(v["ops"]["kretschmann"]["total"].as_u64().unwrap_or(0) > 0);
}

#[test]
fn check_sees_a_charged_hole_is_not_vacuum_but_trace_free() {
    // Reissner-Nordström: the electromagnetic stress tensor is trace-free, so R = 0 but
    // R_ab ≠ 0 (common practice).
    let text = "/// Charged hole.
        struct Charged { coords: [t, r, theta, phi], params: [m, e],
        let f = 1 - 2*m/r + (e/r).powi(2);
        g[t, t] = -f; g[r, r] = 1/f; g[theta, theta] = r.powi(2);
        g[phi, phi] = (r*theta.sin()).powi(2); }";
    let v = geokern_stdin(&["check", "-", "--curvature", "--json"], text.as_bytes()).json();
    assert_eq!(v["curvature"]["vacuum"], false, "{v}");
    assert_eq!(v["curvature"]["ricci_scalar"], "zero (proved)");
}

#[test]
fn eval_gives_the_kretschmann_scalar() {
    // K = 48 m² / r⁶ for Schwarzschild (from memory).
    let v = geokern(&[
        "eval",
        &example("schwarzschild"),
        "--curvature",
        "--param",
        "m=1.5",
        "--x",
        "0,7,1.1,0.3",
        "--json",
    ])
    .json();
    let k = v["kretschmann"].as_f64().expect("kretschmann in the JSON");
    let want = 48.0 * 1.5 * 1.5 / 7.0_f64.powi(6);
    assert!((k - want).abs() <= 1e-12 * want, "{k} vs {want}");
    assert_eq!(v["riemann"].as_array().map(Vec::len), Some(4));
    assert!(v["ricci_scalar"].as_f64().expect("scalar").abs() < 1e-15);
}

#[test]
fn without_the_flag_there_is_no_curvature() {
    let v = geokern(&["check", &example("schwarzschild"), "--json"]).json();
    assert!(v.get("curvature").is_none());
    assert!(v["ops"].get("riemann").is_none());
}
