//! What every backend test shares: the metrics and points to run, the compiled Rust kernels
//! they are held to, scratch files and external tools.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::OnceLock;

use geokern::{MetricKernels, Scalar};
use geokern_symbolic::backend::cfamily::{kernel_kinds, snake_case};
use geokern_symbolic::kernels::KernelSet;
use geokern_symbolic::program::KernelKind;
use geokern_symbolic::{model, parse};
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
geokern::include_metric!("tests/backends/extras.gk");

/// One point at which every kernel is evaluated.
#[derive(Clone, Debug)]
pub struct Sample {
    /// Position.
    pub x: Vec<f64>,
    /// Velocity.
    pub u: Vec<f64>,
    /// Momentum.
    pub p: Vec<f64>,
    /// Transported vector (and geodesic separation).
    pub v: Vec<f64>,
}

/// A metric with its kernels, parameter values and sample points.
pub struct Case {
    /// A name usable as a file stem and an identifier (`kerr_bl`).
    pub key: String,
    /// Every kernel program.
    pub kernels: KernelSet,
    /// Parameter values in declared order.
    pub params: Vec<f64>,
    /// Points to evaluate at.
    pub samples: Vec<Sample>,
}

impl Case {
    /// The prefix of the emitted functions (`kerr`).
    pub fn prefix(&self) -> String {
        snake_case(&self.kernels.name)
    }
}

/// The workspace root.
pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

fn floats(v: &Value) -> Vec<f64> {
    match v {
        Value::Array(items) => items.iter().flat_map(floats).collect(),
        Value::Number(n) => vec![n.as_f64().expect("number")],
        other => panic!("expected numbers, found {other}"),
    }
}

fn kernels(path: &Path, name: &str) -> KernelSet {
    let text = std::fs::read_to_string(path).expect("metric file");
    let file = parse::parse_str(&text).expect("metric file parses");
    let decl = file
        .metrics
        .iter()
        .find(|m| m.name == name)
        .unwrap_or_else(|| panic!("{} declares no {name}", path.display()));
    model::compile(decl).expect("metric compiles")
}

fn sample(x: &[f64], u: &[f64], p: &[f64]) -> Sample {
    // Any vector serves for transport; the momentum differs from u, so a swap shows.
    Sample {
        x: x.to_vec(),
        u: u.to_vec(),
        p: p.to_vec(),
        v: p.to_vec(),
    }
}

/// Every example metric at the points of the SymPy reference file, the demo's metric and
/// the extra test metrics (curvature kernels, no parameters) at points of our own; derived
/// once for all tests.
pub fn cases() -> &'static [Case] {
    static CASES: OnceLock<Vec<Case>> = OnceLock::new();
    CASES.get_or_init(derive_cases)
}

fn derive_cases() -> Vec<Case> {
    let text = std::fs::read_to_string(root().join("tests/data/sympy_reference.json"))
        .expect("reference data");
    let reference: Value = serde_json::from_str(&text).expect("reference data is JSON");
    let examples = root().join("examples/metrics");
    let mut stems: Vec<String> = std::fs::read_dir(&examples)
        .expect("examples directory")
        .filter_map(|e| e.ok())
        .filter_map(|e| {
            let path = e.path();
            let stem = path.file_stem()?.to_string_lossy().into_owned();
            (path.extension()? == "gk").then_some(stem)
        })
        .collect();
    stems.sort();
    let mut cases = Vec::new();
    for stem in stems {
        let path = examples.join(format!("{stem}.gk"));
        let entry = &reference["metrics"][&stem];
        let (name, params, samples) = if entry.is_object() {
            let samples = entry["samples"]
                .as_array()
                .expect("samples")
                .iter()
                .map(|s| sample(&floats(&s["x"]), &floats(&s["u"]), &floats(&s["p"])))
                .collect();
            let name = entry["struct"].as_str().expect("struct").to_string();
            (name, floats(&entry["params"]), samples)
        } else {
            assert_eq!(
                stem, "vesper",
                "examples/metrics/{stem}.gk needs sample points"
            );
            // A charged spinning hole well outside its horizon, and a point closer in.
            let samples = vec![
                sample(
                    &[0.0, 7.0, 1.2, 0.3],
                    &[1.15, 0.08, 0.01, 0.035],
                    &[-0.97, 0.12, 2.1, 3.4],
                ),
                sample(
                    &[2.5, 3.25, 0.7, 2.0],
                    &[1.6, -0.2, 0.05, 0.09],
                    &[-1.1, -0.3, 0.8, 2.6],
                ),
            ];
            ("Vesper".to_string(), vec![1.0, 0.6, 0.4], samples)
        };
        cases.push(Case {
            key: stem,
            kernels: kernels(&path, &name),
            params,
            samples,
        });
    }
    let extras = root().join("cli/tests/backends/extras.gk");
    cases.push(Case {
        key: "wormhole_curvature".into(),
        kernels: kernels(&extras, "WormholeCurvature"),
        params: vec![1.25],
        samples: vec![
            sample(
                &[0.0, 0.8, 1.1, 0.5],
                &[1.3, 0.4, 0.05, 0.1],
                &[-1.0, 0.2, 0.9, 1.7],
            ),
            sample(
                &[3.0, -2.0, 2.3, 4.0],
                &[1.1, -0.3, 0.02, 0.07],
                &[-1.2, 0.5, -0.4, 0.6],
            ),
        ],
    });
    cases.push(Case {
        key: "flat_polar".into(),
        kernels: kernels(&extras, "FlatPolar"),
        params: vec![],
        samples: vec![sample(
            &[0.0, 2.0, 0.5],
            &[1.0, 0.1, 0.2],
            &[-1.0, 0.3, 0.7],
        )],
    });
    cases
}

