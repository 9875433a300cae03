//! End to end: `geokern survey` (circular orbits) against published closed forms, its JSON
//! shape and its errors, and the `--plot` images of `survey` and `trace`.

mod common;

use common::{example, floats, geokern, geokern_in, scratch_dir};
use serde_json::Value;

/// Relative agreement asked of every orbit radius, energy and angular velocity.
const TOLERANCE: f64 = 1e-8;

fn close(found: f64, want: f64, what: &str) {
    assert!(
        ((found - want) / want).abs() < TOLERANCE,
        "{what}: found {found}, want {want} (relative {:e})",
        (found - want) / want
    );
}

fn number(v: &Value) -> f64 {
    v.as_f64()
        .unwrap_or_else(|| panic!("expected a number, found {v}"))
}

fn survey_json(file: &str, args: &[&str]) -> Value {
    let mut all = vec!["survey", file, "--json"];
    all.extend_from_slice(args);
    geokern(&all).json()
}

/// r_isco of Kerr, Bardeen, Press and Teukolsky, ApJ 178 (1972) 347, eq. (2.21) (from
/// memory): r = M{3 + Z2 ∓ sqrt[(3 − Z1)(3 + Z1 + 2 Z2)]}, upper sign prograde, with
/// Z1 = 1 + (1 − a²/M²)^{1/3}[(1 + a/M)^{1/3} + (1 − a/M)^{1/3}], Z2 = sqrt(3a²/M² + Z1²).
fn bpt_isco(m: f64, a: f64, prograde: bool) -> f64 {
    let s = a.abs() / m;
    let z1 = 1.0 + (1.0 - s * s).cbrt() * ((1.0 + s).cbrt() + (1.0 - s).cbrt());
    let z2 = (3.0 * s * s + z1 * z1).sqrt();
    let root = ((3.0 - z1) * (3.0 + z1 + 2.0 * z2)).sqrt();
    m * (3.0 + z2 + if prograde { -root } else { root })
}

/// The circular photon orbit of Kerr, Bardeen, Press and Teukolsky (1972), eq. (2.18)
/// (from memory): r_ph = 2M{1 + cos[(2/3) arccos(∓a/M)]}, upper sign prograde.
fn bpt_photon(m: f64, a: f64, prograde: bool) -> f64 {
    let s = a.abs() / m;
    let arg = if prograde { -s } else { s };
    2.0 * m * (1.0 + ((2.0 / 3.0) * arg.acos()).cos())
}

/// Energy per unit mass of a Kerr circular orbit, Bardeen, Press and Teukolsky (1972),
/// eq. (2.12) (from memory): E = (r^{3/2} − 2M r^{1/2} ± a M^{1/2}) /
/// (r^{3/4} (r^{3/2} − 3M r^{1/2} ± 2a M^{1/2})^{1/2}), upper sign prograde.
fn bpt_energy(m: f64, a: f64, r: f64, prograde: bool) -> f64 {
    let sa = if prograde { a.abs() } else { -a.abs() };
    let sm = m.sqrt();
    (r.powf(1.5) - 2.0 * m * r.sqrt() + sa * sm)
        / (r.powf(0.75) * (r.powf(1.5) - 3.0 * m * r.sqrt() + 2.0 * sa * sm).sqrt())
}

/// Ω of a Kerr circular orbit, Bardeen, Press and Teukolsky (1972), eq. (2.16) (from
/// memory): Ω = ±M^{1/2}/(r^{3/2} ± a M^{1/2}), upper sign prograde (for a ≥ 0).
fn bpt_omega(m: f64, a: f64, r: f64, prograde: bool) -> f64 {
    let sm = m.sqrt();
    if prograde {
        sm / (r.powf(1.5) + a * sm)
    } else {
        -sm / (r.powf(1.5) - a * sm)
    }
}

