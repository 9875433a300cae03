//! `geokern eval FILE --x .. [--u ..] [--p ..]`: every kernel at one point.

use std::fmt::Write;

use geokern_symbolic::program::{InputArray, KernelKind};
use serde_json::{Map, Value};

use crate::args::EvalArgs;
use crate::error::CliError;
use crate::tape::Inputs;
use crate::tape_metric::{Evaluator, TapeSet};
use crate::{json, report, source};

/// Significant digits in the text report (JSON carries every digit).
const DIGITS: usize = 10;

/// The values of one evaluation.
struct Values {
    metric: Vec<f64>,
    inverse: Vec<f64>,
    christoffel: Vec<f64>,
    /// With `--u`.
    velocity: Option<WithVelocity>,
    /// dx/dλ, dp/dλ (with `--p`).
    hamilton: Option<(Vec<f64>, Vec<f64>)>,
    /// The curvature kernels' values (with `--curvature` or `options: [curvature]`).
    curvature: Vec<(KernelKind, Vec<f64>)>,
}

/// The kernels that need a velocity.
struct WithVelocity {
    accel: Vec<f64>,
    norm: f64,
    conserved: Vec<f64>,
    invariants: Vec<f64>,
}

/// Runs `eval`.
pub fn run(args: &EvalArgs) -> Result<String, CliError> {
    let loaded = source::load_source(&args.source)?;
    let ks = &loaded.kernels;
    let params = source::bind_params(ks, &args.params)?;
    let x = source::parse_vector("--x", &args.x, &ks.coords)?;
    let u = args
        .u
        .as_deref()
        .map(|u| source::parse_vector("--u", u, &ks.coords))
        .transpose()?;
    let p = args
        .p
        .as_deref()
        .map(|p| source::parse_vector("--p", p, &ks.coords))
        .transpose()?;
    // Each kernel runs once here: compiling it would cost more than interpreting it.
    let evaluator = match args.evaluator.evaluator {
        Evaluator::Auto => Evaluator::Tape,
        chosen => chosen,
    };
    let set = TapeSet::with_evaluator(ks, &params, evaluator)?;
    let at = Inputs {
        x: &x,
        ..Inputs::default()
    };
    let values = Values {
        metric: set.eval(KernelKind::Metric, &at),
        inverse: set.eval(KernelKind::InverseMetric, &at),
        christoffel: set.eval(KernelKind::Christoffel, &at),
        velocity: u.as_deref().map(|u| {
            let with_u = Inputs {
                x: &x,
                u,
                ..Inputs::default()
            };
            let norm = set.eval(KernelKind::Norm, &with_u);
            WithVelocity {
                accel: set.eval(KernelKind::Accel, &with_u),
                norm: norm.first().copied().unwrap_or(f64::NAN),
                conserved: set.eval(KernelKind::Conserved, &with_u),
                invariants: set.eval(KernelKind::Invariants, &with_u),
            }
        }),
        hamilton: p.as_deref().map(|p| {
            let both = set.eval(
                KernelKind::Hamilton,
                &Inputs {
                    x: &x,
                    p,
                    ..Inputs::default()
                },
            );
            let (dx, dp) = both.split_at(both.len() / 2);
            (dx.to_vec(), dp.to_vec())
        }),
        curvature: Vec::new(),
    };
    let mut values = values;
    for kind in KernelKind::CURVATURE {
        if kind == KernelKind::Deviation {
            continue;
        }
        if let Some(program) = ks.try_program(kind) {
            let mut out = Vec::new();
            program.eval_f64(
                &|arr| match arr {
                    InputArray::Params => params.clone(),
                    InputArray::X => x.clone(),
                    _ => Vec::new(),
                },
                &mut out,
            );
            values.curvature.push((kind, out));
        }
    }
    let point = Point {
        set: &set,
        x: &x,
        u: u.as_deref(),
        p: p.as_deref(),
    };
    Ok(if args.format.json {
        json::to_text(&to_json(&point, &values))
    } else {
        to_text(&point, &values)
    })
}

struct Point<'a> {
    set: &'a TapeSet,
    x: &'a [f64],
    u: Option<&'a [f64]>,
    p: Option<&'a [f64]>,
}