/// Kernel values in [`kernel_kinds`] order, each flattened like the program's outputs
/// (Hamilton's equations as dx then dp, the norm as one value).
pub type Values = Vec<(KernelKind, Vec<f64>)>;

fn values<T, M, const N: usize>(m: &M, s: &Sample) -> Values
where
    T: Scalar + Into<f64>,
    M: MetricKernels<T, N>,
{
    let arr = |v: &[f64]| -> [T; N] { std::array::from_fn(|i| T::from_f64(v[i])) };
    let f = |v: &[T]| -> Vec<f64> { v.iter().map(|&t| t.into()).collect() };
    let (x, u, p, v) = (arr(&s.x), arr(&s.u), arr(&s.p), arr(&s.v));
    let (dx, dp) = m.hamilton_rhs(&x, &p);
    let mut conserved = vec![T::from_f64(0.0); m.conserved_names().len()];
    m.conserved(&x, &u, &mut conserved);
    let mut invariants = vec![T::from_f64(0.0); m.invariant_names().len()];
    m.invariants(&x, &u, &mut invariants);
    vec![
        (KernelKind::Metric, f(m.metric(&x).as_flattened())),
        (
            KernelKind::InverseMetric,
            f(m.inverse_metric(&x).as_flattened()),
        ),
        (
            KernelKind::Christoffel,
            f(m.christoffel(&x).as_flattened().as_flattened()),
        ),
        (KernelKind::Accel, f(&m.geodesic_accel(&x, &u))),
        (KernelKind::Hamilton, f(&[dx, dp].concat())),
        (KernelKind::Transport, f(&m.parallel_transport(&x, &u, &v))),
        (KernelKind::Norm, f(&[m.norm(&x, &u)])),
        (KernelKind::Conserved, f(&conserved)),
        (KernelKind::Invariants, f(&invariants)),
    ]
}

fn curvature_values<T: Scalar + Into<f64>>(m: &WormholeCurvature<T>, s: &Sample) -> Values {
    let arr = |v: &[f64]| -> [T; 4] { std::array::from_fn(|i| T::from_f64(v[i])) };
    let f = |v: &[T]| -> Vec<f64> { v.iter().map(|&t| t.into()).collect() };
    let (x, u, v) = (arr(&s.x), arr(&s.u), arr(&s.v));
    let mut all = values(m, s);
    all.extend([
        (
            KernelKind::Riemann,
            f(m.riemann(&x).as_flattened().as_flattened().as_flattened()),
        ),
        (KernelKind::Ricci, f(m.ricci(&x).as_flattened())),
        (KernelKind::RicciScalar, f(&[m.ricci_scalar(&x)])),
        (KernelKind::Einstein, f(m.einstein(&x).as_flattened())),
        (KernelKind::Kretschmann, f(&[m.kretschmann(&x)])),
        (KernelKind::Deviation, f(&m.geodesic_deviation(&x, &u, &v))),
    ]);
    all
}

