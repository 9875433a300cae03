//! From tokens to an unresolved syntax tree, with syn.
//!
//! Names are not looked up here (a `let` may refer to a parameter declared further down);
//! [`super::validate`] does that. Numbers are read exactly here, since a malformed literal
//! is a syntax error.
//!
//! Robustness: syn builds its token buffer and parses groups recursively, so bracket depth is
//! bounded on the raw token trees, with an explicit stack, before syn sees them. The
//! expression grammar below is our own recursive-descent parser over syn's cursor, with its
//! own depth counter, and it bounds the height of the trees it builds, so no input can
//! exhaust the stack here or in the later stages that walk the tree.

use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::Zero;
use proc_macro2::{Delimiter, Ident, Span, TokenStream, TokenTree};
use syn::ext::IdentExt;
use syn::parse::{ParseStream, Parser};
use syn::punctuated::Punctuated;
use syn::{bracketed, parenthesized, token, Token};

use super::ast::{BinaryOp, Tensor};
use super::diagnostic::Collector;
use super::{MAX_EXPR_HEIGHT, MAX_NESTING};

/// Longest accepted number literal, in digits. Kernels compute in floating point, where more
/// than a few dozen digits mean nothing; the bound keeps big-integer work small.
const MAX_LITERAL_DIGITS: usize = 1000;
/// Largest accepted decimal exponent magnitude in a literal (f64 spans about 1e±308).
const MAX_LITERAL_EXPONENT: i64 = 1000;

/// A declaration file before name resolution.
#[derive(Debug)]
pub(crate) struct RawFile {
    pub(crate) structs: Vec<RawStruct>,
}

/// One `struct` block before name resolution.
#[derive(Debug)]
pub(crate) struct RawStruct {
    pub(crate) docs: Vec<String>,
    pub(crate) attrs: Vec<syn::Attribute>,
    pub(crate) vis: syn::Visibility,
    pub(crate) name: Ident,
    pub(crate) body: Vec<RawStmt>,
    /// Whether a syntax error was found in the body.
    pub(crate) has_syntax_error: bool,
    /// Whether a line that may declare a name was unreadable; such a struct is not checked
    /// further, since the missing names would only cause follow-on errors.
    pub(crate) broken_declaration: bool,
}

/// Which list a `KEY: [..]` line gives.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum ListKind {
    Coords,
    Params,
    Options,
}

impl ListKind {
    pub(crate) fn keyword(self) -> &'static str {
        match self {
            ListKind::Coords => "coords",
            ListKind::Params => "params",
            ListKind::Options => "options",
        }
    }
}

/// One line of a struct body.
#[derive(Debug)]
pub(crate) enum RawStmt {
    List {
        kind: ListKind,
        key: Ident,
        names: Vec<Ident>,
    },
    Let {
        name: Ident,
        value: RawExpr,
    },
    Component {
        which: Tensor,
        indices: [RawIndex; 2],
        index_span: Span,
        value: RawExpr,
    },
    LineElement {
        key: Ident,
        value: RawExpr,
    },
    Invariant {
        name: Ident,
        value: RawExpr,
    },
}

/// An index as written: a coordinate name or a number.
#[derive(Debug, Clone)]
pub(crate) enum RawIndex {
    Name(Ident),
    /// `usize::MAX` stands for a number too large to be any index.
    Number {
        value: usize,
        span: Span,
    },
}

/// An expression before name resolution. Composite nodes record their height so that the
/// parser can bound it without walking the tree.
#[derive(Debug)]
pub(crate) enum RawExpr {
    Number {
        value: BigRational,
        /// An integer literal without a float suffix, as `powi` needs.
        integer_literal: bool,
        span: Span,
    },
    /// A name or a path such as `std::f64::consts::PI`.
    Path { segments: Vec<Ident>, span: Span },
    /// `base[index, ..]` (only `u[X]` and `p[X]` are valid; the checker says so).
    Index {
        base: Ident,
        indices: Vec<RawIndex>,
        span: Span,
    },
    Neg {
        arg: Box<RawExpr>,
        span: Span,
        height: usize,
    },
    Binary {
        op: BinaryOp,
        lhs: Box<RawExpr>,
        rhs: Box<RawExpr>,
        span: Span,
        height: usize,
    },
    /// `path(args)`.
    Call {
        path: Vec<Ident>,
        args: Vec<RawExpr>,
        span: Span,
        height: usize,
    },
    /// `receiver.method(args)`.
    MethodCall {
        receiver: Box<RawExpr>,
        method: Ident,
        args: Vec<RawExpr>,
        span: Span,
        height: usize,
    },
}

