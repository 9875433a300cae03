//! Name resolution and the cross-checks between lines of a declaration.
//!
//! Every check that needs more than one token lives here, in one place: duplicate names,
//! scoping of `let` helpers, differentials and velocities, component indices, repeated
//! components, and whether a struct defines its metric at all. Errors are collected, not
//! returned early, so one run reports them all.

use std::collections::{BTreeMap, BTreeSet};

use proc_macro2::{Ident, Span};

use super::ast::{
    BinaryOp, Constant, Expr, File, Func, Item, MetricDecl, Tensor, VarKind, KNOWN_OPTIONS,
};
use super::diagnostic::Collector;
use super::syntax::{join_spans, ListKind, RawExpr, RawFile, RawIndex, RawStmt, RawStruct};
use super::MAX_COORDS;

/// Resolves every struct of `raw`; errors go to `errors` (and the result is then not used).
pub(crate) fn validate(raw: RawFile, errors: &mut Collector) -> File {
    let mut seen: BTreeMap<String, Span> = BTreeMap::new();
    let mut metrics = Vec::new();
    for decl in raw.structs {
        let name = decl.name.to_string();
        if let Some(first) = seen.get(&name) {
            errors.error(
                decl.name.span(),
                format!("metric `{name}` is declared twice{}", first_at(*first)),
            );
        } else {
            seen.insert(name, decl.name.span());
        }
        if decl.broken_declaration {
            continue;
        }
        if let Some(metric) = StructChecker::check(decl, errors) {
            metrics.push(metric);
        }
    }
    File { metrics }
}

/// What a declared name is, for duplicate messages and lookups.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NameKind {
    Coordinate(usize),
    Parameter(usize),
    Let(usize),
    Invariant,
}

impl NameKind {
    fn describe(self) -> &'static str {
        match self {
            NameKind::Coordinate(_) => "a coordinate",
            NameKind::Parameter(_) => "a parameter",
            NameKind::Let(_) => "a `let` helper",
            NameKind::Invariant => "an invariant",
        }
    }
}

/// Where an expression stands, which decides what it may use.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Context {
    /// A `let` or a component: coordinates, parameters and earlier helpers.
    Plain,
    /// A line element: also differentials `dX`.
    LineElement,
    /// An invariant: also `u[X]` or `p[X]`.
    Invariant,
}

/// Names no declaration may take, and why.
fn reserved(name: &str) -> Option<&'static str> {
    match name {
        "PI" => Some("the constant π"),
        "E" => Some("the constant e"),
        "u" => Some("velocity components `u[..]` in invariants"),
        "p" => Some("momentum components `p[..]` in invariants"),
        _ => None,
    }
}

struct StructChecker<'e> {
    errors: &'e mut Collector,
    coords: Vec<Ident>,
    params: Vec<Ident>,
    lets: Vec<Ident>,
    names: BTreeMap<String, (NameKind, Span)>,
    /// Every helper name with the span of its (first) `let`, to tell "used too early" from
    /// "unknown".
    later_lets: BTreeMap<String, Span>,
}

