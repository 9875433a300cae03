//! `geokern survey FILE --vary PARAM=FROM:TO:STEPS`: circular orbits as a parameter varies.

use std::fmt::Write;
use std::path::PathBuf;
use std::time::Instant;

use clap::Args;
use geokern_symbolic::program::KernelKind;
use serde_json::{Map, Value};

use crate::error::CliError;
use crate::native::NativeKernel;
use crate::plot::{self, Figure, Series};
use crate::progress::Progress;
use crate::survey::{analyse, Analysis, Equatorial, PerSense, Search, Sense};
use crate::tape::Inputs;
use crate::tape_metric::TapeSet;
use crate::{json, report, source};

/// Significant digits in the table.
const DIGITS: usize = 10;

/// Most values one `--vary` may ask for.
const MAX_STEPS: usize = 10_000;

/// `geokern survey`.
#[derive(Debug, Args)]
pub struct SurveyArgs {
    /// The metric file and the metric in it.
    #[command(flatten)]
    pub source: crate::args::MetricFile,
    /// The parameter to vary: NAME=FROM:TO:STEPS, STEPS evenly spaced values from FROM to TO
    /// (both included), as `a=0:0.99:12`.
    #[arg(long, value_name = "NAME=FROM:TO:STEPS", allow_hyphen_values = true)]
    pub vary: String,
    /// The value of every other parameter, `NAME=VALUE` (repeat for each).
    #[arg(long = "param", value_name = "NAME=VALUE")]
    pub params: Vec<String>,
    /// Also report the angular velocity dφ/dt of the circular orbits at this radius.
    #[arg(long, value_name = "R", allow_hyphen_values = true)]
    pub radius: Option<String>,
    /// The radii searched, LOW:HIGH; the search starts at the outer horizon instead of LOW
    /// when there is one between them.
    #[arg(long, value_name = "LOW:HIGH", default_value = "1e-3:1e4")]
    pub search: String,
    /// Draw the orbit radii against the varied parameter into an image (`.svg` or `.png`).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Text or JSON.
    #[command(flatten)]
    pub format: crate::args::Format,
}

/// The parsed `--vary` option.
#[derive(Clone, Debug, PartialEq)]
pub struct Vary {
    /// The parameter's name.
    pub name: String,
    /// Its index in declared order.
    pub index: usize,
    /// The values, in order.
    pub values: Vec<f64>,
}

/// Parses `NAME=FROM:TO:STEPS` against the parameters `declared` of metric `metric`.
pub fn parse_vary(text: &str, metric: &str, declared: &[String]) -> Result<Vary, CliError> {
    let form = "is not of the form NAME=FROM:TO:STEPS (as in --vary a=0:0.99:12)";
    let bad = || CliError::usage(format!("--vary `{text}` {form}"));
    let (name, range) = text.split_once('=').ok_or_else(bad)?;
    let name = name.trim();
    let parts: Vec<&str> = range.split(':').map(str::trim).collect();
    let [from, to, steps] = parts.as_slice() else {
        return Err(bad());
    };
    let index = declared.iter().position(|p| p == name).ok_or_else(|| {
        CliError::usage(if declared.is_empty() {
            format!("--vary: unknown parameter `{name}`; {metric} has no parameters")
        } else {
            format!(
                "--vary: unknown parameter `{name}`; {metric} has parameters {}",
                declared.join(", ")
            )
        })
    })?;
    let number = |s: &str| {
        source::parse_number(s)
            .ok_or_else(|| CliError::usage(format!("--vary {name}: `{s}` is not a finite number")))
    };
    let (from, to) = (number(from)?, number(to)?);
    let steps: usize = steps
        .parse()
        .ok()
        .filter(|&n| (1..=MAX_STEPS).contains(&n))
        .ok_or_else(|| {
            CliError::usage(format!(
                "--vary {name}: STEPS `{steps}` is not a whole number from 1 to {MAX_STEPS}"
            ))
        })?;
    if steps == 1 && from != to {
        return Err(CliError::usage(format!(
            "--vary {name}: one step needs FROM = TO; give at least 2 steps for a range"
        )));
    }
    let values = (0..steps)
        .map(|k| {
            if k + 1 == steps {
                to
            } else {
                from + (to - from) * k as f64 / (steps - 1).max(1) as f64
            }
        })
        .collect();
    Ok(Vary {
        name: name.to_string(),
        index,
        values,
    })
}

