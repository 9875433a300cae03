//! The errors of the command-line tool, each shown as one clear line (a malformed metric
//! file gives one `FILE:LINE:COL: message` line per problem found).

use std::path::PathBuf;

/// Everything that can stop a command.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    /// The metric file could not be read.
    #[error("cannot read `{}`: {source}", path.display())]
    Read {
        /// The path given.
        path: PathBuf,
        /// What the operating system said.
        source: std::io::Error,
    },
    /// The metric file is not UTF-8 text.
    #[error("`{name}` is not UTF-8 text (invalid byte at offset {offset})")]
    NotText {
        /// The file name as given.
        name: String,
        /// Offset of the first invalid byte.
        offset: usize,
    },
    /// The declaration has errors: the rendered `FILE:LINE:COL: message` lines.
    #[error("{rendered}")]
    Declaration {
        /// One line per problem, in source order.
        rendered: String,
    },
    /// An option or argument is wrong.
    #[error("{0}")]
    Usage(String),
    /// The integrator could not finish.
    #[error("integration failed: {0}")]
    Integration(#[from] geokern_runtime::Error),
    /// A kernel program could not be put on a tape (an engine bug, not a user error).
    #[error("internal error: {0}")]
    Tape(#[from] crate::tape::TapeError),
    /// A kernel program could not be compiled to machine code (no code generator for this
    /// machine, or a code generator failure).
    #[error("{0}")]
    Native(#[from] crate::native::NativeError),
    /// The requested output language is unknown or not available yet.
    #[error("{0}")]
    Emit(String),
    /// An output file (an image, a plot) could not be written.
    #[error("cannot write `{}`: {reason}", path.display())]
    Output {
        /// The path given.
        path: PathBuf,
        /// What went wrong.
        reason: String,
    },
    /// The metric does not have what the command needs (the right dimension, a symmetry,
    /// a horizon, a circular orbit in the range searched).
    #[error("{0}")]
    Unsuited(String),
}

impl CliError {
    /// A usage error with the given message.
    pub fn usage(message: impl Into<String>) -> CliError {
        CliError::Usage(message.into())
    }

    /// The exit status: 2 for bad options (as for a command-line parse error), 1 otherwise.
    pub fn exit_code(&self) -> u8 {
        match self {
            CliError::Usage(_) => 2,
            _ => 1,
        }
    }

    /// The text for stderr: diagnostics as they are (they carry their own location), every
    /// other error after `error: `.
    pub fn render(&self) -> String {
        match self {
            CliError::Declaration { rendered } => rendered.clone(),
            other => format!("error: {other}"),
        }
    }
}