fn check_kerr_rows(v: &Value, m: f64, radius: f64) {
    let rows = v["rows"].as_array().expect("rows");
    assert!(!rows.is_empty());
    for row in rows {
        let a = number(&row["value"]);
        for (sense, prograde) in [("prograde", true), ("retrograde", false)] {
            let what = |q: &str| format!("{q} {sense} at m = {m}, a = {a}");
            let isco = number(&row["isco"][sense]);
            close(isco, bpt_isco(m, a, prograde), &what("ISCO"));
            close(
                number(&row["photon_orbit"][sense]),
                bpt_photon(m, a, prograde),
                &what("photon orbit"),
            );
            close(
                number(&row["energy_at_isco"][sense]),
                bpt_energy(m, a, isco, prograde),
                &what("E at the ISCO"),
            );
            // For a < 0 the hole turns the other way: prograde orbits have Ω < 0, and the
            // formulas hold with |a| and Ω mirrored.
            let mirror = if a < 0.0 { -1.0 } else { 1.0 };
            close(
                mirror * number(&row["omega"][sense]),
                bpt_omega(m, a.abs(), radius, prograde),
                &what("Ω"),
            );
        }
        // The outer horizon r+ = M + sqrt(M² − a²) (Boyer and Lindquist 1967; common practice).
        close(
            number(&row["horizon"]),
            m + (m * m - a * a).sqrt(),
            "outer horizon",
        );
    }
}

#[test]
fn kerr_orbits_match_bardeen_press_teukolsky() {
    let v = survey_json(
        &example("kerr_bl"),
        &["--vary", "a=0:0.9:4", "--param", "m=1", "--radius", "7"],
    );
    let values = floats(&v["vary"]["values"]);
    assert_eq!(values.len(), 4);
    for (found, want) in values.iter().zip([0.0, 0.3, 0.6, 0.9]) {
        assert!((found - want).abs() < 1e-15, "{values:?}");
    }
    check_kerr_rows(&v, 1.0, 7.0);
    let v = survey_json(
        &example("kerr_bl"),
        &["--vary", "a=0.99:0.99:1", "--param", "m=1", "--radius", "7"],
    );
    check_kerr_rows(&v, 1.0, 7.0);
}

#[test]
fn kerr_orbits_scale_with_the_mass_and_follow_the_sense_of_the_spin() {
    // m = 2, spins of both signs: prograde means with the hole's rotation.
    let v = survey_json(
        &example("kerr_bl"),
        &["--vary", "a=-1.9:1.9:3", "--param", "m=2", "--radius", "13"],
    );
    check_kerr_rows(&v, 2.0, 13.0);
    let rows = v["rows"].as_array().expect("rows");
    assert!(number(&rows[0]["omega"]["prograde"]) < 0.0);
    assert_eq!(number(&rows[0]["prograde_sign"]), -1.0);
    assert!(number(&rows[2]["omega"]["prograde"]) > 0.0);
    assert_eq!(number(&rows[2]["prograde_sign"]), 1.0);
}

#[test]
fn charged_hole_photon_sphere_and_horizon() {
    // Kerr-Newman with a = 0 is Reissner-Nordström: horizon r+ = M + sqrt(M² − Q²) and
    // photon sphere r = [3M + sqrt(9M² − 8Q²)]/2 (any general-relativity textbook; from
    // memory). Not a formula the survey knows: it only sees the metric file.
    let v = survey_json(
        &example("vesper"),
        &["--vary", "q=0:0.9:4", "--param", "m=1.5", "--param", "a=0"],
    );
    let m = 1.5;
    for row in v["rows"].as_array().expect("rows") {
        let q = number(&row["value"]);
        close(
            number(&row["horizon"]),
            m + (m * m - q * q).sqrt(),
            "horizon",
        );
        let want = 0.5 * (3.0 * m + (9.0 * m * m - 8.0 * q * q).sqrt());
        for sense in ["prograde", "retrograde"] {
            close(number(&row["photon_orbit"][sense]), want, "photon sphere");
        }
    }
}

