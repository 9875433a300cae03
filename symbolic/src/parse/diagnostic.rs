//! Errors about a declaration, each pointing at the token it blames.
//!
//! All errors found are collected and reported together, so a user fixes them in one pass
//! instead of one per compile.

use std::fmt;

use proc_macro2::{Span, TokenStream};

/// One error at one place in the declaration.
#[derive(Debug, Clone)]
pub struct Diagnostic {
    /// What is wrong, in lowercase, naming the offending thing.
    pub message: String,
    /// The token (or tokens) blamed.
    pub span: Span,
    /// Line and column in the text, where `span` cannot tell them (see
    /// [`Diagnostic::line_col`]).
    location: Option<(usize, usize)>,
}

impl Diagnostic {
    /// An error blaming `span`.
    pub fn new(span: Span, message: impl Into<String>) -> Diagnostic {
        Diagnostic {
            message: message.into(),
            span,
            location: None,
        }
    }

    /// An error at a known line and column of a text, blaming `span` for a compiler.
    pub(crate) fn located(span: Span, message: String, line_col: (usize, usize)) -> Diagnostic {
        Diagnostic {
            message,
            span,
            location: Some(line_col),
        }
    }

    /// 1-based line and 1-based column (in characters) where the blamed tokens start.
    ///
    /// For text read with [`parse_str`](super::parse_str) these count from the start of that
    /// text, also when it runs inside a proc macro (where the tokens' spans all point at the
    /// macro call); for tokens handed to a proc macro they are positions in the user's
    /// source file.
    pub fn line_col(&self) -> (usize, usize) {
        if let Some(location) = self.location {
            return location;
        }
        let start = self.span.start();
        (start.line.max(1), start.column + 1)
    }

    /// `FILE:LINE:COL: message`, the one-line form the command-line tool prints.
    pub fn render(&self, file_name: &str) -> String {
        let (line, col) = self.line_col();
        format!("{file_name}:{line}:{col}: {}", self.message)
    }

    /// The same error as a `syn::Error`, for a proc macro to report.
    pub fn to_syn_error(&self) -> syn::Error {
        syn::Error::new(self.span, &self.message)
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl From<syn::Error> for Diagnostic {
    /// Keeps the first message of a (possibly combined) `syn::Error`; use
    /// [`Diagnostics::from`] to keep all of them.
    fn from(error: syn::Error) -> Diagnostic {
        Diagnostic::new(error.span(), error.to_string())
    }
}

/// A non-empty list of [`Diagnostic`]s, in source order.
#[derive(Debug, Clone)]
pub struct Diagnostics {
    list: Vec<Diagnostic>,
}

impl Diagnostics {
    /// A list holding `first`.
    pub fn new(first: Diagnostic) -> Diagnostics {
        Diagnostics { list: vec![first] }
    }

    /// `Some` list of `diagnostics`, or `None` when there are none.
    pub fn from_vec(diagnostics: Vec<Diagnostic>) -> Option<Diagnostics> {
        if diagnostics.is_empty() {
            None
        } else {
            Some(Diagnostics { list: diagnostics })
        }
    }

    /// Adds one more error.
    pub fn push(&mut self, diagnostic: Diagnostic) {
        self.list.push(diagnostic);
    }

    /// Adds all errors of `other`.
    pub fn extend(&mut self, other: Diagnostics) {
        self.list.extend(other.list);
    }

    /// The errors, in order.
    pub fn iter(&self) -> std::slice::Iter<'_, Diagnostic> {
        self.list.iter()
    }

    /// How many errors there are (at least one).
    pub fn len(&self) -> usize {
        self.list.len()
    }

    /// Always `false`: a `Diagnostics` holds at least one error.
    pub fn is_empty(&self) -> bool {
        self.list.is_empty()
    }

    /// The first error.
    pub fn first(&self) -> &Diagnostic {
        &self.list[0]
    }

    /// The errors as a plain vector.
    pub fn into_vec(self) -> Vec<Diagnostic> {
        self.list
    }

    /// Orders the errors by where they start (stable, so errors at one place keep their
    /// order).
    pub fn sort_by_position(&mut self) {
        self.list.sort_by_key(Diagnostic::line_col);
    }

    /// One `compile_error!` per error, each at its own span, for a proc macro to emit.
    pub fn to_compile_error(&self) -> TokenStream {
        let mut errors = self.list.iter().map(Diagnostic::to_syn_error);
        let Some(mut combined) = errors.next() else {
            return TokenStream::new();
        };
        for error in errors {
            combined.combine(error);
        }
        combined.into_compile_error()
    }

    /// One `FILE:LINE:COL: message` line per error, joined by newlines (no trailing newline).
    pub fn render(&self, file_name: &str) -> String {
        let lines: Vec<String> = self.list.iter().map(|d| d.render(file_name)).collect();
        lines.join("\n")
    }
}

impl From<Diagnostic> for Diagnostics {
    fn from(diagnostic: Diagnostic) -> Diagnostics {
        Diagnostics::new(diagnostic)
    }
}

impl From<syn::Error> for Diagnostics {
    /// One diagnostic per message of a combined `syn::Error`.
    fn from(error: syn::Error) -> Diagnostics {
        let list: Vec<Diagnostic> = error
            .into_iter()
            .map(|e| Diagnostic::new(e.span(), e.to_string()))
            .collect();
        Diagnostics { list }
    }
}

impl<'a> IntoIterator for &'a Diagnostics {
    type Item = &'a Diagnostic;
    type IntoIter = std::slice::Iter<'a, Diagnostic>;

    fn into_iter(self) -> Self::IntoIter {
        self.list.iter()
    }
}

impl IntoIterator for Diagnostics {
    type Item = Diagnostic;
    type IntoIter = std::vec::IntoIter<Diagnostic>;

    fn into_iter(self) -> Self::IntoIter {
        self.list.into_iter()
    }
}

/// One message per line, without locations (see [`Diagnostics::render`] for those).
impl fmt::Display for Diagnostics {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (k, d) in self.list.iter().enumerate() {
            if k > 0 {
                f.write_str("\n")?;
            }
            f.write_str(&d.message)?;
        }
        Ok(())
    }
}

impl std::error::Error for Diagnostics {}

/// A collector for errors found while checking; like a `Diagnostics` that may be empty.
#[derive(Debug, Default)]
pub(crate) struct Collector {
    list: Vec<Diagnostic>,
}

impl Collector {
    pub(crate) fn error(&mut self, span: Span, message: impl Into<String>) {
        self.list.push(Diagnostic::new(span, message));
    }

    pub(crate) fn syn_error(&mut self, error: syn::Error) {
        self.list.extend(Diagnostics::from(error));
    }

    pub(crate) fn count(&self) -> usize {
        self.list.len()
    }

    pub(crate) fn into_diagnostics(self) -> Option<Diagnostics> {
        Diagnostics::from_vec(self.list)
    }
}