impl RawExpr {
    pub(crate) fn span(&self) -> Span {
        match self {
            RawExpr::Number { span, .. }
            | RawExpr::Path { span, .. }
            | RawExpr::Index { span, .. }
            | RawExpr::Neg { span, .. }
            | RawExpr::Binary { span, .. }
            | RawExpr::Call { span, .. }
            | RawExpr::MethodCall { span, .. } => *span,
        }
    }

    fn height(&self) -> usize {
        match self {
            RawExpr::Number { .. } | RawExpr::Path { .. } | RawExpr::Index { .. } => 1,
            RawExpr::Neg { height, .. }
            | RawExpr::Binary { height, .. }
            | RawExpr::Call { height, .. }
            | RawExpr::MethodCall { height, .. } => *height,
        }
    }
}

/// The span from `first` to `last`, or `fallback` where spans cannot be joined (a proc macro
/// on stable Rust).
pub(crate) fn join_spans(first: Span, last: Span, fallback: Span) -> Span {
    first.join(last).unwrap_or(fallback)
}

/// Parses a whole declaration, recording every syntax error in `errors`.
pub(crate) fn parse_file(tokens: TokenStream, errors: &mut Collector) -> RawFile {
    let shape = match token_shape(&tokens) {
        Ok(shape) => shape,
        Err(span) => {
            errors.error(
                span,
                format!("brackets nested too deeply (more than {MAX_NESTING} levels)"),
            );
            return RawFile {
                structs: Vec::new(),
            };
        }
    };
    let mut structs = Vec::new();
    let before = errors.count();
    let parser = |input: ParseStream| -> syn::Result<()> {
        file(input, errors, shape.last_span, &mut structs);
        Ok(())
    };
    let leftover = parser.parse2(tokens);
    // syn remembers tokens left unparsed in groups abandoned after an error and reports them
    // here; those are follow-ons of errors already recorded.
    if let Err(error) = leftover {
        if errors.count() == before {
            errors.syn_error(error);
        }
    }
    if structs.is_empty() && errors.count() == before {
        errors.error(
            shape.last_span,
            "expected at least one `struct NAME { .. }` declaration",
        );
    }
    RawFile { structs }
}

struct TokenShape {
    /// Span of the last token (an end-of-input error points there).
    last_span: Span,
}

/// Measures bracket depth with an explicit stack; `Err` holds the span of a group nested
/// deeper than [`MAX_NESTING`].
fn token_shape(tokens: &TokenStream) -> Result<TokenShape, Span> {
    let mut last_span = Span::call_site();
    let mut stack = vec![tokens.clone().into_iter()];
    while let Some(top) = stack.last_mut() {
        let Some(tree) = top.next() else {
            stack.pop();
            continue;
        };
        let depth = stack.len();
        if depth == 1 {
            last_span = match &tree {
                TokenTree::Group(group) => group.span_close(),
                other => other.span(),
            };
        }
        if let TokenTree::Group(group) = tree {
            if depth > MAX_NESTING {
                return Err(group.span_open());
            }
            stack.push(group.stream().into_iter());
        }
    }
    Ok(TokenShape { last_span })
}

fn file(input: ParseStream, errors: &mut Collector, last_span: Span, structs: &mut Vec<RawStruct>) {
    while !input.is_empty() {
        match struct_decl(input, errors) {
            Ok(decl) => structs.push(decl),
            Err(error) => {
                for e in error {
                    let e = if e.to_string().starts_with("unexpected end of input") {
                        syn::Error::new(last_span, e.to_string())
                    } else {
                        e
                    };
                    errors.syn_error(e);
                }
                skip_past_brace(input);
            }
        }
    }
}