#[test]
fn schwarzschild_isco_and_photon_sphere() {
    let v = survey_json(
        &example("schwarzschild"),
        &["--vary", "m=0.5:2:4", "--radius", "50"],
    );
    for row in v["rows"].as_array().expect("rows") {
        let m = number(&row["value"]);
        for sense in ["prograde", "retrograde"] {
            // r_isco = 6M, r_ph = 3M, E_isco = sqrt(8/9), L_isco = 2 sqrt(3) M, horizon 2M
            // (any general-relativity textbook, e.g. Misner, Thorne and Wheeler 1973,
            // sec. 25.5; from memory).
            close(number(&row["isco"][sense]), 6.0 * m, "ISCO");
            close(number(&row["photon_orbit"][sense]), 3.0 * m, "photon orbit");
            close(
                number(&row["energy_at_isco"][sense]),
                (8.0f64 / 9.0).sqrt(),
                "E",
            );
            close(
                number(&row["angular_momentum_at_isco"][sense]).abs(),
                2.0 * 3f64.sqrt() * m,
                "L",
            );
            // Kepler's law holds exactly in Schwarzschild coordinates: Ω² = M/r³ (from memory).
            close(
                number(&row["omega"][sense]).abs(),
                (m / 50f64.powi(3)).sqrt(),
                "Ω",
            );
        }
        close(number(&row["horizon"]), 2.0 * m, "horizon");
        assert!(
            number(&row["omega"]["prograde"]) > 0.0,
            "static: prograde is Ω > 0"
        );
    }
}

#[test]
fn json_has_the_documented_shape() {
    let v = survey_json(
        &example("kerr_bl"),
        &["--vary", "a=0:0.5:3", "--param", "m=1"],
    );
    let keys: Vec<&String> = v.as_object().expect("object").keys().collect();
    for key in [
        "metric",
        "file",
        "vary",
        "params",
        "search",
        "radius",
        "rows",
        "ops",
        "ns_per_accel",
    ] {
        assert!(keys.iter().any(|k| *k == key), "missing {key}: {keys:?}");
    }
    assert_eq!(v["metric"], "Kerr");
    assert_eq!(v["vary"]["param"], "a");
    assert_eq!(v["params"], serde_json::json!({"m": 1.0}));
    assert_eq!(v["radius"], Value::Null);
    assert_eq!(v["search"]["coordinate"], "r");
    assert!(number(&v["ns_per_accel"]) > 0.0);
    assert!(
        number(&v["ns_per_accel_native"]) > 0.0,
        "this machine has a code generator"
    );
    for kernel in ["accel", "christoffel", "hamilton", "equatorial_derivatives"] {
        let ops = &v["ops"][kernel];
        assert_eq!(
            number(&ops["total"]),
            number(&ops["add"]) + number(&ops["mul"]) + number(&ops["div"]) + number(&ops["call"]),
            "{kernel}"
        );
    }
    let rows = v["rows"].as_array().expect("rows");
    assert_eq!(rows.len(), 3);
    for row in rows {
        assert_eq!(row["omega"], Value::Null, "no --radius, no Ω");
        for field in [
            "isco",
            "photon_orbit",
            "energy_at_isco",
            "angular_momentum_at_isco",
            "omega_at_isco",
        ] {
            let object = row[field].as_object().expect(field);
            let senses: Vec<&String> = object.keys().collect();
            assert_eq!(senses, ["prograde", "retrograde"], "{field}");
        }
    }
    // The text report says the same in a table.
    let run = geokern(&[
        "survey",
        &example("kerr_bl"),
        "--vary",
        "a=0:0.5:3",
        "--param",
        "m=1",
    ]);
    assert_eq!(run.code, Some(0), "{}", run.stderr);
    assert!(run.stdout.contains("ISCO pro"), "{}", run.stdout);
    assert!(run.stdout.contains("ns per call"), "{}", run.stdout);
}

#[test]
fn orbits_that_do_not_exist_are_null() {
    let dir = scratch_dir("survey-flat");
    std::fs::write(
        dir.join("flat.gk"),
        "struct Flat { coords: [t, r, theta, phi], params: [c],
            g[t, t] = -c.powi(2); g[r, r] = 1; g[theta, theta] = r.powi(2);
            g[phi, phi] = (r * theta.sin()).powi(2); }",
    )
    .expect("write");
    let run = geokern_in(
        &dir,
        &[
            "survey", "flat.gk", "--vary", "c=1:2:2", "--radius", "5", "--json",
        ],
    );
    let v = run.json();
    for row in v["rows"].as_array().expect("rows") {
        assert_eq!(row["horizon"], Value::Null);
        for field in ["isco", "photon_orbit", "energy_at_isco"] {
            assert_eq!(row[field]["prograde"], Value::Null, "{field}: {row}");
            assert_eq!(row[field]["retrograde"], Value::Null, "{field}: {row}");
        }
    }
    // The Ellis wormhole has no circular orbit at positive l either (its photon orbit is
    // the throat, l = 0, which is not searched).
    let v = survey_json(&example("ellis_wormhole"), &["--vary", "b0=1:2:2"]);
    for row in v["rows"].as_array().expect("rows") {
        assert_eq!(row["isco"]["prograde"], Value::Null, "{row}");
    }
}