fn parse_search(text: &str) -> Result<(f64, f64), CliError> {
    let bad = || {
        CliError::usage(format!(
            "--search `{text}` is not of the form LOW:HIGH with 0 < LOW < HIGH (as in 1e-3:1e4)"
        ))
    };
    let (low, high) = text.split_once(':').ok_or_else(bad)?;
    let low = source::parse_number(low).ok_or_else(bad)?;
    let high = source::parse_number(high).ok_or_else(bad)?;
    if !(low > 0.0 && high > low) {
        return Err(bad());
    }
    Ok((low, high))
}

/// Runs `survey`.
pub fn run(args: &SurveyArgs) -> Result<String, CliError> {
    let (low, high) = parse_search(&args.search)?;
    let radius =
        match &args.radius {
            None => None,
            Some(text) => Some(source::parse_number(text).filter(|&r| r > 0.0).ok_or_else(
                || CliError::usage(format!("--radius `{text}` is not a positive number")),
            )?),
        };
    let plot_format = match &args.plot {
        Some(path) => Some(plot::format_of(path)?),
        None => None,
    };
    let (name, bytes) = source::read(&args.source.file)?;
    let loaded = source::load_bytes_with(
        &name,
        &bytes,
        args.source.metric.as_deref(),
        args.source.curvature,
        false,
    )?;
    let ks = &loaded.kernels;
    let vary = parse_vary(&args.vary, &ks.name, &ks.params)?;
    if let Some(given) = args.params.iter().find(|p| {
        p.split_once('=')
            .is_some_and(|(k, _)| k.trim() == vary.name)
    }) {
        return Err(CliError::usage(format!(
            "--param `{given}` sets `{}`, which --vary varies",
            vary.name
        )));
    }
    let mut given = args.params.clone();
    given.push(format!("{}=0", vary.name));
    let fixed = source::bind_params(ks, &given)?;
    // The same file parsed again for its declaration, which the symbolic derivatives need.
    let file = source::parse_bytes(&name, &bytes)?;
    let decl = file
        .metric(&ks.name)
        .ok_or_else(|| CliError::Unsuited(format!("`{}` is not in `{name}`", ks.name)))?;
    let equatorial = Equatorial::new(decl, ks)?;
    let set = TapeSet::new(ks, &fixed)?;
    let search = Search { low, high, radius };
    let progress = Progress::new(args.format.json, &format!("surveying {}", ks.name));
    let mut rows = Vec::with_capacity(vary.values.len());
    for (k, &value) in vary.values.iter().enumerate() {
        let mut params = fixed.clone();
        params[vary.index] = value;
        rows.push(analyse(&equatorial, &set, &params, &search)?);
        progress.set_fraction((k + 1) as f64 / vary.values.len() as f64);
    }
    progress.finish();
    let mut timing_params = fixed.clone();
    timing_params[vary.index] = vary.values[0];
    let r = radius.unwrap_or(10.0);
    let ns_per_accel = {
        let tape = set.tape(KernelKind::Accel);
        let mut registers = tape.registers(&timing_params);
        time_accel(r, |inputs, out| tape.eval(&mut registers, inputs, out))
    };
    // Where this machine has a code generator, the same kernel as native code.
    let ns_per_accel_native = NativeKernel::compile(ks.program(KernelKind::Accel), ks.params.len())
        .ok()
        .map(|native| time_accel(r, |inputs, out| native.eval(&timing_params, inputs, out)));
    let survey = Survey {
        file: name,
        equatorial: &equatorial,
        kernels: ks,
        fixed,
        vary,
        search,
        rows,
        ns_per_accel,
        ns_per_accel_native,
    };
    if let (Some(path), Some(format)) = (&args.plot, plot_format) {
        plot::write(&survey.figure(), path, format)?;
    }
    Ok(if args.format.json {
        json::to_text(&survey.to_json())
    } else {
        survey.to_text()
    })
}

/// Times a batch of geodesic-acceleration evaluations by `accel`, in ns per call, near
/// radius `r`: at least 2000 calls and 20 ms, so that the clock's resolution does not show.
fn time_accel(r: f64, mut accel: impl FnMut(&Inputs<'_>, &mut [f64])) -> f64 {
    // A surveyed metric has four coordinates (t, r, θ, φ), as `x` below does.
    let mut out = [0.0; 4];
    let u = [1.1, 0.01, 0.002, 0.03];
    let started = Instant::now();
    let mut calls = 0u64;
    let mut sink = 0.0;
    while calls < 2000 || started.elapsed().as_millis() < 20 {
        for k in 0..100 {
            let x = [0.0, r + 1e-3 * k as f64, 1.2, 0.1];
            let inputs = Inputs {
                x: &x,
                u: &u,
                ..Inputs::default()
            };
            accel(std::hint::black_box(&inputs), &mut out);
            sink += out[0];
        }
        calls += 100;
    }
    std::hint::black_box(sink);
    started.elapsed().as_nanos() as f64 / calls as f64
}

/// Everything a survey found, with what the outputs need to describe it.
struct Survey<'a> {
    file: String,
    equatorial: &'a Equatorial,
    kernels: &'a geokern_symbolic::kernels::KernelSet,
    fixed: Vec<f64>,
    vary: crate::commands::survey::Vary,
    search: Search,
    rows: Vec<Analysis>,
    ns_per_accel: f64,
    ns_per_accel_native: Option<f64>,
}

