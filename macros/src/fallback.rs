//! Stubs for declarations that failed, so that users see the real error and not a cascade of
//! "cannot find type" errors at every use of the struct.

use proc_macro2::{TokenStream, TokenTree};

use geokern_symbolic::backend::rust::{emit_stub, RustOptions, StubShape};
use geokern_symbolic::parse::ast::MetricDecl;

/// The stub shape of a declaration that parsed but failed later.
pub fn shape_of(decl: &MetricDecl) -> StubShape {
    StubShape {
        name: decl.name.to_string(),
        dim: decl.coords.len(),
        params: decl.params.iter().map(|p| p.to_string()).collect(),
    }
}

/// Stubs recovered from raw tokens when the declaration did not even parse: each
/// `struct NAME { .. coords: [..], params: [..] .. }` found at the top level gives one.
pub fn stubs(input: TokenStream) -> TokenStream {
    let tokens: Vec<TokenTree> = input.into_iter().collect();
    let mut out = TokenStream::new();
    for w in tokens.windows(3) {
        let (TokenTree::Ident(kw), TokenTree::Ident(name), TokenTree::Group(body)) =
            (&w[0], &w[1], &w[2])
        else {
            continue;
        };
        if kw != "struct" {
            continue;
        }
        let inner: Vec<TokenTree> = body.stream().into_iter().collect();
        let list = |key: &str| -> Option<Vec<String>> {
            inner.windows(3).find_map(|w| match (&w[0], &w[1], &w[2]) {
                (TokenTree::Ident(k), TokenTree::Punct(c), TokenTree::Group(g))
                    if k == key && c.as_char() == ':' =>
                {
                    Some(
                        g.stream()
                            .into_iter()
                            .filter_map(|t| match t {
                                TokenTree::Ident(i) => Some(i.to_string()),
                                _ => None,
                            })
                            .collect(),
                    )
                }
                _ => None,
            })
        };
        let dim = list("coords").map(|c| c.len()).unwrap_or(1).clamp(1, 16);
        let params = list("params").unwrap_or_default();
        let shape = StubShape {
            name: name.to_string(),
            dim,
            params,
        };
        out.extend(emit_stub(&shape, &RustOptions::default()));
    }
    out
}