impl<'e> StructChecker<'e> {
    fn check(decl: RawStruct, errors: &'e mut Collector) -> Option<MetricDecl> {
        let before = errors.count();
        let mut lists: BTreeMap<&'static str, (Ident, Vec<Ident>)> = BTreeMap::new();
        let mut later_lets = BTreeMap::new();
        for stmt in &decl.body {
            match stmt {
                RawStmt::List { kind, key, names } => {
                    if lists.contains_key(kind.keyword()) {
                        errors.error(key.span(), format!("`{}` is given twice", kind.keyword()));
                    } else {
                        lists.insert(kind.keyword(), (key.clone(), names.clone()));
                    }
                }
                RawStmt::Let { name, .. } => {
                    later_lets.entry(name.to_string()).or_insert(name.span());
                }
                _ => {}
            }
        }
        let Some((coords_key, coords)) = lists.remove(ListKind::Coords.keyword()) else {
            errors.error(
                decl.name.span(),
                format!(
                    "metric `{}` has no `coords: [..]` line naming its 1 to {MAX_COORDS} \
                     coordinates",
                    decl.name
                ),
            );
            return None;
        };
        if coords.is_empty() {
            errors.error(
                coords_key.span(),
                format!("`coords` needs 1 to {MAX_COORDS} coordinate names"),
            );
            return None;
        }
        if coords.len() > MAX_COORDS {
            errors.error(
                coords[MAX_COORDS].span(),
                format!(
                    "too many coordinates: {} given, at most {MAX_COORDS}",
                    coords.len()
                ),
            );
        }
        let params = lists
            .remove(ListKind::Params.keyword())
            .map(|(_, names)| names)
            .unwrap_or_default();
        let options = lists
            .remove(ListKind::Options.keyword())
            .map(|(_, names)| names)
            .unwrap_or_default();

        let mut checker = StructChecker {
            errors,
            coords: coords.clone(),
            params: params.clone(),
            lets: Vec::new(),
            names: BTreeMap::new(),
            later_lets,
        };
        for (k, name) in coords.iter().enumerate() {
            checker.declare(name, NameKind::Coordinate(k));
        }
        for (k, name) in params.iter().enumerate() {
            checker.declare(name, NameKind::Parameter(k));
        }
        checker.check_options(&options);
        let items = checker.items(&decl);
        let lets = checker.lets;

        if errors_after(checker.errors, before) || decl.has_syntax_error {
            return None;
        }
        Some(MetricDecl {
            docs: decl.docs,
            attrs: decl.attrs,
            vis: decl.vis,
            name: decl.name,
            coords,
            params,
            lets,
            options,
            items,
        })
    }

    fn check_options(&mut self, options: &[Ident]) {
        let mut seen: BTreeSet<String> = BTreeSet::new();
        for option in options {
            let name = option.to_string();
            if !KNOWN_OPTIONS.contains(&name.as_str()) {
                self.errors.error(
                    option.span(),
                    format!(
                        "unknown option `{name}`; known options: {}",
                        KNOWN_OPTIONS.join(", ")
                    ),
                );
            } else if !seen.insert(name.clone()) {
                self.errors
                    .error(option.span(), format!("option `{name}` is given twice"));
            }
        }
    }

    /// Adds a name to the struct's one namespace; `false` (after an error) if it is taken.
    fn declare(&mut self, name: &Ident, kind: NameKind) -> bool {
        let text = name.to_string();
        if let Some(what) = reserved(&text) {
            self.errors.error(
                name.span(),
                format!("the name `{text}` is reserved for {what}; choose another name"),
            );
            // Still known, so that its uses are not reported as well.
            self.names.entry(text).or_insert((kind, name.span()));
            return false;
        }
        if let Some((previous, at)) = self.names.get(&text) {
            self.errors.error(
                name.span(),
                format!(
                    "the name `{text}` is already used by {}{}",
                    previous.describe(),
                    at_line(*at)
                ),
            );
            return false;
        }
        self.names.insert(text, (kind, name.span()));
        true
    }

