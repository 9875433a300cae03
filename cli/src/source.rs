//! Reading a metric file and deriving one of its metrics.
//!
//! The path `-` reads standard input. Errors name the file as the user gave it, and
//! declaration errors come out as `FILE:LINE:COL: message`, one line per problem.

use std::io::Read;
use std::path::Path;
use std::time::{Duration, Instant};

use geokern_symbolic::kernels::KernelSet;
use geokern_symbolic::parse::{self, ast};
use geokern_symbolic::{model, parse::Diagnostics};

use crate::error::CliError;

/// A derived metric, with what reports need to say about it.
#[derive(Clone, Debug)]
pub struct Loaded {
    /// The file name as given (`<stdin>` for `-`).
    pub file_name: String,
    /// Every kernel of the chosen metric.
    pub kernels: KernelSet,
    /// Time spent parsing the file.
    pub parse_time: Duration,
    /// Time spent deriving and lowering the kernels (the engine's `compile`).
    pub derivation_time: Duration,
    /// Names of all metrics the file declares, in source order.
    pub declared: Vec<String>,
}

/// Reads `path` (or standard input for `-`), parses it, picks the metric named `metric` (or
/// the only one) and derives its kernels.
pub fn load(path: &Path, metric: Option<&str>) -> Result<Loaded, CliError> {
    let (name, bytes) = read(path)?;
    load_bytes(&name, &bytes, metric)
}

/// [`load`] for a command's file arguments, honouring `--curvature`.
pub fn load_source(source: &crate::args::MetricFile) -> Result<Loaded, CliError> {
    let (name, bytes) = read(&source.file)?;
    load_bytes_with(
        &name,
        &bytes,
        source.metric.as_deref(),
        source.curvature,
        false,
    )
}

/// [`load_source`], also proving vanishing Ricci components exactly when `--curvature` is on
/// (what `check` reports).
pub fn load_source_proving(source: &crate::args::MetricFile) -> Result<Loaded, CliError> {
    let (name, bytes) = read(&source.file)?;
    load_bytes_with(
        &name,
        &bytes,
        source.metric.as_deref(),
        source.curvature,
        true,
    )
}

/// Reads a file's bytes, naming it as the user did.
pub fn read(path: &Path) -> Result<(String, Vec<u8>), CliError> {
    if path.as_os_str() == "-" {
        let mut bytes = Vec::new();
        std::io::stdin()
            .read_to_end(&mut bytes)
            .map_err(|source| CliError::Read {
                path: path.to_path_buf(),
                source,
            })?;
        return Ok(("<stdin>".to_string(), bytes));
    }
    if path.is_dir() {
        return Err(CliError::Read {
            path: path.to_path_buf(),
            source: std::io::Error::other("it is a directory, not a metric file"),
        });
    }
    let bytes = std::fs::read(path).map_err(|source| CliError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    Ok((path.display().to_string(), bytes))
}

/// Parses the text of a metric file named `name` (used in messages).
pub fn parse_bytes(name: &str, bytes: &[u8]) -> Result<ast::File, CliError> {
    let text = std::str::from_utf8(bytes).map_err(|e| CliError::NotText {
        name: name.to_string(),
        offset: e.valid_up_to(),
    })?;
    parse::parse_str(text).map_err(|d| declaration_error(name, &d))
}

/// [`load`] on bytes already read.
pub fn load_bytes(name: &str, bytes: &[u8], metric: Option<&str>) -> Result<Loaded, CliError> {
    load_bytes_with(name, bytes, metric, false, false)
}

/// [`load_bytes`], also deriving curvature kernels when `curvature` is set.
pub fn load_bytes_with(
    name: &str,
    bytes: &[u8],
    metric: Option<&str>,
    curvature: bool,
    prove_zeros: bool,
) -> Result<Loaded, CliError> {
    let started = Instant::now();
    let file = parse_bytes(name, bytes)?;
    let parse_time = started.elapsed();
    let declared: Vec<String> = file.metrics.iter().map(|m| m.name.to_string()).collect();
    let decl = pick(name, &file, metric)?;
    let started = Instant::now();
    let options = model::CompileOptions {
        curvature,
        prove_zeros: curvature && prove_zeros,
    };
    let kernels = model::compile_with(decl, &options).map_err(|d| declaration_error(name, &d))?;
    let derivation_time = started.elapsed();
    Ok(Loaded {
        file_name: name.to_string(),
        kernels,
        parse_time,
        derivation_time,
        declared,
    })
}

fn declaration_error(name: &str, diagnostics: &Diagnostics) -> CliError {
    CliError::Declaration {
        rendered: diagnostics.render(name),
    }
}

/// The metric named `wanted`, or the only one when no name is given.
fn pick<'f>(
    name: &str,
    file: &'f ast::File,
    wanted: Option<&str>,
) -> Result<&'f ast::MetricDecl, CliError> {
    let names = || {
        file.metrics
            .iter()
            .map(|m| m.name.to_string())
            .collect::<Vec<_>>()
            .join(", ")
    };
    match (wanted, file.metrics.as_slice()) {
        (Some(w), _) => file.metric(w).ok_or_else(|| {
            CliError::usage(format!(
                "`{name}` declares no metric `{w}`; it declares {}",
                names()
            ))
        }),
        (None, [only]) => Ok(only),
        (None, []) => Err(CliError::usage(format!("`{name}` declares no metric"))),
        (None, _) => Err(CliError::usage(format!(
            "`{name}` declares several metrics ({}); choose one with --metric NAME",
            names()
        ))),
    }
}