/// Skips up to and including the next `{ .. }` group (the body of a broken struct header),
/// so that the next struct can still be checked.
fn skip_past_brace(input: ParseStream) {
    let _ = input.step(|cursor| {
        let mut rest = *cursor;
        while let Some((tree, next)) = rest.token_tree() {
            rest = next;
            if let TokenTree::Group(group) = tree {
                if group.delimiter() == Delimiter::Brace {
                    break;
                }
            }
        }
        Ok(((), rest))
    });
}

fn struct_decl(input: ParseStream, errors: &mut Collector) -> syn::Result<RawStruct> {
    let all_attrs = input.call(syn::Attribute::parse_outer)?;
    let vis: syn::Visibility = input.parse()?;
    if !input.peek(Token![struct]) {
        return Err(input.error("expected `struct`"));
    }
    input.parse::<Token![struct]>()?;
    let name: Ident = input.parse()?;
    if input.peek(Token![<]) {
        return Err(input.error("generic parameters are not supported on a metric struct"));
    }
    if !input.peek(token::Brace) {
        return Err(input.error("expected `{` and the metric's body"));
    }
    let content;
    syn::braced!(content in input);
    let (docs, attrs) = split_docs(all_attrs);
    let before = errors.count();
    let body = struct_body(&content, errors);
    Ok(RawStruct {
        docs,
        attrs,
        vis,
        name,
        body: body.stmts,
        has_syntax_error: errors.count() > before,
        broken_declaration: body.broken_declaration,
    })
}

/// Separates `///` docs (as trimmed lines) from the other attributes.
fn split_docs(attrs: Vec<syn::Attribute>) -> (Vec<String>, Vec<syn::Attribute>) {
    let mut docs = Vec::new();
    let mut rest = Vec::new();
    for attr in attrs {
        if let Some(text) = doc_text(&attr) {
            // `split`, not `lines`: an empty `///` line is a paragraph break worth keeping.
            docs.extend(text.split('\n').map(|line| line.trim().to_string()));
        } else {
            rest.push(attr);
        }
    }
    (docs, rest)
}

fn doc_text(attr: &syn::Attribute) -> Option<String> {
    if !attr.path().is_ident("doc") {
        return None;
    }
    let syn::Meta::NameValue(meta) = &attr.meta else {
        return None;
    };
    match &meta.value {
        syn::Expr::Lit(syn::ExprLit {
            lit: syn::Lit::Str(text),
            ..
        }) => Some(text.value()),
        _ => None,
    }
}

/// The statement keywords, for the error on anything else.
const STATEMENT_HELP: &str = "expected `coords: [..]`, `params: [..]`, `options: [..]`, \
                              `let NAME = ..;`, `g[i, j] = ..;`, `ginv[i, j] = ..;`, \
                              `line_element = ..;` or `invariant NAME = ..;`";

/// A struct body and what its syntax errors broke.
struct Body {
    stmts: Vec<RawStmt>,
    /// Whether a line that may declare a name (or an unrecognised line) was unreadable.
    broken_declaration: bool,
}

fn struct_body(input: ParseStream, errors: &mut Collector) -> Body {
    let mut body = Body {
        stmts: Vec::new(),
        broken_declaration: false,
    };
    while !input.is_empty() {
        let kind = line_kind(input);
        match statement(input) {
            Ok(Some(stmt)) => body.stmts.push(stmt),
            Ok(None) => {}
            Err(error) => {
                errors.syn_error(error);
                body.broken_declaration |= kind != LineKind::Definition;
                skip_statement(input, kind != LineKind::List);
            }
        }
    }
    body
}

