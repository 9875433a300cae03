//! One module per command. Each returns the text for stdout (a report, or one JSON object),
//! so that printing, and the handling of a closed pipe, happen in one place.

pub mod check;
pub mod demo;
pub mod emit;
pub mod eval;
pub mod render;
pub mod stats;
pub mod survey;
pub mod trace;

use crate::args::Command;
use crate::error::CliError;

/// Runs one command, returning what it prints on stdout.
pub fn run(command: &Command) -> Result<String, CliError> {
    match command {
        Command::Check(a) => check::run(a),
        Command::Eval(a) => eval::run(a),
        Command::Trace(a) => trace::run(a),
        Command::Emit(a) => emit::run(a),
        Command::Stats(a) => stats::run(a),
        Command::Demo(a) => demo::run(a),
        Command::Render(a) => render::run(a),
        Command::Survey(a) => survey::run(a),
    }
}
