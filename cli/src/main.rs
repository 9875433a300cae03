//! The `geokern` binary: see the `geokern_cli` library for everything it does.

use std::process::ExitCode;

fn main() -> ExitCode {
    // A panic is a bug of the tool; say so on one line rather than with a backtrace.
    std::panic::set_hook(Box::new(|info| {
        let text = info.to_string().replace('\n', " ");
        eprintln!("error: internal error (a bug in geokern): {text}");
    }));
    ExitCode::from(geokern_cli::main_with_args(std::env::args_os()))
}