/// What a line is, judged from its first token, for error recovery.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum LineKind {
    /// `coords:`, `params:` or `options:`, ended by `,`.
    List,
    /// `let`, ended by `;`; it declares a name.
    Let,
    /// `g[..]`, `ginv[..]`, `line_element` or `invariant`, ended by `;`; nothing else can
    /// refer to what it defines.
    Definition,
    /// Anything else (perhaps a misspelt keyword).
    Unknown,
}

fn line_kind(input: ParseStream) -> LineKind {
    if input.peek(Token![let]) {
        return LineKind::Let;
    }
    match input.cursor().ident() {
        Some((ident, _)) => match ident.to_string().as_str() {
            "g" | "ginv" | "line_element" | "invariant" => LineKind::Definition,
            "coords" | "params" | "options" => LineKind::List,
            _ => LineKind::Unknown,
        },
        None => LineKind::Unknown,
    }
}

/// Skips past the `;` (or, for list lines, `,`) that ends a broken line, consuming at least
/// one token so that recovery always makes progress.
fn skip_statement(input: ParseStream, semicolon_only: bool) {
    let _ = input.step(|cursor| {
        let mut rest = *cursor;
        while let Some((tree, next)) = rest.token_tree() {
            rest = next;
            if let TokenTree::Punct(punct) = tree {
                let c = punct.as_char();
                if c == ';' || (c == ',' && !semicolon_only) {
                    break;
                }
            }
        }
        Ok(((), rest))
    });
}

/// One line of a struct body; `None` for a line that only held doc comments.
fn statement(input: ParseStream) -> syn::Result<Option<RawStmt>> {
    let attrs = input.call(syn::Attribute::parse_outer)?;
    if let Some(attr) = attrs.iter().find(|a| doc_text(a).is_none()) {
        return Err(syn::Error::new_spanned(
            attr,
            "attributes are not supported inside a metric body (only `///` comments)",
        ));
    }
    if input.is_empty() {
        return Ok(None);
    }
    if input.peek(Token![let]) {
        input.parse::<Token![let]>()?;
        let name: Ident = input.parse()?;
        input.parse::<Token![=]>()?;
        let value = expression(input)?;
        input.parse::<Token![;]>()?;
        return Ok(Some(RawStmt::Let { name, value }));
    }
    let Some((keyword, _)) = input.cursor().ident() else {
        return Err(input.error(STATEMENT_HELP));
    };
    let stmt = match keyword.to_string().as_str() {
        "coords" => list(input, ListKind::Coords)?,
        "params" => list(input, ListKind::Params)?,
        "options" => list(input, ListKind::Options)?,
        "g" => component(input, Tensor::Metric)?,
        "ginv" => component(input, Tensor::InverseMetric)?,
        "line_element" => {
            let key = input.call(Ident::parse_any)?;
            input.parse::<Token![=]>()?;
            let value = expression(input)?;
            input.parse::<Token![;]>()?;
            RawStmt::LineElement { key, value }
        }
        "invariant" => {
            input.call(Ident::parse_any)?;
            let name: Ident = input.parse()?;
            input.parse::<Token![=]>()?;
            let value = expression(input)?;
            input.parse::<Token![;]>()?;
            RawStmt::Invariant { name, value }
        }
        other => {
            return Err(syn::Error::new(
                keyword.span(),
                format!("{STATEMENT_HELP}; found `{other}`"),
            ))
        }
    };
    Ok(Some(stmt))
}

/// `KEY: [a, b, c]` followed by `,` or `;` (or the end of the body).
fn list(input: ParseStream, kind: ListKind) -> syn::Result<RawStmt> {
    let key = input.call(Ident::parse_any)?;
    input.parse::<Token![:]>()?;
    if !input.peek(token::Bracket) {
        return Err(input.error(format!(
            "expected `[` after `{}:`, as in `{}: [a, b]`",
            kind.keyword(),
            kind.keyword()
        )));
    }
    let content;
    bracketed!(content in input);
    let names = Punctuated::<Ident, Token![,]>::parse_terminated(&content)?;
    if input.peek(Token![,]) {
        input.parse::<Token![,]>()?;
    } else if input.peek(Token![;]) {
        input.parse::<Token![;]>()?;
    } else if !input.is_empty() {
        return Err(input.error(format!("expected `,` after the `{}` list", kind.keyword())));
    }
    Ok(RawStmt::List {
        kind,
        key,
        names: names.into_iter().collect(),
    })
}

