//! The `metric!` procedural macro of geokern: a thin shell around the engine.
//!
//! Tokens go to [`geokern_symbolic`], which parses, derives and schedules the kernels; the
//! Rust backend's tokens come back. Use it through the `geokern` facade crate, whose docs show
//! the declaration syntax and the generated API.
#![warn(missing_docs)]

mod fallback;

use proc_macro::TokenStream;
use proc_macro2::TokenStream as TokenStream2;
use quote::{quote, ToTokens};

use geokern_symbolic::backend::rust::{emit, emit_stub, RustOptions};
use geokern_symbolic::parse::{self, ast::File};

/// Declares one or more metrics and generates their kernels at compile time.
///
/// See the `geokern` crate for the syntax and the generated items.
#[proc_macro]
pub fn metric(input: TokenStream) -> TokenStream {
    let input: TokenStream2 = input.into();
    match parse::parse_tokens(input.clone()) {
        Ok(file) => expand(&file, None).into(),
        Err(diags) => {
            let mut out = diags.to_compile_error();
            out.extend(fallback::stubs(input));
            out.into()
        }
    }
}

/// Declares the metrics of a `.gk` file (a path relative to the crate's `Cargo.toml`) and
/// generates their kernels, exactly as [`metric!`] does for the same text.
#[proc_macro]
pub fn include_metric(input: TokenStream) -> TokenStream {
    let lit = match syn::parse::<syn::LitStr>(input) {
        Ok(l) => l,
        Err(e) => return e.into_compile_error().into(),
    };
    let rel = lit.value();
    let root = std::env::var("CARGO_MANIFEST_DIR").unwrap_or_else(|_| ".".to_string());
    let path = std::path::Path::new(&root).join(&rel);
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) => {
            let msg = format!("cannot read metric file `{}`: {e}", path.display());
            return syn::Error::new(lit.span(), msg).into_compile_error().into();
        }
    };
    let track = path.to_string_lossy().into_owned();
    match parse::parse_str(&text) {
        Ok(file) => {
            let mut out = expand(&file, Some(&rel));
            // Rebuild when the file changes.
            out.extend(quote!(
                const _: &str = include_str!(#track);
            ));
            out.into()
        }
        Err(diags) => {
            let msg = diags.render(&rel);
            syn::Error::new(lit.span(), msg.trim_end())
                .into_compile_error()
                .into()
        }
    }
}

fn expand(file: &File, source: Option<&str>) -> TokenStream2 {
    let mut out = TokenStream2::new();
    for decl in &file.metrics {
        let opts = RustOptions {
            vis: decl.vis.to_token_stream(),
            attrs: decl.attrs.iter().map(|a| a.to_token_stream()).collect(),
            runtime: quote!(::geokern),
        };
        match geokern_symbolic::model::compile(decl) {
            Ok(ks) => out.extend(emit(&ks, &opts)),
            Err(diags) => {
                match source {
                    Some(rel) => {
                        let msg = diags.render(rel);
                        out.extend(quote!(::core::compile_error!(#msg);));
                    }
                    None => out.extend(diags.to_compile_error()),
                }
                out.extend(emit_stub(&fallback::shape_of(decl), &opts));
            }
        }
    }
    out
}
