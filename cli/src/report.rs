//! Plain-text pieces of the human-readable reports: numbers, symbol names, tables.

use std::fmt::Write;
use std::time::Duration;

use geokern_symbolic::kernels::KernelSet;
use geokern_symbolic::program::{Instr, KernelKind, KernelProgram};
use num_traits::Zero;

/// A number with `digits` significant digits, fixed-point when that is short and scientific
/// otherwise, without trailing zeros (`0`, `1.5`, `-0.0012`, `6.674e-11`).
pub fn number(v: f64, digits: usize) -> String {
    if v == 0.0 {
        return "0".to_string();
    }
    if !v.is_finite() {
        return format!("{v}");
    }
    let digits = digits.max(1);
    let exponent = v.abs().log10().floor() as i32;
    if (-4..digits as i32).contains(&exponent) {
        let decimals = (digits as i32 - 1 - exponent).max(0) as usize;
        trim_zeros(format!("{v:.decimals$}"))
    } else {
        let s = format!("{v:.prec$e}", prec = digits - 1);
        match s.split_once('e') {
            Some((mantissa, exp)) => format!("{}e{exp}", trim_zeros(mantissa.to_string())),
            None => s,
        }
    }
}

fn trim_zeros(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A coordinate name as written in a symbol: Greek letters spelled out become the letter
/// (`theta` → `θ`), other names stay as they are.
pub fn coordinate_label(name: &str) -> String {
    const GREEK: [(&str, &str); 24] = [
        ("alpha", "α"),
        ("beta", "β"),
        ("gamma", "γ"),
        ("delta", "δ"),
        ("epsilon", "ε"),
        ("zeta", "ζ"),
        ("eta", "η"),
        ("theta", "θ"),
        ("iota", "ι"),
        ("kappa", "κ"),
        ("lambda", "λ"),
        ("mu", "μ"),
        ("nu", "ν"),
        ("xi", "ξ"),
        ("omicron", "ο"),
        ("pi", "π"),
        ("rho", "ρ"),
        ("sigma", "σ"),
        ("tau", "τ"),
        ("upsilon", "υ"),
        ("phi", "φ"),
        ("chi", "χ"),
        ("psi", "ψ"),
        ("omega", "ω"),
    ];
    GREEK
        .iter()
        .find(|(spelled, _)| *spelled == name)
        .map_or_else(|| name.to_string(), |(_, letter)| letter.to_string())
}

/// The name of Γ^a_bc: `Γ^r_tt` when every coordinate label is one letter, else
/// `Γ^{rho2}_{x,y}`.
pub fn christoffel_label(coords: &[String], a: usize, b: usize, c: usize) -> String {
    let labels: Vec<String> = coords.iter().map(|n| coordinate_label(n)).collect();
    let short = labels.iter().all(|l| l.chars().count() == 1);
    if short {
        format!("Γ^{}_{}{}", labels[a], labels[b], labels[c])
    } else {
        format!("Γ^{{{}}}_{{{},{}}}", labels[a], labels[b], labels[c])
    }
}

/// The Christoffel symbols that are not identically zero, as (a, b, c) with b ≤ c (the
/// symbols are symmetric in b and c), in index order.
pub fn nonzero_christoffel(kernels: &KernelSet) -> Vec<(usize, usize, usize)> {
    let program = kernels.program(KernelKind::Christoffel);
    let n = kernels.dim();
    let mut out = Vec::new();
    for a in 0..n {
        for b in 0..n {
            for c in b..n {
                if !output_is_zero(program, (a * n + b) * n + c) {
                    out.push((a, b, c));
                }
            }
        }
    }
    out
}

/// The metric components g_ij (i ≤ j) that are not identically zero.
pub fn nonzero_metric(kernels: &KernelSet) -> Vec<(usize, usize)> {
    let program = kernels.program(KernelKind::Metric);
    let n = kernels.dim();
    (0..n)
        .flat_map(|i| (i..n).map(move |j| (i, j)))
        .filter(|&(i, j)| !output_is_zero(program, i * n + j))
        .collect()
}

/// Whether output `k` of `program` is the exact constant zero. The engine simplifies
/// exactly, so an identically vanishing entry is lowered to that constant.
fn output_is_zero(program: &KernelProgram, k: usize) -> bool {
    program
        .outputs
        .get(k)
        .and_then(|&v| program.instrs.get(v as usize))
        .is_some_and(|ins| matches!(ins, Instr::Const(q) if q.is_zero()))
}

/// A duration in the unit that reads best (`850 µs`, `12.3 ms`, `1.25 s`).
pub fn duration(d: Duration) -> String {
    let s = d.as_secs_f64();
    if s < 1e-3 {
        format!("{} µs", number(s * 1e6, 3))
    } else if s < 1.0 {
        format!("{} ms", number(s * 1e3, 3))
    } else {
        format!("{} s", number(s, 3))
    }
}

/// A table with a header row; columns after the first are right-aligned.
pub fn table(header: &[&str], rows: &[Vec<String>], indent: usize) -> String {
    let columns = header.len();
    let mut width = vec![0; columns];
    for row in std::iter::once(header.iter().map(|h| h.to_string()).collect::<Vec<_>>())
        .chain(rows.iter().cloned())
    {
        for (w, cell) in width.iter_mut().zip(&row) {
            *w = (*w).max(cell.chars().count());
        }
    }
    let mut out = String::new();
    let line = |cells: &[String], out: &mut String| {
        out.push_str(&" ".repeat(indent));
        for (k, cell) in cells.iter().enumerate().take(columns) {
            let pad = width[k] - cell.chars().count();
            if k == 0 {
                out.push_str(cell);
                out.push_str(&" ".repeat(pad));
            } else {
                out.push_str("  ");
                out.push_str(&" ".repeat(pad));
                out.push_str(cell);
            }
        }
        let trimmed = out.trim_end().len();
        out.truncate(trimmed);
        out.push('\n');
    };
    line(
        &header.iter().map(|h| h.to_string()).collect::<Vec<_>>(),
        &mut out,
    );
    for row in rows {
        line(row, &mut out);
    }
    out
}

/// The op-count table of every kernel.
pub fn op_table(kernels: &KernelSet, indent: usize) -> String {
    let rows: Vec<Vec<String>> = KernelKind::ALL
        .iter()
        .chain(KernelKind::CURVATURE.iter())
        .filter(|&&k| kernels.try_program(k).is_some())
        .map(|&k| {
            let c = kernels.program(k).op_counts();
            vec![
                k.name().to_string(),
                c.add.to_string(),
                c.mul.to_string(),
                c.div.to_string(),
                c.call.to_string(),
                c.total().to_string(),
            ]
        })
        .collect();
    table(
        &["kernel", "add", "mul", "div", "call", "total"],
        &rows,
        indent,
    )
}

/// A vector as `[a, b, c]` with `digits` significant digits.
pub fn vector(values: &[f64], digits: usize) -> String {
    let items: Vec<String> = values.iter().map(|&v| number(v, digits)).collect();
    format!("[{}]", items.join(", "))
}

/// Names joined by commas, or `none`.
pub fn list_or_none(names: &[String]) -> String {
    if names.is_empty() {
        "none".to_string()
    } else {
        names.join(", ")
    }
}

/// Words wrapped to `width` columns, every line after `indent` spaces.
pub fn wrap(items: &[String], width: usize, indent: usize) -> String {
    let mut out = String::new();
    let mut line = String::new();
    for item in items {
        if !line.is_empty() && indent + line.chars().count() + 2 + item.chars().count() > width {
            let _ = writeln!(out, "{}{}", " ".repeat(indent), line);
            line.clear();
        }
        if !line.is_empty() {
            line.push_str("  ");
        }
        line.push_str(item);
    }
    if !line.is_empty() {
        let _ = writeln!(out, "{}{}", " ".repeat(indent), line);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_read_well() {
        let cases: &[(f64, usize, &str)] = &[
            (0.0, 6, "0"),
            (1.5, 6, "1.5"),
            (-0.0012, 6, "-0.0012"),
            (6.674e-11, 4, "6.674e-11"),
            (123456.0, 6, "123456"),
            (1234567.0, 6, "1.23457e6"),
            (2.0 / 3.0, 4, "0.6667"),
            (f64::INFINITY, 4, "inf"),
        ];
        for (v, digits, want) in cases {
            assert_eq!(number(*v, *digits), *want, "{v}");
        }
    }

    #[test]
    fn symbol_names() {
        let bl: Vec<String> = ["t", "r", "theta", "phi"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(christoffel_label(&bl, 1, 0, 0), "Γ^r_tt");
        assert_eq!(christoffel_label(&bl, 2, 1, 2), "Γ^θ_rθ");
        let odd: Vec<String> = ["x", "rho2"].iter().map(|s| s.to_string()).collect();
        assert_eq!(christoffel_label(&odd, 0, 1, 1), "Γ^{x}_{rho2,rho2}");
    }

    #[test]
    fn tables_align() {
        let t = table(
            &["k", "n"],
            &[
                vec!["metric".into(), "7".into()],
                vec!["a".into(), "123".into()],
            ],
            2,
        );
        assert_eq!(t, "  k         n\n  metric    7\n  a       123\n");
    }
}