/// `g[i, j] = EXPR;` or `ginv[i, j] = EXPR;`.
fn component(input: ParseStream, which: Tensor) -> syn::Result<RawStmt> {
    input.call(Ident::parse_any)?;
    if !input.peek(token::Bracket) {
        return Err(input.error(format!(
            "expected `[` after `{0}`, as in `{0}[t, r] = ..;`",
            which.keyword()
        )));
    }
    let content;
    let brackets = bracketed!(content in input);
    let index_span = brackets.span.join();
    let list = Punctuated::<RawIndex, Token![,]>::parse_terminated_with(&content, index)?;
    let mut indices = list.into_iter();
    let (Some(i), Some(j), None) = (indices.next(), indices.next(), indices.next()) else {
        return Err(syn::Error::new(
            index_span,
            format!(
                "expected two indices, as in `{}[t, r]` or `{}[0, 1]`",
                which.keyword(),
                which.keyword()
            ),
        ));
    };
    input.parse::<Token![=]>()?;
    let value = expression(input)?;
    input.parse::<Token![;]>()?;
    Ok(RawStmt::Component {
        which,
        indices: [i, j],
        index_span,
        value,
    })
}

/// A coordinate name or an unsuffixed integer.
fn index(input: ParseStream) -> syn::Result<RawIndex> {
    if input.peek(syn::Ident) {
        return Ok(RawIndex::Name(input.parse()?));
    }
    if input.peek(syn::LitInt) {
        let lit: syn::LitInt = input.parse()?;
        if !matches!(lit.suffix(), "" | "usize") {
            return Err(syn::Error::new(
                lit.span(),
                "an index must be a coordinate name or a plain integer",
            ));
        }
        let value = lit.base10_digits().parse::<usize>().unwrap_or(usize::MAX);
        return Ok(RawIndex::Number {
            value,
            span: lit.span(),
        });
    }
    Err(input.error("expected a coordinate name or an index number"))
}

/// Parses one expression (the grammar's entry point).
pub(crate) fn expression(input: ParseStream) -> syn::Result<RawExpr> {
    ExprParser { depth: 0 }.expr(input)
}

/// Rust's precedences for the subset we accept:
/// `expr := operand (('+' | '-' | '*' | '/') operand)*` with `*` and `/` binding tighter,
/// `operand := '-'* postfix`, `postfix := primary ('.' method '(' args ')')*`,
/// `primary := number | path | path '(' args ')' | name '[' index ']' | '(' expr ')'`.
///
/// Operator chains and prefix minuses are handled with explicit stacks, so the parser only
/// recurses into brackets; that keeps stack use per level small and bounded by
/// [`MAX_NESTING`].
struct ExprParser {
    depth: usize,
}

impl ExprParser {
    fn expr(&mut self, input: ParseStream) -> syn::Result<RawExpr> {
        self.depth += 1;
        if self.depth > MAX_NESTING {
            return Err(syn::Error::new(
                input.span(),
                format!("expression nested too deeply (more than {MAX_NESTING} levels)"),
            ));
        }
        let result = self.operator_chain(input);
        self.depth -= 1;
        let expr = result?;
        reject_unsupported_operator(input)?;
        Ok(expr)
    }

    /// Operator precedence by the shunting-yard method: operands and pending operators on
    /// two stacks, reducing while the pending operator binds at least as tightly (all four
    /// operators associate to the left).
    fn operator_chain(&mut self, input: ParseStream) -> syn::Result<RawExpr> {
        let mut operands = vec![self.operand(input)?];
        let mut operators: Vec<(BinaryOp, Span)> = Vec::new();
        while let Some(op) = peek_binary_operator(input) {
            let op_span = op_token(input)?;
            while let Some(&(pending, _)) = operators.last() {
                if binding(pending) < binding(op) {
                    break;
                }
                reduce(&mut operands, &mut operators)?;
            }
            operators.push((op, op_span));
            operands.push(self.operand(input)?);
        }
        while !operators.is_empty() {
            reduce(&mut operands, &mut operators)?;
        }
        operands
            .pop()
            .ok_or_else(|| input.error("expected an expression"))
    }