    fn items(&mut self, decl: &RawStruct) -> Vec<Item> {
        let mut items = Vec::new();
        let mut components: BTreeMap<(Tensor, usize, usize), (Expr, Span)> = BTreeMap::new();
        let mut first_metric_component: Option<Span> = None;
        let mut line_element: Option<Span> = None;
        for stmt in &decl.body {
            match stmt {
                RawStmt::List { .. } => {}
                RawStmt::Let { name, value } => {
                    let value = self.resolve(value, Context::Plain);
                    let index = self.lets.len();
                    if self.declare(name, NameKind::Let(index)) {
                        self.lets.push(name.clone());
                        if let Some(value) = value {
                            items.push(Item::Let {
                                name: name.clone(),
                                value,
                            });
                        }
                    }
                }
                RawStmt::Component {
                    which,
                    indices,
                    index_span,
                    value,
                } => {
                    let i = self.coordinate_index(&indices[0]);
                    let j = self.coordinate_index(&indices[1]);
                    let value = self.resolve(value, Context::Plain);
                    if *which == Tensor::Metric {
                        if let Some(at) = line_element {
                            self.errors.error(
                                *index_span,
                                format!(
                                    "`g[..]` lines and a `line_element`{} cannot both define \
                                     the metric; use one or the other",
                                    at_line(at)
                                ),
                            );
                        }
                        first_metric_component.get_or_insert(*index_span);
                    }
                    let (Some(i), Some(j), Some(value)) = (i, j, value) else {
                        continue;
                    };
                    let key = (*which, i.min(j), i.max(j));
                    if let Some((previous, at)) = components.get(&key) {
                        if *previous != value {
                            self.errors.error(
                                *index_span,
                                format!(
                                    "component `{}[{}, {}]` is set twice with different \
                                     expressions{}; `{0}[{1}, {2}]` and `{0}[{2}, {1}]` are \
                                     the same component",
                                    which.keyword(),
                                    self.coords[i],
                                    self.coords[j],
                                    first_at(*at)
                                ),
                            );
                        }
                        continue;
                    }
                    components.insert(key, (value.clone(), *index_span));
                    items.push(Item::Component {
                        which: *which,
                        i,
                        j,
                        index_span: *index_span,
                        value,
                    });
                }
                RawStmt::LineElement { key, value } => {
                    if let Some(at) = line_element {
                        self.errors.error(
                            key.span(),
                            format!("`line_element` is given twice{}", first_at(at)),
                        );
                    } else if let Some(at) = first_metric_component {
                        self.errors.error(
                            key.span(),
                            format!(
                                "a `line_element` and `g[..]` lines{} cannot both define the \
                                 metric; use one or the other",
                                at_line(at)
                            ),
                        );
                    }
                    line_element.get_or_insert(key.span());
                    if let Some(value) = self.resolve(value, Context::LineElement) {
                        items.push(Item::LineElement {
                            value,
                            span: key.span(),
                        });
                    }
                }
                RawStmt::Invariant { name, value } => {
                    let value = self.resolve(value, Context::Invariant);
                    if self.declare(name, NameKind::Invariant) {
                        if let Some(value) = value {
                            items.push(Item::Invariant {
                                name: name.clone(),
                                value,
                            });
                        }
                    }
                }
            }
        }
        // After a syntax error the missing components may be on the unreadable line.
        if first_metric_component.is_none() && line_element.is_none() && !decl.has_syntax_error {
            self.errors.error(
                decl.name.span(),
                format!(
                    "metric `{}` defines no components: write `g[i, j] = ..;` lines or one \
                     `line_element = ..;`",
                    decl.name
                ),
            );
        }
        items
    }

    /// The coordinate number an index names.
    fn coordinate_index(&mut self, index: &RawIndex) -> Option<usize> {
        match index {
            RawIndex::Number { value, span } => {
                if *value < self.coords.len() {
                    Some(*value)
                } else {
                    let shown = if *value == usize::MAX {
                        "this index".to_string()
                    } else {
                        format!("index {value}")
                    };
                    self.errors.error(
                        *span,
                        format!(
                            "{shown} is out of range: coordinates are numbered 0 to {}",
                            self.coords.len() - 1
                        ),
                    );
                    None
                }
            }
            RawIndex::Name(name) => match self.coords.iter().position(|c| c == name) {
                Some(k) => Some(k),
                None => {
                    self.errors.error(
                        name.span(),
                        format!(
                            "unknown coordinate `{name}` in index; coordinates are {}",
                            list_names(&self.coords)
                        ),
                    );
                    None
                }
            },
        }
    }