#[test]
fn bad_options_and_unsuited_metrics_give_one_line() {
    let kerr = example("kerr_bl");
    for (args, needle) in [
        (vec!["--vary", "a=0:1"], "NAME=FROM:TO:STEPS"),
        (vec!["--vary", "a0:1:3"], "NAME=FROM:TO:STEPS"),
        (vec!["--vary", "a=0:x:3"], "not a finite number"),
        (vec!["--vary", "a=0:1:0"], "STEPS"),
        (vec!["--vary", "a=0:1:2.5"], "STEPS"),
        (vec!["--vary", "a=0:1:1"], "one step"),
        (
            vec!["--vary", "q=0:1:3", "--param", "m=1"],
            "unknown parameter `q`",
        ),
        (vec!["--vary", "a=0:1:3"], "missing parameter m"),
        (
            vec!["--vary", "a=0:1:3", "--param", "m=1", "--param", "a=1"],
            "which --vary varies",
        ),
        (
            vec!["--vary", "a=0:1:3", "--param", "m=1", "--radius", "-2"],
            "--radius",
        ),
        (
            vec!["--vary", "a=0:1:3", "--param", "m=1", "--search", "5:1"],
            "--search",
        ),
        (
            vec!["--vary", "a=0:1:3", "--param", "m=1", "--plot", "x.jpg"],
            ".svg or .png",
        ),
    ] {
        let mut all = vec!["survey", kerr.as_str()];
        all.extend(args.iter().copied());
        let line = geokern(&all).one_error_line();
        assert!(line.contains(needle), "{args:?}: {line}");
    }
    // Cartesian Kerr-Schild coordinates: the metric depends on the last coordinate.
    let line = geokern(&[
        "survey",
        &example("kerr_schild"),
        "--vary",
        "a=0:0.5:2",
        "--param",
        "m=1",
    ])
    .one_error_line();
    assert!(line.contains("stationary, axisymmetric"), "{line}");
    assert!(line.contains("depends on z"), "{line}");
    // Five dimensions.
    let line = geokern(&["survey", &example("tangherlini"), "--vary", "mu=1:2:2"]).one_error_line();
    assert!(line.contains("5 coordinates"), "{line}");
}

#[test]
fn an_equator_that_is_no_mirror_is_refused() {
    let dir = scratch_dir("survey-tilted");
    std::fs::write(
        dir.join("tilted.gk"),
        "struct Tilted { coords: [t, r, theta, phi], params: [m, e],
            g[t, t] = -(1 - 2 * m / r) + e * theta.cos() / r; g[r, r] = 1 / (1 - 2 * m / r);
            g[theta, theta] = r.powi(2); g[phi, phi] = (r * theta.sin()).powi(2); }",
    )
    .expect("write");
    let line = geokern_in(
        &dir,
        &[
            "survey",
            "tilted.gk",
            "--vary",
            "e=0.1:0.2:2",
            "--param",
            "m=1",
        ],
    )
    .one_error_line();
    assert!(line.contains("reflection symmetry"), "{line}");
    // With e = 0 it is Schwarzschild again.
    let v = geokern_in(
        &dir,
        &[
            "survey",
            "tilted.gk",
            "--vary",
            "e=0:0:1",
            "--param",
            "m=1",
            "--json",
        ],
    )
    .json();
    close(number(&v["rows"][0]["isco"]["prograde"]), 6.0, "ISCO");
}

fn svg_text(path: &std::path::Path) -> String {
    let text = std::fs::read_to_string(path).expect("the SVG is written");
    assert!(
        text.trim_start().starts_with("<svg"),
        "{}",
        &text[..80.min(text.len())]
    );
    assert!(text.trim_end().ends_with("</svg>"));
    text
}

fn png_size(path: &std::path::Path) -> (u32, u32) {
    let image = image::open(path).expect("the PNG decodes");
    (image.width(), image.height())
}