    /// Prefix minuses, then a postfix expression.
    fn operand(&mut self, input: ParseStream) -> syn::Result<RawExpr> {
        let mut minuses = Vec::new();
        while input.peek(Token![-]) {
            let minus: Token![-] = input.parse()?;
            checked_height(minuses.len() + 2, minus.span)?;
            minuses.push(minus.span);
        }
        if input.peek(Token![*]) || input.peek(Token![^]) {
            return Err(input.error(
                "unexpected operator; for powers write `x.powi(n)` (integer n) or `x.powf(y)`",
            ));
        }
        if input.peek(Token![+]) {
            return Err(input.error("unary `+` is not supported; remove it"));
        }
        let mut expr = self.postfix(input)?;
        while let Some(minus) = minuses.pop() {
            let height = checked_height(expr.height() + 1, minus)?;
            let span = join_spans(minus, expr.span(), minus);
            expr = RawExpr::Neg {
                arg: Box::new(expr),
                span,
                height,
            };
        }
        Ok(expr)
    }

    fn postfix(&mut self, input: ParseStream) -> syn::Result<RawExpr> {
        let mut expr = self.primary(input)?;
        while input.peek(Token![.]) && !input.peek(Token![..]) {
            input.parse::<Token![.]>()?;
            if input.peek(syn::LitInt) || input.peek(syn::LitFloat) {
                return Err(input.error("tuple fields are not supported"));
            }
            let method: Ident = input.parse()?;
            if !input.peek(token::Paren) {
                return Err(syn::Error::new(
                    method.span(),
                    format!("expected `(` after method name `{method}`, as in `x.{method}()`"),
                ));
            }
            let (args, close) = self.arguments(input)?;
            let height = checked_height(
                1 + args
                    .iter()
                    .map(RawExpr::height)
                    .max()
                    .unwrap_or(0)
                    .max(expr.height()),
                method.span(),
            )?;
            let span = join_spans(expr.span(), close, method.span());
            expr = RawExpr::MethodCall {
                receiver: Box::new(expr),
                method,
                args,
                span,
                height,
            };
        }
        Ok(expr)
    }

    /// `( a, b, .. )`, returning the arguments and the span of the closing parenthesis.
    fn arguments(&mut self, input: ParseStream) -> syn::Result<(Vec<RawExpr>, Span)> {
        let content;
        let parens = parenthesized!(content in input);
        let mut args = Vec::new();
        while !content.is_empty() {
            args.push(self.expr(&content)?);
            if content.is_empty() {
                break;
            }
            content.parse::<Token![,]>()?;
        }
        Ok((args, parens.span.close()))
    }

    fn primary(&mut self, input: ParseStream) -> syn::Result<RawExpr> {
        if input.peek(syn::Lit) {
            return number(input);
        }
        if input.peek(token::Paren) {
            let content;
            parenthesized!(content in input);
            // `expr` counts this level of nesting.
            let inner = self.expr(&content)?;
            if !content.is_empty() {
                return Err(content.error("expected `)`; tuples are not supported"));
            }
            return Ok(inner);
        }
        if input.peek(syn::Ident) || input.peek(Token![::]) {
            return self.path_expression(input);
        }
        Err(input.error("expected an expression"))
    }