    /// Resolves an expression; `None` after recording at least one error. Keeps going after
    /// an error so that every mistake in the expression is reported.
    ///
    /// Each kind of node has its own function so that this recursive one keeps a small
    /// stack frame (trees may be up to [`super::MAX_EXPR_HEIGHT`] high).
    fn resolve(&mut self, expr: &RawExpr, context: Context) -> Option<Expr> {
        match expr {
            RawExpr::Number { value, span, .. } => Some(Expr::Number {
                value: value.clone(),
                span: *span,
            }),
            RawExpr::Path { segments, span } => self.resolve_path(segments, *span, context),
            RawExpr::Index {
                base,
                indices,
                span,
            } => self.resolve_index(base, indices, *span, context),
            RawExpr::Neg { arg, span, .. } => self.resolve_neg(arg, *span, context),
            RawExpr::Binary {
                op, lhs, rhs, span, ..
            } => self.resolve_binary(*op, lhs, rhs, *span, context),
            RawExpr::Call {
                path, args, span, ..
            } => self.resolve_call(path, args, *span, context),
            RawExpr::MethodCall {
                receiver,
                method,
                args,
                span,
                ..
            } => self.resolve_method_call(receiver, method, args, *span, context),
        }
    }

    fn resolve_neg(&mut self, arg: &RawExpr, span: Span, context: Context) -> Option<Expr> {
        let arg = self.resolve(arg, context)?;
        Some(Expr::Neg {
            arg: Box::new(arg),
            span,
        })
    }

    fn resolve_binary(
        &mut self,
        op: BinaryOp,
        lhs: &RawExpr,
        rhs: &RawExpr,
        span: Span,
        context: Context,
    ) -> Option<Expr> {
        let lhs = self.resolve(lhs, context);
        let rhs = self.resolve(rhs, context);
        Some(Expr::Binary {
            op,
            lhs: Box::new(lhs?),
            rhs: Box::new(rhs?),
            span,
        })
    }

    fn resolve_call(
        &mut self,
        path: &[Ident],
        args: &[RawExpr],
        span: Span,
        context: Context,
    ) -> Option<Expr> {
        let first = path.first()?.span();
        let last = path.last()?.span();
        let name_span = join_spans(first, last, last);
        let func = self.function(path, name_span);
        let resolved = self.resolve_all(args, context);
        let func = func?;
        if args.len() != func.arity() {
            self.errors.error(
                name_span,
                format!(
                    "`{}` takes {}, found {}",
                    func.name(),
                    count(func.arity(), "argument"),
                    args.len()
                ),
            );
            return None;
        }
        let raw: Vec<&RawExpr> = args.iter().collect();
        self.call(func, &raw, resolved?, span)
    }

    fn resolve_method_call(
        &mut self,
        receiver: &RawExpr,
        method: &Ident,
        args: &[RawExpr],
        span: Span,
        context: Context,
    ) -> Option<Expr> {
        let receiver_resolved = self.resolve(receiver, context);
        let func = self.method(method);
        let resolved = self.resolve_all(args, context);
        let func = func?;
        if args.len() + 1 != func.arity() {
            self.errors.error(
                method.span(),
                format!(
                    "method `{}` takes {}, found {}",
                    func.name(),
                    count(func.arity() - 1, "argument"),
                    args.len()
                ),
            );
            return None;
        }
        let mut raw: Vec<&RawExpr> = vec![receiver];
        raw.extend(args.iter());
        let mut all = vec![receiver_resolved?];
        all.extend(resolved?);
        self.call(func, &raw, all, span)
    }

    fn resolve_all(&mut self, args: &[RawExpr], context: Context) -> Option<Vec<Expr>> {
        let resolved: Vec<Option<Expr>> = args.iter().map(|a| self.resolve(a, context)).collect();
        resolved.into_iter().collect()
    }

    /// Builds a call once its arity is known to be right; checks `powi`'s exponent.
    fn call(
        &mut self,
        func: Func,
        raw: &[&RawExpr],
        mut args: Vec<Expr>,
        span: Span,
    ) -> Option<Expr> {
        if func == Func::Powi {
            let exponent = self.powi_exponent(raw[1])?;
            args[1] = exponent;
        }
        Some(Expr::Call { func, args, span })
    }