/// Every kernel of `case` at `s`, computed by the Rust kernels `include_metric!` compiles
/// from the same file, in scalar type `T`.
pub fn rust_values<T: Scalar + Into<f64>>(case: &Case, s: &Sample) -> Values {
    let p = |i: usize| T::from_f64(case.params[i]);
    let all = match case.key.as_str() {
        "schwarzschild" => values(&Schwarzschild::<T>::new(p(0)), s),
        "kerr_bl" => values(&Kerr::<T>::new(p(0), p(1)), s),
        "kerr_schild" => values(&KerrSchild::<T>::new(p(0), p(1)), s),
        "kerr_schild_ginv" => values(&KerrSchildInv::<T>::new(p(0), p(1)), s),
        "flrw" => values(&Flrw::<T>::new(p(0)), s),
        "sphere" => values(&Sphere::<T>::new(p(0)), s),
        "tangherlini" => values(&Tangherlini5::<T>::new(p(0)), s),
        "twisted_shear" => values(&TwistedShear::<T>::new(p(0), p(1)), s),
        "ellis_wormhole" => values(&EllisWormhole::<T>::new(p(0)), s),
        "vesper" => values(&Vesper::<T>::new(p(0), p(1), p(2)), s),
        "wormhole_curvature" => curvature_values(&WormholeCurvature::<T>::new(p(0)), s),
        "flat_polar" => values(&FlatPolar::<T>::new(), s),
        other => panic!("no compiled kernels for {other}: add it to rust_values"),
    };
    let kinds = kernel_kinds(&case.kernels);
    assert_eq!(
        all.iter().map(|(k, _)| *k).collect::<Vec<_>>(),
        kinds,
        "{}: the Rust kernels cover every emitted kernel",
        case.key
    );
    all
}

/// Asserts `got` equals `want` to `tol` relative to the largest entry of `want`.
pub fn assert_close(what: &str, got: &[f64], want: &[f64], tol: f64) {
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

/// A fresh directory for one test's files, under cargo's scratch space for tests.
pub fn scratch(tag: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("backends")
        .join(tag);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch directory");
    dir
}

/// Runs a tool, failing the test with `hint` if it cannot be started.
pub fn run_tool(program: &str, args: &[&str], dir: &Path, hint: &str) -> Output {
    Command::new(program)
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap_or_else(|e| panic!("cannot run {program} ({e}); {hint}"))
}

/// Fails the test with the tool's output unless it succeeded.
pub fn assert_success(what: &str, out: &Output) {
    assert!(
        out.status.success(),
        "{what} failed ({}):\n{}\n{}",
        out.status,
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
}

/// Parses lines `KEY SAMPLE KERNEL value value ...` printed by a driver program.
pub fn parse_results(text: &str) -> BTreeMap<(String, usize, String), Vec<f64>> {
    let mut res = BTreeMap::new();
    for line in text.lines() {
        let mut words = line.split_whitespace();
        let (Some(key), Some(sample), Some(kernel)) = (words.next(), words.next(), words.next())
        else {
            panic!("malformed result line {line:?}");
        };
        let values = words
            .map(|w| {
                w.parse::<f64>()
                    .unwrap_or_else(|_| panic!("not a number in {line:?}"))
            })
            .collect();
        let sample = sample.parse().expect("sample index");
        res.insert((key.to_string(), sample, kernel.to_string()), values);
    }
    res
}

/// Holds every kernel of every case, as printed by a driver, to the Rust kernels.
pub fn check_results<'a>(
    cases: impl IntoIterator<Item = &'a Case>,
    printed: &str,
    tol: f64,
    what: &str,
) {
    let got = parse_results(printed);
    let mut checked = 0;
    for case in cases {
        for (k, s) in case.samples.iter().enumerate() {
            for (kind, want) in rust_values::<f64>(case, s) {
                let key = (case.key.clone(), k, kind.name().to_string());
                match got.get(&key) {
                    Some(values) => {
                        let tag = format!("{what} {} sample {k} {}", case.key, kind.name());
                        assert_close(&tag, values, &want, tol);
                        checked += 1;
                    }
                    // A language may leave out a kernel with nothing to compute.
                    None if want.is_empty() => {}
                    None => panic!(
                        "{what}: no result for {} sample {k} {}",
                        case.key,
                        kind.name()
                    ),
                }
            }
        }
    }
    assert_eq!(
        checked,
        got.len(),
        "{what}: every printed result was checked"
    );
}