    /// A name, a path, a function call `f(..)`, or an indexed name `u[r]`.
    fn path_expression(&mut self, input: ParseStream) -> syn::Result<RawExpr> {
        if input.peek(Token![::]) {
            input.parse::<Token![::]>()?;
        }
        let mut segments = vec![input.parse::<Ident>()?];
        while input.peek(Token![::]) {
            input.parse::<Token![::]>()?;
            segments.push(input.parse::<Ident>()?);
        }
        let first = segments[0].span();
        let last = segments[segments.len() - 1].span();
        let span = join_spans(first, last, last);
        if input.peek(Token![!]) {
            return Err(input.error("macros are not supported in expressions"));
        }
        if input.peek(token::Paren) {
            let (args, close) = self.arguments(input)?;
            let height = checked_height(
                1 + args.iter().map(RawExpr::height).max().unwrap_or(0),
                span,
            )?;
            return Ok(RawExpr::Call {
                path: segments,
                args,
                span: join_spans(first, close, span),
                height,
            });
        }
        if input.peek(token::Bracket) && segments.len() == 1 {
            let content;
            let brackets = bracketed!(content in input);
            let indices =
                Punctuated::<RawIndex, Token![,]>::parse_terminated_with(&content, index)?;
            let base = segments.remove(0);
            let span = join_spans(base.span(), brackets.span.close(), base.span());
            return Ok(RawExpr::Index {
                base,
                indices: indices.into_iter().collect(),
                span,
            });
        }
        Ok(RawExpr::Path { segments, span })
    }
}

fn peek_binary_operator(input: ParseStream) -> Option<BinaryOp> {
    if input.peek(Token![+]) && !input.peek(Token![+=]) {
        Some(BinaryOp::Add)
    } else if input.peek(Token![-]) && !input.peek(Token![-=]) && !input.peek(Token![->]) {
        Some(BinaryOp::Sub)
    } else if input.peek(Token![*]) && !input.peek(Token![*=]) {
        Some(BinaryOp::Mul)
    } else if input.peek(Token![/]) && !input.peek(Token![/=]) {
        Some(BinaryOp::Div)
    } else {
        None
    }
}

/// How tightly an operator binds: `*` and `/` before `+` and `-`.
fn binding(op: BinaryOp) -> u8 {
    match op {
        BinaryOp::Add | BinaryOp::Sub => 1,
        BinaryOp::Mul | BinaryOp::Div => 2,
    }
}

/// Pops one operator and its two operands and pushes their combination.
fn reduce(operands: &mut Vec<RawExpr>, operators: &mut Vec<(BinaryOp, Span)>) -> syn::Result<()> {
    let (Some((op, op_span)), Some(rhs), Some(lhs)) =
        (operators.pop(), operands.pop(), operands.pop())
    else {
        // The loop above pushes one operand per operator, plus the first.
        return Ok(());
    };
    operands.push(binary(op, lhs, rhs, op_span)?);
    Ok(())
}

fn op_token(input: ParseStream) -> syn::Result<Span> {
    input.step(|cursor| match cursor.punct() {
        Some((punct, rest)) => Ok((punct.span(), rest)),
        None => Err(cursor.error("expected an operator")),
    })
}

fn binary(op: BinaryOp, lhs: RawExpr, rhs: RawExpr, op_span: Span) -> syn::Result<RawExpr> {
    let height = checked_height(1 + lhs.height().max(rhs.height()), op_span)?;
    let span = join_spans(lhs.span(), rhs.span(), op_span);
    Ok(RawExpr::Binary {
        op,
        lhs: Box::new(lhs),
        rhs: Box::new(rhs),
        span,
        height,
    })
}

fn checked_height(height: usize, span: Span) -> syn::Result<usize> {
    if height > MAX_EXPR_HEIGHT {
        return Err(syn::Error::new(
            span,
            format!(
                "expression too large (more than {MAX_EXPR_HEIGHT} nested operations); \
                 split it with `let` lines"
            ),
        ));
    }
    Ok(height)
}

