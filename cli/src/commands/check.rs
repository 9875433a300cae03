//! `geokern check FILE`: parse and derive, then describe what was derived.

use std::fmt::Write;

use geokern_symbolic::program::KernelKind;
use serde_json::{json, Map, Value};

use crate::args::CheckArgs;
use crate::error::CliError;
use crate::source::Loaded;
use crate::{json, report, source};

/// Runs `check`.
pub fn run(args: &CheckArgs) -> Result<String, CliError> {
    let loaded = source::load_source_proving(&args.source)?;
    Ok(if args.format.json {
        json::to_text(&to_json(&loaded))
    } else {
        to_text(&loaded)
    })
}

fn metric_label(coords: &[String], i: usize, j: usize) -> String {
    let (a, b) = (
        report::coordinate_label(&coords[i]),
        report::coordinate_label(&coords[j]),
    );
    if a.chars().count() == 1 && b.chars().count() == 1 {
        format!("g_{a}{b}")
    } else {
        format!("g_{{{a},{b}}}")
    }
}

fn to_json(loaded: &Loaded) -> Value {
    let ks = &loaded.kernels;
    let symbols: Vec<Value> = report::nonzero_christoffel(ks)
        .into_iter()
        .map(|(a, b, c)| {
            json!({ "symbol": report::christoffel_label(&ks.coords, a, b, c), "index": [a, b, c] })
        })
        .collect();
    let metric: Vec<Value> = report::nonzero_metric(ks)
        .into_iter()
        .map(|(i, j)| json!([i, j]))
        .collect();
    let ops: Map<String, Value> = KernelKind::ALL
        .iter()
        .chain(KernelKind::CURVATURE.iter())
        .filter_map(|&k| ks.try_program(k).map(|p| (k, p)))
        .map(|(k, p)| (k.name().to_string(), json::op_counts(&p.op_counts())))
        .collect();
    let cyclic: Vec<&str> = ks.cyclic.iter().map(|&k| ks.coords[k].as_str()).collect();
    let mut out = json!({
        "file": loaded.file_name,
        "name": ks.name,
        "metrics_in_file": loaded.declared,
        "dim": ks.dim(),
        "coords": ks.coords,
        "params": ks.params,
        "metric_nonzero": metric,
        "christoffel_nonzero": symbols,
        "cyclic": cyclic,
        "conserved": ks.conserved_names(),
        "invariants": ks.invariant_names,
        "ops": ops,
        "parse_ms": loaded.parse_time.as_secs_f64() * 1e3,
        "derivation_ms": loaded.derivation_time.as_secs_f64() * 1e3,
    });
    if let (Some(scalar), Value::Object(map)) = (ks.ricci_scalar_zero, &mut out) {
        let ricci: Vec<Value> = ks
            .ricci_zeros
            .iter()
            .map(|&((a, b), status)| {
                json!({
                    "component": ricci_label(&ks.coords, a, b),
                    "index": [a, b],
                    "status": status.to_string(),
                })
            })
            .collect();
        map.insert(
            "curvature".to_string(),
            json!({
                "ricci": ricci,
                "ricci_scalar": scalar.to_string(),
                "vacuum": is_vacuum(ks),
            }),
        );
    }
    out
}

fn ricci_label(coords: &[String], a: usize, b: usize) -> String {
    metric_label(coords, a, b).replacen('g', "R", 1)
}

/// Every Ricci component vanishes (proved, or at every sample point).
fn is_vacuum(ks: &geokern_symbolic::kernels::KernelSet) -> bool {
    use geokern_symbolic::geometry::ZeroStatus;
    ks.ricci_zeros
        .iter()
        .all(|(_, s)| *s != ZeroStatus::Nonzero)
}

/// The `--curvature` part of the text report: each Ricci component's status.
fn curvature_text(ks: &geokern_symbolic::kernels::KernelSet, out: &mut String) {
    let Some(scalar) = ks.ricci_scalar_zero else {
        return;
    };
    let _ = writeln!(out, "  curvature     Ricci tensor, component by component:");
    for &((a, b), status) in &ks.ricci_zeros {
        let _ = writeln!(
            out,
            "                {:<12} {status}",
            ricci_label(&ks.coords, a, b)
        );
    }
    let _ = writeln!(out, "                {:<12} {scalar}", "R");
    let verdict = if is_vacuum(ks) {
        "every Ricci component vanishes: a vacuum solution"
    } else {
        "not a vacuum solution"
    };
    let _ = writeln!(out, "                {verdict}");
}

fn to_text(loaded: &Loaded) -> String {
    let ks = &loaded.kernels;
    let n = ks.dim();
    let mut out = String::new();
    let title = if ks.docs.is_empty() {
        String::new()
    } else {
        format!(": {}", ks.docs.join(" "))
    };
    let _ = writeln!(out, "{}{title}", ks.name);
    let _ = writeln!(out, "  file          {}", loaded.file_name);
    let _ = writeln!(out, "  dimension     {n} ({})", ks.coords.join(", "));
    let _ = writeln!(out, "  parameters    {}", report::list_or_none(&ks.params));
    let metric: Vec<String> = report::nonzero_metric(ks)
        .into_iter()
        .map(|(i, j)| metric_label(&ks.coords, i, j))
        .collect();
    let _ = writeln!(
        out,
        "  metric        {} nonzero components (i ≤ j):",
        metric.len()
    );
    out.push_str(&report::wrap(&metric, 96, 16));
    let symbols: Vec<String> = report::nonzero_christoffel(ks)
        .into_iter()
        .map(|(a, b, c)| report::christoffel_label(&ks.coords, a, b, c))
        .collect();
    let _ = writeln!(
        out,
        "  Christoffel   {} nonzero symbols Γ^a_bc (b ≤ c) of {} independent:",
        symbols.len(),
        n * n * (n + 1) / 2
    );
    out.push_str(&report::wrap(&symbols, 96, 16));
    let cyclic: Vec<String> = ks.cyclic.iter().map(|&k| ks.coords[k].clone()).collect();
    if cyclic.is_empty() {
        let _ = writeln!(out, "  cyclic        none");
    } else {
        let _ = writeln!(
            out,
            "  cyclic        {} (conserved {})",
            cyclic.join(", "),
            ks.conserved_names().join(", ")
        );
    }
    let _ = writeln!(
        out,
        "  invariants    {}",
        report::list_or_none(&ks.invariant_names)
    );
    curvature_text(ks, &mut out);
    let _ = writeln!(out, "  op counts after common-subexpression elimination:");
    out.push_str(&report::op_table(ks, 4));
    let _ = writeln!(
        out,
        "  derived in {} (parsed in {})",
        report::duration(loaded.derivation_time),
        report::duration(loaded.parse_time)
    );
    out
}