/// Binds `--param NAME=VALUE` options to the metric's parameters, in declared order. Every
/// parameter must be given exactly once, and no other.
pub fn bind_params(kernels: &KernelSet, given: &[String]) -> Result<Vec<f64>, CliError> {
    let declared = &kernels.params;
    let listing = || {
        if declared.is_empty() {
            format!("{} has no parameters", kernels.name)
        } else {
            format!("{} has parameters {}", kernels.name, declared.join(", "))
        }
    };
    let mut values: Vec<Option<f64>> = vec![None; declared.len()];
    for item in given {
        let Some((key, value)) = item.split_once('=') else {
            return Err(CliError::usage(format!(
                "--param `{item}` is not of the form NAME=VALUE (as in --param m=1)"
            )));
        };
        let key = key.trim();
        let Some(k) = declared.iter().position(|p| p == key) else {
            return Err(CliError::usage(format!(
                "unknown parameter `{key}`; {}",
                listing()
            )));
        };
        let v = parse_number(value.trim()).ok_or_else(|| {
            CliError::usage(format!(
                "--param {key}: `{}` is not a finite number",
                value.trim()
            ))
        })?;
        if values[k].replace(v).is_some() {
            return Err(CliError::usage(format!("parameter `{key}` is given twice")));
        }
    }
    let missing: Vec<&str> = declared
        .iter()
        .zip(&values)
        .filter(|(_, v)| v.is_none())
        .map(|(p, _)| p.as_str())
        .collect();
    if !missing.is_empty() {
        let flags: Vec<String> = missing
            .iter()
            .map(|p| format!("--param {p}=VALUE"))
            .collect();
        return Err(CliError::usage(format!(
            "missing parameter{} {}: give {}",
            if missing.len() > 1 { "s" } else { "" },
            missing.join(", "),
            flags.join(" ")
        )));
    }
    Ok(values.into_iter().flatten().collect())
}

/// Parses a comma-separated vector given to option `flag` (such as `--x`), which must have
/// one entry per coordinate.
pub fn parse_vector(flag: &str, text: &str, coords: &[String]) -> Result<Vec<f64>, CliError> {
    let mut values = Vec::with_capacity(coords.len());
    for (i, item) in text.split(',').enumerate() {
        let item = item.trim();
        let v = parse_number(item).ok_or_else(|| {
            CliError::usage(format!(
                "{flag}: entry {} (`{item}`) is not a finite number",
                i + 1
            ))
        })?;
        values.push(v);
    }
    if values.len() != coords.len() {
        return Err(CliError::usage(format!(
            "{flag} has {} entries; the metric has {} coordinates ({})",
            values.len(),
            coords.len(),
            coords.join(", ")
        )));
    }
    Ok(values)
}

/// A finite number: a decimal literal, or a multiple or fraction of `pi` (`pi`, `-pi/2`,
/// `0.5*pi`, `3*pi/4`), since angles are often wanted exactly.
pub fn parse_number(text: &str) -> Option<f64> {
    let text = text.trim();
    let value = match text.parse::<f64>() {
        Ok(v) => v,
        Err(_) => parse_pi_multiple(text)?,
    };
    value.is_finite().then_some(value)
}

fn parse_pi_multiple(text: &str) -> Option<f64> {
    let lower = text.to_ascii_lowercase();
    let (sign, rest) = match lower.strip_prefix('-') {
        Some(r) => (-1.0, r),
        None => (1.0, lower.strip_prefix('+').unwrap_or(&lower)),
    };
    let (numerator, denominator) = match rest.split_once('/') {
        Some((n, d)) => (n, d.trim().parse::<f64>().ok()?),
        None => (rest, 1.0),
    };
    let factor = match numerator.trim().strip_suffix("pi")? {
        "" => 1.0,
        f => f.trim().strip_suffix('*')?.trim().parse::<f64>().ok()?,
    };
    Some(sign * factor * std::f64::consts::PI / denominator)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    #[test]
    fn numbers_and_multiples_of_pi() {
        let cases: &[(&str, Option<f64>)] = &[
            ("1.5", Some(1.5)),
            ("-2e-3", Some(-2e-3)),
            ("pi", Some(PI)),
            ("PI/2", Some(PI / 2.0)),
            ("-pi/4", Some(-PI / 4.0)),
            ("3*pi/4", Some(3.0 * PI / 4.0)),
            ("0.5 * pi", Some(0.5 * PI)),
            ("pie", None),
            ("2pi", None),
            ("pi/0", None),
            ("inf", None),
            ("NaN", None),
            ("", None),
        ];
        for (text, want) in cases {
            assert_eq!(parse_number(text), *want, "{text}");
        }
    }
}