/// After a complete expression, a Rust operator we do not support gets a clear message
/// instead of a bare "expected `;`".
fn reject_unsupported_operator(input: ParseStream) -> syn::Result<()> {
    if let Some((punct, _)) = input.cursor().punct() {
        let c = punct.as_char();
        if "%^&|<>=!?@~#$".contains(c) {
            return Err(syn::Error::new(
                punct.span(),
                format!(
                    "unsupported operator `{c}`; expressions use `+`, `-`, `*`, `/` \
                     and the supported functions"
                ),
            ));
        }
    }
    if let Some((ident, _)) = input.cursor().ident() {
        if ident == "as" {
            return Err(syn::Error::new(
                ident.span(),
                "casts (`as`) are not supported; numbers are exact and need no type",
            ));
        }
    }
    Ok(())
}

/// A number literal, read exactly.
fn number(input: ParseStream) -> syn::Result<RawExpr> {
    let lit: syn::Lit = input.parse()?;
    let span = lit.span();
    let (digits, suffix, integer) = match &lit {
        syn::Lit::Int(int) => (
            int.base10_digits().to_string(),
            int.suffix().to_string(),
            true,
        ),
        syn::Lit::Float(float) => (
            float.base10_digits().to_string(),
            float.suffix().to_string(),
            false,
        ),
        _ => {
            return Err(syn::Error::new(
                span,
                "unsupported literal; only numbers are allowed in expressions",
            ))
        }
    };
    if !matches!(suffix.as_str(), "" | "f64" | "f32" | "i32") || (!integer && suffix == "i32") {
        return Err(syn::Error::new(
            span,
            format!("unsupported literal suffix `{suffix}`; use a plain number or `f64`"),
        ));
    }
    let value = exact_decimal(&digits).map_err(|message| syn::Error::new(span, message))?;
    Ok(RawExpr::Number {
        value,
        integer_literal: integer && matches!(suffix.as_str(), "" | "i32"),
        span,
    })
}

/// Reads `[-]digits[.digits][(e|E)[+|-]digits]` (underscores already removed) as an exact
/// rational: `0.1` is 1/10, not the nearest binary fraction.
pub(crate) fn exact_decimal(text: &str) -> Result<BigRational, String> {
    let (negative, text) = match text.strip_prefix('-') {
        Some(rest) => (true, rest),
        None => (false, text),
    };
    let (mantissa, exponent) = match text.find(['e', 'E']) {
        Some(at) => (&text[..at], Some(&text[at + 1..])),
        None => (text, None),
    };
    let (whole, fraction) = match mantissa.find('.') {
        Some(at) => (&mantissa[..at], &mantissa[at + 1..]),
        None => (mantissa, ""),
    };
    let all_digits = |s: &str| s.bytes().all(|b| b.is_ascii_digit());
    if whole.is_empty() || !all_digits(whole) || !all_digits(fraction) {
        return Err(format!("malformed number literal `{text}`"));
    }
    if whole.len() + fraction.len() > MAX_LITERAL_DIGITS {
        return Err(format!(
            "number literal has more than {MAX_LITERAL_DIGITS} digits"
        ));
    }
    let exponent: i64 = match exponent {
        None => 0,
        Some(e) => {
            let unsigned = e.strip_prefix(['+', '-']).unwrap_or(e);
            if unsigned.is_empty() || !all_digits(unsigned) {
                return Err(format!("malformed exponent in number literal `{text}`"));
            }
            match e.parse::<i64>() {
                Ok(value) if value.abs() <= MAX_LITERAL_EXPONENT => value,
                _ => {
                    return Err(format!(
                        "exponent of number literal `{text}` is out of range \
                         (at most {MAX_LITERAL_EXPONENT} in magnitude)"
                    ))
                }
            }
        }
    };
    let digits = format!("{whole}{fraction}");
    let mut numerator = BigInt::parse_bytes(digits.as_bytes(), 10).unwrap_or_else(BigInt::zero);
    if negative {
        numerator = -numerator;
    }
    // The exponent is bounded above, so this fits easily.
    let scale = exponent - fraction.len() as i64;
    let ten = BigInt::from(10u32);
    let power = num_traits::pow(ten, scale.unsigned_abs() as usize);
    let value = if scale >= 0 {
        BigRational::from_integer(numerator * power)
    } else {
        BigRational::new(numerator, power)
    };
    Ok(value)
}