fn per_sense(values: PerSense<Option<f64>>) -> Value {
    let mut m = Map::new();
    for sense in Sense::BOTH {
        let v = values.get(sense).map_or(Value::Null, json::number);
        m.insert(sense.name().into(), v);
    }
    Value::Object(m)
}

impl Survey<'_> {
    fn fixed_names(&self) -> Vec<(String, f64)> {
        self.kernels
            .params
            .iter()
            .zip(&self.fixed)
            .enumerate()
            .filter(|(k, _)| *k != self.vary.index)
            .map(|(_, (n, &v))| (n.clone(), v))
            .collect()
    }

    fn to_json(&self) -> Value {
        let mut root = Map::new();
        root.insert("metric".into(), self.kernels.name.clone().into());
        root.insert("file".into(), self.file.clone().into());
        let mut vary = Map::new();
        vary.insert("param".into(), self.vary.name.clone().into());
        vary.insert("values".into(), json::vector(&self.vary.values));
        root.insert("vary".into(), Value::Object(vary));
        let fixed: Map<String, Value> = self
            .fixed_names()
            .into_iter()
            .map(|(n, v)| (n, json::number(v)))
            .collect();
        root.insert("params".into(), Value::Object(fixed));
        let mut search = Map::new();
        search.insert("coordinate".into(), self.kernels.coords[1].clone().into());
        search.insert("low".into(), json::number(self.search.low));
        search.insert("high".into(), json::number(self.search.high));
        search.insert(
            "plane".into(),
            format!("{} = pi/2", self.kernels.coords[2]).into(),
        );
        root.insert("search".into(), Value::Object(search));
        root.insert(
            "radius".into(),
            self.search.radius.map_or(Value::Null, json::number),
        );
        let rows: Vec<Value> = self
            .vary
            .values
            .iter()
            .zip(&self.rows)
            .map(|(&value, a)| {
                let mut row = Map::new();
                row.insert("value".into(), json::number(value));
                row.insert(
                    "horizon".into(),
                    a.horizon.map_or(Value::Null, json::number),
                );
                row.insert("searched_from".into(), json::number(a.range.0));
                // +1 when prograde orbits turn towards increasing azimuth, -1 otherwise.
                row.insert("prograde_sign".into(), json::number(a.dragging));
                row.insert("isco".into(), per_sense(isco_field(a, |o| o.radius)));
                row.insert("photon_orbit".into(), per_sense(a.photon_orbit));
                row.insert("omega".into(), a.omega.map_or(Value::Null, per_sense));
                row.insert(
                    "omega_at_isco".into(),
                    per_sense(isco_field(a, |o| o.omega)),
                );
                row.insert(
                    "energy_at_isco".into(),
                    per_sense(isco_field(a, |o| o.energy)),
                );
                row.insert(
                    "angular_momentum_at_isco".into(),
                    per_sense(isco_field(a, |o| o.angular_momentum)),
                );
                Value::Object(row)
            })
            .collect();
        root.insert("rows".into(), Value::Array(rows));
        let mut ops: Map<String, Value> = KernelKind::ALL
            .iter()
            .map(|&k| {
                (
                    k.name().to_string(),
                    json::op_counts(&self.kernels.program(k).op_counts()),
                )
            })
            .collect();
        ops.insert(
            "equatorial_derivatives".into(),
            json::op_counts(&self.equatorial.op_counts()),
        );
        root.insert("ops".into(), Value::Object(ops));
        root.insert("ns_per_accel".into(), json::number(self.ns_per_accel));
        root.insert(
            "ns_per_accel_native".into(),
            self.ns_per_accel_native.map_or(Value::Null, json::number),
        );
        Value::Object(root)
    }

    fn to_text(&self) -> String {
        let ks = self.kernels;
        let c = &ks.coords;
        let mut out = String::new();
        let fixed: Vec<String> = self
            .fixed_names()
            .iter()
            .map(|(n, v)| format!("{n} = {}", report::number(*v, DIGITS)))
            .collect();
        let _ = writeln!(
            out,
            "{}: circular orbits in the plane {} = π/2 as {} varies{}",
            ks.name,
            report::coordinate_label(&c[2]),
            self.vary.name,
            if fixed.is_empty() {
                String::new()
            } else {
                format!(" ({})", fixed.join(", "))
            }
        );
        let _ = writeln!(
            out,
            "  searched {} from the outer horizon (or {}) to {}; pro = prograde, retro = retrograde",
            c[1],
            report::number(self.search.low, 6),
            report::number(self.search.high, 6)
        );
        let omega_header = self
            .search
            .radius
            .map(|r| format!("at {} = {}", c[1], report::number(r, 6)));
        let mut header: Vec<String> = vec![
            self.vary.name.clone(),
            "horizon".into(),
            "ISCO pro".into(),
            "ISCO retro".into(),
            "photon pro".into(),
            "photon retro".into(),
            "E(ISCO) pro".into(),
            "E(ISCO) retro".into(),
        ];
        if omega_header.is_some() {
            header.push("Ω pro".into());
            header.push("Ω retro".into());
        }
        let cell = |v: Option<f64>| v.map_or("-".to_string(), |v| report::number(v, DIGITS));
        let rows: Vec<Vec<String>> = self
            .vary
            .values
            .iter()
            .zip(&self.rows)
            .map(|(&value, a)| {
                let isco = isco_field(a, |o| o.radius);
                let energy = isco_field(a, |o| o.energy);
                let mut row = vec![
                    report::number(value, DIGITS),
                    cell(a.horizon),
                    cell(isco.prograde),
                    cell(isco.retrograde),
                    cell(a.photon_orbit.prograde),
                    cell(a.photon_orbit.retrograde),
                    cell(energy.prograde),
                    cell(energy.retrograde),
                ];
                if let Some(w) = a.omega {
                    row.push(cell(w.prograde));
                    row.push(cell(w.retrograde));
                }
                row
            })
            .collect();
        let header_refs: Vec<&str> = header.iter().map(String::as_str).collect();
        out.push('\n');
        out.push_str(&report::table(&header_refs, &rows, 2));
        if let Some(h) = omega_header {
            let _ = writeln!(out, "  Ω = dφ/dt of the circular orbit {h}");
        }
        out.push_str("  - : none in the range searched\n\n");
        let accel = ks.program(KernelKind::Accel).op_counts();
        let _ = writeln!(
            out,
            "  kernels: accel {}, equatorial derivatives {}",
            accel,
            self.equatorial.op_counts()
        );
        let _ = writeln!(
            out,
            "  accel on the tape: {} ns per call{}",
            report::number(self.ns_per_accel, 3),
            self.ns_per_accel_native.map_or(String::new(), |ns| format!(
                "; as native code: {} ns",
                report::number(ns, 3)
            ))
        );
        out
    }

    fn figure(&self) -> Figure {
        let c = &self.kernels.coords;
        let line =
            |label: &str, color: [u8; 3], dashed: bool, pick: &dyn Fn(&Analysis) -> Option<f64>| {
                Series {
                    label: label.to_string(),
                    points: self
                        .vary
                        .values
                        .iter()
                        .zip(&self.rows)
                        .map(|(&v, a)| (v, pick(a).unwrap_or(f64::NAN)))
                        .collect(),
                    color,
                    dashed,
                }
            };
        let series = vec![
            line("ISCO prograde", [31, 119, 180], false, &|a| {
                a.isco.prograde.map(|o| o.radius)
            }),
            line("ISCO retrograde", [214, 39, 40], false, &|a| {
                a.isco.retrograde.map(|o| o.radius)
            }),
            line("photon orbit prograde", [31, 119, 180], true, &|a| {
                a.photon_orbit.prograde
            }),
            line("photon orbit retrograde", [214, 39, 40], true, &|a| {
                a.photon_orbit.retrograde
            }),
            line("outer horizon", [60, 60, 60], true, &|a| a.horizon),
        ];
        Figure {
            title: format!(
                "{}: circular orbits in the plane {} = π/2",
                self.kernels.name,
                report::coordinate_label(&c[2])
            ),
            x_label: self.vary.name.clone(),
            y_label: c[1].clone(),
            series,
            circles: Vec::new(),
            equal_aspect: false,
        }
    }
}

/// One quantity of the ISCO of each sense.
fn isco_field(a: &Analysis, f: impl Fn(&crate::survey::Orbit) -> f64) -> PerSense<Option<f64>> {
    PerSense::from_fn(|sense| a.isco.get(sense).as_ref().map(&f))
}