    /// `powi` needs an integer literal (possibly negated), as `f64::powi` takes an `i32`.
    fn powi_exponent(&mut self, raw: &RawExpr) -> Option<Expr> {
        let (negated, literal) = match raw {
            RawExpr::Neg { arg, .. } => (true, &**arg),
            other => (false, other),
        };
        if let RawExpr::Number {
            value,
            integer_literal: true,
            ..
        } = literal
        {
            let value = if negated {
                -value.clone()
            } else {
                value.clone()
            };
            let fits = i32::try_from(value.to_integer()).is_ok();
            if fits {
                return Some(Expr::Number {
                    value,
                    span: raw.span(),
                });
            }
            self.errors.error(
                raw.span(),
                "the exponent of `powi` is out of range for an `i32`",
            );
            return None;
        }
        self.errors.error(
            raw.span(),
            "the exponent of `powi` must be an integer literal such as `2` or `-3`; \
             use `powf` for other exponents",
        );
        None
    }

    /// The function named by the path of a call `f(..)` (`sin` or `f64::sin`).
    fn function(&mut self, path: &[Ident], span: Span) -> Option<Func> {
        let name = match path {
            [name] => name,
            [ty, name] if ty == "f64" => name,
            _ => {
                self.errors
                    .error(span, format!("unsupported function `{}`", path_text(path)));
                return None;
            }
        };
        let func = Func::from_name(&name.to_string());
        if func.is_none() {
            self.errors.error(
                span,
                format!(
                    "unsupported function `{}`; supported: {}",
                    path_text(path),
                    supported_functions()
                ),
            );
        }
        func
    }

    fn method(&mut self, method: &Ident) -> Option<Func> {
        let func = Func::from_name(&method.to_string());
        if func.is_none() {
            self.errors.error(
                method.span(),
                format!(
                    "unsupported function `{method}`; supported: {}",
                    supported_functions()
                ),
            );
        }
        func
    }

    fn resolve_index(
        &mut self,
        base: &Ident,
        indices: &[RawIndex],
        span: Span,
        context: Context,
    ) -> Option<Expr> {
        let is_velocity = base == "u";
        if !is_velocity && base != "p" {
            self.errors.error(
                base.span(),
                format!(
                    "`{base}[..]` cannot be used in an expression; only `u[..]` and `p[..]` \
                     (in invariants) are indexed"
                ),
            );
            return None;
        }
        let [index] = indices else {
            self.errors.error(
                span,
                format!("expected one index, as in `{base}[{}]`", self.coords[0]),
            );
            return None;
        };
        let coord = self.coordinate_index(index);
        if context != Context::Invariant {
            let what = if is_velocity { "velocity" } else { "momentum" };
            self.errors.error(
                span,
                format!("{what} `{base}[..]` is only allowed in an `invariant`"),
            );
            return None;
        }
        let coord = coord?;
        Some(if is_velocity {
            Expr::Velocity { coord, span }
        } else {
            Expr::Momentum { coord, span }
        })
    }

    fn resolve_path(&mut self, segments: &[Ident], span: Span, context: Context) -> Option<Expr> {
        let [name] = segments else {
            return self.constant_path(segments, span);
        };
        let text = name.to_string();
        if let Some((kind, _)) = self.names.get(&text) {
            let kind = match *kind {
                NameKind::Coordinate(k) => VarKind::Coordinate(k),
                NameKind::Parameter(k) => VarKind::Parameter(k),
                NameKind::Let(k) => VarKind::Let(k),
                NameKind::Invariant => {
                    self.errors.error(
                        name.span(),
                        format!("invariant `{text}` cannot be used in an expression"),
                    );
                    return None;
                }
            };
            return Some(Expr::Var {
                name: name.clone(),
                kind,
            });
        }
        let constant = match text.as_str() {
            "PI" => Some(Constant::Pi),
            "E" => Some(Constant::E),
            _ => None,
        };
        if let Some(c) = constant {
            return Some(Expr::Var {
                name: name.clone(),
                kind: VarKind::Constant(c),
            });
        }
        if let Some(k) = self.differential(&text) {
            if context == Context::LineElement {
                return Some(Expr::Var {
                    name: name.clone(),
                    kind: VarKind::Differential(k),
                });
            }
            self.errors.error(
                name.span(),
                format!("differential `{text}` is only allowed in a `line_element`"),
            );
            return None;
        }
        if text == "u" || text == "p" {
            self.errors.error(
                name.span(),
                format!(
                    "`{text}` must be indexed by a coordinate, as in `{text}[{}]`, inside an \
                     `invariant`",
                    self.coords[0]
                ),
            );
            return None;
        }
        if let Some(at) = self.later_lets.get(&text) {
            self.errors.error(
                name.span(),
                format!("let `{text}` used before it is defined{}", defined_at(*at)),
            );
            return None;
        }
        let message = format!("unknown identifier `{text}`{}", self.scope_hint());
        self.errors.error(name.span(), message);
        None
    }

