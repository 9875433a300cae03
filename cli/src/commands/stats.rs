//! `geokern stats FILE`: the op counts of every kernel.

use geokern_symbolic::program::KernelKind;
use serde_json::{Map, Value};

use crate::args::StatsArgs;
use crate::error::CliError;
use crate::{json, report, source};

/// Runs `stats`.
pub fn run(args: &StatsArgs) -> Result<String, CliError> {
    let loaded = source::load_source(&args.source)?;
    let ks = &loaded.kernels;
    if args.format.json {
        let object: Map<String, Value> = KernelKind::ALL
            .iter()
            .chain(KernelKind::CURVATURE.iter())
            .filter_map(|&k| ks.try_program(k).map(|p| (k, p)))
            .map(|(k, p)| (k.name().to_string(), json::op_counts(&p.op_counts())))
            .collect();
        return Ok(json::to_text(&Value::Object(object)));
    }
    Ok(format!(
        "{} ({} dimensions): op counts after common-subexpression elimination\n{}",
        ks.name,
        ks.dim(),
        report::op_table(ks, 2)
    ))
}