#[test]
fn survey_plots_are_written() {
    let dir = scratch_dir("survey-plot");
    let svg = dir.join("orbits.svg");
    let png = dir.join("orbits.png");
    for path in [&svg, &png] {
        let run = geokern(&[
            "survey",
            &example("kerr_bl"),
            "--vary",
            "a=0:0.9:4",
            "--param",
            "m=1",
            "--plot",
            path.to_str().expect("utf-8 path"),
        ]);
        assert_eq!(run.code, Some(0), "{}", run.stderr);
    }
    let text = svg_text(&svg);
    for words in ["ISCO prograde", "photon orbit retrograde", "outer horizon"] {
        assert!(text.contains(words), "missing {words}");
    }
    assert!(png_size(&png).0 > 100);
    // A path that cannot be written fails with one line naming it.
    let bad = dir.join("no/such/dir/orbits.svg");
    let line = geokern(&[
        "survey",
        &example("kerr_bl"),
        "--vary",
        "a=0:0.9:2",
        "--param",
        "m=1",
        "--plot",
        bad.to_str().expect("utf-8 path"),
    ])
    .one_error_line();
    assert!(line.contains("cannot write"), "{line}");
}

fn trace_plot(dir: &std::path::Path, file: &str, params: &[&str], x: &str, u: &str, plot: &str) {
    let mut args = vec!["trace", file];
    for p in params {
        args.extend(["--param", p]);
    }
    args.extend(["--x", x, "--u", u, "--lambda", "300", "--plot", plot]);
    let run = geokern_in(dir, &args);
    assert_eq!(run.code, Some(0), "{}", run.stderr);
}

#[test]
fn trace_plots_show_the_orbit_and_the_horizon() {
    let dir = scratch_dir("trace-plot");
    let schwarzschild = common::root().join(example("schwarzschild"));
    let schwarzschild = schwarzschild.to_str().expect("utf-8 path");
    // A bound orbit at r = 10 M (started with dφ/dλ a little below circular).
    for name in ["orbit.svg", "orbit.png"] {
        trace_plot(
            &dir,
            schwarzschild,
            &["m=1"],
            "0,10,pi/2,0",
            "1.2,0,0,0.036",
            name,
        );
    }
    let text = svg_text(&dir.join("orbit.svg"));
    assert!(text.contains("<circle"), "the horizon is drawn");
    assert!(text.contains("horizon r = 2"), "and named");
    assert!(
        text.contains("<polyline") || text.contains("<path"),
        "the orbit"
    );
    assert_eq!(png_size(&dir.join("orbit.png")), (800, 600));
    // Flat space: a straight line, and no horizon.
    std::fs::write(
        dir.join("flat.gk"),
        "struct Flat { coords: [t, r, theta, phi],
            g[t, t] = -1; g[r, r] = 1; g[theta, theta] = r.powi(2);
            g[phi, phi] = (r * theta.sin()).powi(2); }",
    )
    .expect("write");
    trace_plot(
        &dir,
        "flat.gk",
        &[],
        "0,10,pi/2,0",
        "1.2,0,0,0.03",
        "flat.svg",
    );
    let text = svg_text(&dir.join("flat.svg"));
    assert!(!text.contains("<circle"), "no horizon in flat space");
    assert!(!text.contains("horizon"));
    // Cartesian coordinates are drawn as they are.
    trace_plot(
        &dir,
        common::root()
            .join(example("kerr_schild"))
            .to_str()
            .expect("utf-8 path"),
        &["m=1", "a=0.5"],
        "0,20,0,1",
        "1.2,0,0.35,0",
        "cartesian.svg",
    );
    let text = svg_text(&dir.join("cartesian.svg"));
    assert!(text.contains("(x, y) plane"), "{text}");
    // A bad extension fails before integrating; a missing folder after, naming the path.
    let args = |plot: &'static str| {
        vec![
            "trace", "flat.gk", "--x", "0,10,1,0", "--u", "1,0,0,0", "--lambda", "1", "--plot",
            plot,
        ]
    };
    let line = geokern_in(&dir, &args("orbit.gif")).one_error_line();
    assert!(line.contains(".svg or .png"), "{line}");
    let line = geokern_in(&dir, &args("missing/orbit.png")).one_error_line();
    assert!(line.contains("cannot write `missing/orbit.png`"), "{line}");
}