fn to_json(pt: &Point<'_>, v: &Values) -> Value {
    let n = pt.set.dim();
    let mut m = Map::new();
    m.insert("name".into(), pt.set.name.clone().into());
    m.insert("coords".into(), pt.set.coords.clone().into());
    m.insert(
        "params".into(),
        json::named(&pt.set.param_names, &pt.set.params),
    );
    m.insert("x".into(), json::vector(pt.x));
    m.insert("metric".into(), json::nested(&v.metric, &[n, n]));
    m.insert("inverse".into(), json::nested(&v.inverse, &[n, n]));
    m.insert(
        "christoffel".into(),
        json::nested(&v.christoffel, &[n, n, n]),
    );
    if let (
        Some(u),
        Some(WithVelocity {
            accel,
            norm,
            conserved,
            invariants,
        }),
    ) = (pt.u, &v.velocity)
    {
        m.insert("u".into(), json::vector(u));
        m.insert("accel".into(), json::vector(accel));
        m.insert("norm".into(), json::number(*norm));
        m.insert(
            "conserved".into(),
            json::named(&pt.set.conserved, conserved),
        );
        m.insert(
            "invariants".into(),
            json::named(&pt.set.invariants, invariants),
        );
    }
    if let (Some(p), Some((dx, dp))) = (pt.p, &v.hamilton) {
        m.insert("p".into(), json::vector(p));
        let mut h = Map::new();
        h.insert("dx".into(), json::vector(dx));
        h.insert("dp".into(), json::vector(dp));
        m.insert("hamilton".into(), Value::Object(h));
    }
    for (kind, values) in &v.curvature {
        let shape: Vec<usize> = match kind {
            KernelKind::Riemann => vec![n, n, n, n],
            KernelKind::Ricci | KernelKind::Einstein => vec![n, n],
            _ => vec![],
        };
        let value = if shape.is_empty() {
            json::number(values.first().copied().unwrap_or(f64::NAN))
        } else {
            json::nested(values, &shape)
        };
        m.insert(kind.name().into(), value);
    }
    Value::Object(m)
}

fn matrix(out: &mut String, flat: &[f64], n: usize) {
    let cells: Vec<String> = flat.iter().map(|&v| report::number(v, DIGITS)).collect();
    let width = cells.iter().map(|c| c.chars().count()).max().unwrap_or(1);
    for row in cells.chunks(n.max(1)) {
        let padded: Vec<String> = row.iter().map(|c| format!("{c:>width$}")).collect();
        let _ = writeln!(out, "    [{}]", padded.join("  "));
    }
}

fn to_text(pt: &Point<'_>, v: &Values) -> String {
    let set = pt.set;
    let n = set.dim();
    let mut out = String::new();
    let params: Vec<String> = set
        .param_names
        .iter()
        .zip(&set.params)
        .map(|(name, value)| format!("{name} = {}", report::number(*value, DIGITS)))
        .collect();
    let with = if params.is_empty() {
        String::new()
    } else {
        format!(" ({})", params.join(", "))
    };
    let _ = writeln!(
        out,
        "{} at x = {}{with}",
        set.name,
        report::vector(pt.x, DIGITS)
    );
    let _ = writeln!(out, "  metric g_ab");
    matrix(&mut out, &v.metric, n);
    let _ = writeln!(out, "  inverse metric g^ab");
    matrix(&mut out, &v.inverse, n);
    let _ = writeln!(out, "  Christoffel symbols Γ^a_bc, nonzero here (b ≤ c)");
    let mut any = false;
    for a in 0..n {
        for b in 0..n {
            for c in b..n {
                let value = v.christoffel[(a * n + b) * n + c];
                if value != 0.0 {
                    any = true;
                    let label = report::christoffel_label(&set.coords, a, b, c);
                    let _ = writeln!(out, "    {label} = {}", report::number(value, DIGITS));
                }
            }
        }
    }
    if !any {
        let _ = writeln!(out, "    none");
    }
    if let (
        Some(u),
        Some(WithVelocity {
            accel,
            norm,
            conserved,
            invariants,
        }),
    ) = (pt.u, &v.velocity)
    {
        let _ = writeln!(out, "  with u = {}", report::vector(u, DIGITS));
        let _ = writeln!(out, "    acceleration  {}", report::vector(accel, DIGITS));
        let _ = writeln!(out, "    norm g(u,u)   {}", report::number(*norm, DIGITS));
        for (name, value) in set
            .conserved
            .iter()
            .zip(conserved)
            .chain(set.invariants.iter().zip(invariants))
        {
            let _ = writeln!(out, "    {name:<13} {}", report::number(*value, DIGITS));
        }
    }
    if let (Some(p), Some((dx, dp))) = (pt.p, &v.hamilton) {
        let _ = writeln!(out, "  with p = {}", report::vector(p, DIGITS));
        let _ = writeln!(out, "    dx/dλ  {}", report::vector(dx, DIGITS));
        let _ = writeln!(out, "    dp/dλ  {}", report::vector(dp, DIGITS));
    }
    for (kind, values) in &v.curvature {
        match kind {
            KernelKind::Ricci => {
                let _ = writeln!(out, "  Ricci tensor R_ab");
                matrix(&mut out, values, n);
            }
            KernelKind::RicciScalar => {
                let r = values.first().copied().unwrap_or(f64::NAN);
                let _ = writeln!(out, "  Ricci scalar R  {}", report::number(r, DIGITS));
            }
            KernelKind::Kretschmann => {
                let k = values.first().copied().unwrap_or(f64::NAN);
                let _ = writeln!(
                    out,
                    "  Kretschmann R_abcd R^abcd  {}",
                    report::number(k, DIGITS)
                );
            }
            _ => {}
        }
    }
    out
}
