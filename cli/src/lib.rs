//! The `geokern` command-line tool: metric files in, kernels evaluated out.
//!
//! The tool reads `.gk` files with the same engine the `metric!` macro uses, derives every
//! kernel exactly, and evaluates the kernel programs either as [`native`] code (compiled with
//! Cranelift when the tool runs) or with a compact [`tape`] interpreter, so no Rust compiler
//! is needed. [`tape_metric::TapeMetric`] implements the runtime's
//! `MetricKernels`, so the runtime's integrators drive a metric read at run time exactly as
//! they drive one generated at compile time.
//!
//! ```
//! use geokern_cli::{source, tape::Inputs, tape_metric::TapeSet};
//! use geokern_symbolic::program::KernelKind;
//!
//! let text = b"struct Sphere { coords: [theta, phi], params: [rho],
//!     g[theta, theta] = rho.powi(2); g[phi, phi] = (rho * theta.sin()).powi(2); }";
//! let loaded = source::load_bytes("sphere.gk", text, None).unwrap();
//! let set = TapeSet::new(&loaded.kernels, &[2.0]).unwrap();
//! let g = set.eval(KernelKind::Metric, &Inputs { x: &[std::f64::consts::FRAC_PI_2, 0.0], ..Inputs::default() });
//! assert_eq!(g, [4.0, 0.0, 0.0, 4.0]);
//! ```
#![warn(missing_docs)]

mod args;
pub mod commands;
pub mod error;
pub mod horizon;
pub mod json;
pub mod native;
pub mod plot;
pub mod progress;
pub mod render;
pub mod report;
pub mod source;
pub mod survey;
pub mod tape;
pub mod tape_metric;

use std::ffi::OsString;
use std::io::Write;

use clap::Parser;

pub use error::CliError;

/// Runs the tool on `args` (the program name first), printing to stdout and stderr, and
/// returns the exit status.
pub fn main_with_args<I, T>(args: I) -> u8
where
    I: IntoIterator<Item = T>,
    T: Into<OsString> + Clone,
{
    let cli = match args::Cli::try_parse_from(args) {
        Ok(cli) => cli,
        Err(e) => return clap_error(&e),
    };
    match commands::run(&cli.command) {
        Ok(text) => {
            let mut stdout = std::io::stdout().lock();
            match stdout
                .write_all(text.as_bytes())
                .and_then(|()| stdout.flush())
            {
                Ok(()) => 0,
                // A reader that went away (`geokern emit .. | head`) is not an error of ours.
                Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => 0,
                Err(e) => {
                    eprintln!("error: cannot write the output: {e}");
                    1
                }
            }
        }
        Err(e) => {
            eprintln!("{}", e.render());
            e.exit_code()
        }
    }
}

/// Help and version go to stdout with status 0; a usage error becomes one line on stderr
/// (clap's tip, if any, joined to it) with status 2.
fn clap_error(e: &clap::Error) -> u8 {
    use clap::error::ErrorKind;
    if matches!(e.kind(), ErrorKind::DisplayHelp | ErrorKind::DisplayVersion) {
        print!("{e}");
        return 0;
    }
    if e.kind() == ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand {
        use clap::CommandFactory;
        let command = args::Cli::command();
        let names: Vec<&str> = command.get_subcommands().map(|c| c.get_name()).collect();
        eprintln!(
            "error: no command given; choose one of {} (see `geokern --help`)",
            names.join(", ")
        );
        return 2;
    }
    let text = e.to_string();
    let mut lines = text.lines().map(str::trim).filter(|l| !l.is_empty());
    let first = lines.next().unwrap_or("error: invalid arguments");
    let first = first.strip_prefix("error: ").unwrap_or(first);
    let mut line = format!("error: {first}");
    // What follows the first line up to the usage: listed items (missing arguments, possible
    // values) and tips.
    let details: Vec<&str> = lines
        .take_while(|l| !l.starts_with("Usage:") && !l.starts_with("For more information"))
        .collect();
    let (tips, items): (Vec<&str>, Vec<&str>) =
        details.into_iter().partition(|l| l.starts_with("tip:"));
    if !items.is_empty() {
        line.push(' ');
        line.push_str(&items.join(", "));
    }
    for tip in tips {
        line.push_str("; ");
        line.push_str(tip.trim_start_matches("tip:").trim());
    }
    line.push_str(" (see `geokern --help`)");
    eprintln!("{line}");
    2
}