    /// The coordinate whose differential `text` is (`dr` for coordinate `r`).
    fn differential(&self, text: &str) -> Option<usize> {
        let coord = text.strip_prefix('d')?;
        self.coords.iter().position(|c| c == coord)
    }

    fn constant_path(&mut self, segments: &[Ident], span: Span) -> Option<Expr> {
        let text: Vec<String> = segments.iter().map(Ident::to_string).collect();
        let tail: Vec<&str> = match text.first().map(String::as_str) {
            Some("std" | "core") => text[1..].iter().map(String::as_str).collect(),
            _ => text.iter().map(String::as_str).collect(),
        };
        let constant = match tail.as_slice() {
            ["f64", "consts", "PI"] => Some(Constant::Pi),
            ["f64", "consts", "E"] => Some(Constant::E),
            _ => None,
        };
        match constant {
            Some(c) => Some(Expr::Var {
                name: Ident::new(c.name(), span),
                kind: VarKind::Constant(c),
            }),
            None => {
                self.errors.error(
                    span,
                    format!(
                        "unsupported path `{}`; the named constants are `PI` and `E`",
                        path_text(segments)
                    ),
                );
                None
            }
        }
    }

    /// "; coordinates are t, r; parameters are m" when the scope is short enough to list.
    fn scope_hint(&self) -> String {
        const LISTABLE: usize = 24;
        if self.coords.len() + self.params.len() + self.lets.len() > LISTABLE {
            return String::new();
        }
        let mut hint = format!("; coordinates are {}", list_names(&self.coords));
        if !self.params.is_empty() {
            hint += &format!("; parameters are {}", list_names(&self.params));
        }
        if !self.lets.is_empty() {
            hint += &format!("; helpers so far are {}", list_names(&self.lets));
        }
        hint
    }
}

/// " (first at line N)", or nothing where the line is unknown.
fn first_at(span: Span) -> String {
    match span.start().line {
        0 => String::new(),
        line => format!(" (first at line {line})"),
    }
}

/// " (line N)", or nothing where the line is unknown.
fn at_line(span: Span) -> String {
    match span.start().line {
        0 => String::new(),
        line => format!(" (line {line})"),
    }
}

/// " (defined at line N)", or nothing where the line is unknown.
fn defined_at(span: Span) -> String {
    match span.start().line {
        0 => String::new(),
        line => format!(" (defined at line {line})"),
    }
}

fn errors_after(errors: &Collector, before: usize) -> bool {
    errors.count() > before
}

fn list_names(names: &[Ident]) -> String {
    let names: Vec<String> = names.iter().map(Ident::to_string).collect();
    names.join(", ")
}

fn path_text(path: &[Ident]) -> String {
    let names: Vec<String> = path.iter().map(Ident::to_string).collect();
    names.join("::")
}

fn supported_functions() -> String {
    let names: Vec<&str> = Func::ALL.iter().map(|f| f.name()).collect();
    names.join(", ")
}

fn count(n: usize, noun: &str) -> String {
    match n {
        0 => format!("no {noun}s"),
        1 => format!("1 {noun}"),
        _ => format!("{n} {noun}s"),
    }
}
