//! Reading metric declarations: tokens or text in, a checked [`ast::File`] out.
//!
//! The proc macro hands over its tokens ([`parse_tokens`]); the command-line tool hands over
//! the text of a `.gk` file ([`parse_str`]). Both go through the same parser (`syntax.rs`)
//! and the same checks (`validate.rs`), so a declaration means the same thing, and fails
//! with the same messages, in both.
//!
//! ```
//! use geokern_symbolic::parse::{self, ast::{Item, Tensor}};
//!
//! let file = parse::parse_str(
//!     "/// Flat space in polar coordinates.
//!      pub struct Polar {
//!          coords: [r, phi],
//!          g[r, r] = 1;
//!          g[phi, phi] = r.powi(2);
//!      }",
//! )
//! .unwrap();
//! let polar = &file.metrics[0];
//! assert_eq!(polar.docs, ["Flat space in polar coordinates."]);
//! assert_eq!(polar.dim(), 2);
//! let components: Vec<String> = polar
//!     .components(Tensor::Metric)
//!     .map(|(i, j, value)| format!("g[{i}, {j}] = {value}"))
//!     .collect();
//! assert_eq!(components, ["g[0, 0] = 1", "g[1, 1] = r.powi(2)"]);
//!
//! let error = parse::parse_str("struct Bad { coords: [x], g[x, x] = y; }").unwrap_err();
//! assert_eq!(
//!     error.render("bad.gk"),
//!     "bad.gk:1:37: unknown identifier `y`; coordinates are x"
//! );
//! ```

pub mod ast;
pub mod diagnostic;
mod syntax;
mod validate;

#[cfg(test)]
mod tests;

extern crate proc_macro;

use std::str::FromStr;

use proc_macro2::TokenStream;

pub use diagnostic::{Diagnostic, Diagnostics};

/// Deepest bracket nesting accepted. Parsing recurses into brackets, so a bound turns absurd
/// input into an error instead of a stack overflow; no hand-written metric comes near it.
pub const MAX_NESTING: usize = 128;

/// Highest expression tree accepted (a sum of 500 terms is 500 high). Checking, and every
/// later stage, walks trees recursively; the bound keeps that within a 2 MiB thread stack
/// even in debug builds. A longer formula can be split with `let` lines.
pub const MAX_EXPR_HEIGHT: usize = 512;

/// Most coordinates a metric may have.
pub const MAX_COORDS: usize = 16;

/// Parses and checks a declaration given as tokens (the body of `geokern::metric! { .. }`).
///
/// On failure, every error found is returned, in source order, each at the token it blames.
pub fn parse_tokens(tokens: TokenStream) -> Result<ast::File, Diagnostics> {
    let mut errors = diagnostic::Collector::default();
    let raw = syntax::parse_file(tokens, &mut errors);
    let file = validate::validate(raw, &mut errors);
    match errors.into_diagnostics() {
        None => Ok(file),
        Some(mut diagnostics) => {
            diagnostics.sort_by_position();
            Err(diagnostics)
        }
    }
}

/// Parses and checks a declaration given as text (a `.gk` file: one or more `struct` blocks).
///
/// Lines and columns of the returned diagnostics count from the start of `source`. Text that
/// does not even split into tokens (an unclosed bracket, a stray character) is reported the
/// same way.
pub fn parse_str(source: &str) -> Result<ast::File, Diagnostics> {
    let errors = match parse_text(source) {
        Ok(file) => return Ok(file),
        Err(errors) => errors,
    };
    // Inside a proc macro (one that reads a `.gk` file), the compiler lexes the text and
    // every span points at the macro call, so the positions would be wrong.
    if proc_macro::is_available() {
        if let Some(located) = locate_in_text(source) {
            return Err(located);
        }
    }
    Err(errors)
}

/// Parses `source` again with proc-macro2's own lexer, whose spans know their line and
/// column, and keeps only the messages and positions from that run: its tokens must not
/// mix with the compiler's, so none of them leaves this function.
fn locate_in_text(source: &str) -> Option<Diagnostics> {
    /// Restores the compiler's token types even if parsing were to panic.
    struct Restore;
    impl Drop for Restore {
        fn drop(&mut self) {
            proc_macro2::fallback::unforce();
        }
    }
    let located: Vec<(String, (usize, usize))> = {
        proc_macro2::fallback::force();
        let _restore = Restore;
        let result = parse_text(source);
        match result {
            Ok(_) => Vec::new(),
            Err(errors) => errors
                .into_iter()
                .map(|d| {
                    let position = d.line_col();
                    (d.message, position)
                })
                .collect(),
        }
    };
    let call_site = proc_macro2::Span::call_site();
    Diagnostics::from_vec(
        located
            .into_iter()
            .map(|(message, position)| Diagnostic::located(call_site, message, position))
            .collect(),
    )
}

fn parse_text(source: &str) -> Result<ast::File, Diagnostics> {
    match TokenStream::from_str(source) {
        Ok(tokens) => parse_tokens(tokens),
        Err(error) => Err(Diagnostics::new(lex_diagnostic(source, &error))),
    }
}

/// Names the problem at the place where the tokenizer gave up.
fn lex_diagnostic(source: &str, error: &proc_macro2::LexError) -> Diagnostic {
    let span = error.span();
    let start = span.start();
    let offending = source
        .split('\n')
        .nth(start.line.saturating_sub(1))
        .and_then(|line| line.chars().nth(start.column));
    let message = match offending {
        Some(c @ ('(' | '[' | '{')) => format!("unclosed delimiter `{c}`"),
        Some(c @ (')' | ']' | '}')) => format!("mismatched or unbalanced closing delimiter `{c}`"),
        Some('"') => "unterminated string literal (strings are not used in declarations)".into(),
        Some('\'') => "unterminated character literal".into(),
        Some(c) if c.is_ascii_digit() => "malformed number literal".into(),
        Some(c) => format!("unexpected character {c:?}"),
        None => "unexpected end of text".into(),
    };
    Diagnostic::new(span, message)
}
