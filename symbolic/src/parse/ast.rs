//! The checked syntax tree of a metric declaration.
//!
//! Every name here is already resolved: variables know whether they are coordinates,
//! parameters or helpers, component indices are coordinate numbers, and numbers are exact
//! rationals. Spans are kept wherever a later stage may need to blame a token.

use std::fmt;

use num_rational::BigRational;
use num_traits::{One, Signed};
use proc_macro2::{Ident, Span};

/// A whole declaration: the body of `geokern::metric! { .. }` or one `.gk` file.
#[derive(Debug, Clone)]
pub struct File {
    /// The metrics declared, in source order (at least one).
    pub metrics: Vec<MetricDecl>,
}

impl File {
    /// The metric named `name`, if the file declares one.
    pub fn metric(&self, name: &str) -> Option<&MetricDecl> {
        self.metrics.iter().find(|m| m.name == name)
    }
}

/// One `struct NAME { .. }` block.
#[derive(Debug, Clone)]
pub struct MetricDecl {
    /// The `///` doc lines, trimmed, in order.
    pub docs: Vec<String>,
    /// Outer attributes other than docs (such as `#[derive(..)]`), passed through to the
    /// generated struct.
    pub attrs: Vec<syn::Attribute>,
    /// The struct's visibility.
    pub vis: syn::Visibility,
    /// The struct's name.
    pub name: Ident,
    /// Coordinate names; coordinate `k` is `coords[k]` (1 to 16 of them).
    pub coords: Vec<Ident>,
    /// Parameter names (runtime values), in declared order.
    pub params: Vec<Ident>,
    /// Helper names from `let` lines, in definition order; [`VarKind::Let`]`(k)` names
    /// `lets[k]`, whose value is [`MetricDecl::let_value`]`(k)`.
    pub lets: Vec<Ident>,
    /// Names from `options: [..]`; each is one of [`KNOWN_OPTIONS`].
    pub options: Vec<Ident>,
    /// The `let`, component, line-element and invariant lines in source order. A component
    /// repeated with an identical expression is kept once.
    pub items: Vec<Item>,
}

/// The option names that `options: [..]` accepts.
pub const KNOWN_OPTIONS: &[&str] = &["curvature"];

impl MetricDecl {
    /// Number of coordinates, the dimension of the manifold.
    pub fn dim(&self) -> usize {
        self.coords.len()
    }

    /// Whether `options: [..]` names `option`.
    pub fn has_option(&self, option: &str) -> bool {
        self.options.iter().any(|o| o == option)
    }

    /// The defining expression of helper `lets[k]`.
    pub fn let_value(&self, k: usize) -> Option<&Expr> {
        self.items
            .iter()
            .filter_map(|item| match item {
                Item::Let { value, .. } => Some(value),
                _ => None,
            })
            .nth(k)
    }

    /// The line element, if the metric is given as one.
    pub fn line_element(&self) -> Option<&Expr> {
        self.items.iter().find_map(|item| match item {
            Item::LineElement { value, .. } => Some(value),
            _ => None,
        })
    }

    /// The `(i, j, value)` triples set for `which`, in source order, as written (not
    /// symmetrised: `g[t, phi]` gives `(0, 3, ..)` only).
    pub fn components(&self, which: Tensor) -> impl Iterator<Item = (usize, usize, &Expr)> {
        self.items.iter().filter_map(move |item| match item {
            Item::Component {
                which: w,
                i,
                j,
                value,
                ..
            } if *w == which => Some((*i, *j, value)),
            _ => None,
        })
    }

    /// The user invariants, in source order.
    pub fn invariants(&self) -> impl Iterator<Item = (&Ident, &Expr)> {
        self.items.iter().filter_map(|item| match item {
            Item::Invariant { name, value } => Some((name, value)),
            _ => None,
        })
    }
}

/// Which tensor a component line sets.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Tensor {
    /// `g[i, j]`, the metric g_ij.
    Metric,
    /// `ginv[i, j]`, the inverse metric g^ij.
    InverseMetric,
}

impl Tensor {
    /// The name written in declarations: `g` or `ginv`.
    pub fn keyword(self) -> &'static str {
        match self {
            Tensor::Metric => "g",
            Tensor::InverseMetric => "ginv",
        }
    }
}

/// One line of a metric body.
#[derive(Debug, Clone)]
pub enum Item {
    /// `let NAME = EXPR;`, a helper usable in later lines.
    Let {
        /// The helper's name.
        name: Ident,
        /// Its value (it uses only coordinates, parameters and earlier helpers).
        value: Expr,
    },
    /// `g[i, j] = EXPR;` or `ginv[i, j] = EXPR;`.
    Component {
        /// The tensor set.
        which: Tensor,
        /// First index, a coordinate number.
        i: usize,
        /// Second index, a coordinate number.
        j: usize,
        /// The span of `[i, j]`.
        index_span: Span,
        /// The component's value.
        value: Expr,
    },
    /// `line_element = EXPR;`, the metric as a quadratic form in differentials.
    LineElement {
        /// The quadratic form; it may contain [`VarKind::Differential`] variables.
        value: Expr,
        /// The span of the `line_element` keyword.
        span: Span,
    },
    /// `invariant NAME = EXPR;`, a quantity to monitor along a geodesic.
    Invariant {
        /// The invariant's name.
        name: Ident,
        /// Its value; it may contain [`Expr::Velocity`] or [`Expr::Momentum`].
        value: Expr,
    },
}

/// What a variable name refers to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum VarKind {
    /// Coordinate number `k`.
    Coordinate(usize),
    /// Parameter number `k`.
    Parameter(usize),
    /// Helper `lets[k]`.
    Let(usize),
    /// The differential `dX` of coordinate number `k` (only in a line element).
    Differential(usize),
    /// A named mathematical constant.
    Constant(Constant),
}

/// A named mathematical constant.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Constant {
    /// π, written `PI` or `std::f64::consts::PI`.
    Pi,
    /// Euler's number e, written `E` or `std::f64::consts::E`.
    E,
}

impl Constant {
    /// The name as written in declarations.
    pub fn name(self) -> &'static str {
        match self {
            Constant::Pi => "PI",
            Constant::E => "E",
        }
    }
}

/// A binary arithmetic operator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum BinaryOp {
    /// `+`
    Add,
    /// `-`
    Sub,
    /// `*`
    Mul,
    /// `/`
    Div,
}

impl BinaryOp {
    /// The operator's symbol.
    pub fn symbol(self) -> &'static str {
        match self {
            BinaryOp::Add => "+",
            BinaryOp::Sub => "-",
            BinaryOp::Mul => "*",
            BinaryOp::Div => "/",
        }
    }

    fn precedence(self) -> u8 {
        match self {
            BinaryOp::Add | BinaryOp::Sub => 1,
            BinaryOp::Mul | BinaryOp::Div => 2,
        }
    }
}

/// A supported function, written `x.f()` / `f(x)`, or `x.powi(n)` / `powi(x, n)` and
/// `x.powf(y)` / `powf(x, y)`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Func {
    /// Square root.
    Sqrt,
    /// Sine.
    Sin,
    /// Cosine.
    Cos,
    /// Tangent.
    Tan,
    /// Exponential.
    Exp,
    /// Natural logarithm.
    Ln,
    /// Hyperbolic sine.
    Sinh,
    /// Hyperbolic cosine.
    Cosh,
    /// Hyperbolic tangent.
    Tanh,
    /// Inverse sine.
    Asin,
    /// Inverse cosine.
    Acos,
    /// Inverse tangent.
    Atan,
    /// Integer power; the exponent (second argument) is an integer [`Expr::Number`].
    Powi,
    /// Real power `x^y`.
    Powf,
}

impl Func {
    /// Every supported function, in the order error messages list them.
    pub const ALL: [Func; 14] = [
        Func::Sqrt,
        Func::Sin,
        Func::Cos,
        Func::Tan,
        Func::Exp,
        Func::Ln,
        Func::Sinh,
        Func::Cosh,
        Func::Tanh,
        Func::Asin,
        Func::Acos,
        Func::Atan,
        Func::Powi,
        Func::Powf,
    ];

    /// The function's name as written (the `f64` method name).
    pub fn name(self) -> &'static str {
        match self {
            Func::Sqrt => "sqrt",
            Func::Sin => "sin",
            Func::Cos => "cos",
            Func::Tan => "tan",
            Func::Exp => "exp",
            Func::Ln => "ln",
            Func::Sinh => "sinh",
            Func::Cosh => "cosh",
            Func::Tanh => "tanh",
            Func::Asin => "asin",
            Func::Acos => "acos",
            Func::Atan => "atan",
            Func::Powi => "powi",
            Func::Powf => "powf",
        }
    }

    /// The function called `name`, if supported.
    pub fn from_name(name: &str) -> Option<Func> {
        Func::ALL.into_iter().find(|f| f.name() == name)
    }

    /// Number of arguments, counting the receiver of the method form.
    pub fn arity(self) -> usize {
        match self {
            Func::Powi | Func::Powf => 2,
            _ => 1,
        }
    }
}

/// An expression, with every name resolved.
///
/// `PartialEq` compares structure only: spans are ignored, so two lines written at different
/// places compare equal when they say the same thing.
#[derive(Debug, Clone)]
pub enum Expr {
    /// An exact number (`0.1` is 1/10).
    Number {
        /// The value.
        value: BigRational,
        /// The literal's span.
        span: Span,
    },
    /// A named value.
    Var {
        /// The name as written (for a path such as `std::f64::consts::PI`, its last segment).
        name: Ident,
        /// What it refers to.
        kind: VarKind,
    },
    /// `u[X]`: velocity component of coordinate number `coord` (only in invariants).
    Velocity {
        /// Coordinate number.
        coord: usize,
        /// The span of `u[X]`.
        span: Span,
    },
    /// `p[X]`: momentum component of coordinate number `coord` (only in invariants).
    Momentum {
        /// Coordinate number.
        coord: usize,
        /// The span of `p[X]`.
        span: Span,
    },
    /// `-arg`.
    Neg {
        /// The negated expression.
        arg: Box<Expr>,
        /// The span of the whole negation (or of the `-` where spans cannot be joined).
        span: Span,
    },
    /// `lhs op rhs`.
    Binary {
        /// The operator.
        op: BinaryOp,
        /// Left operand.
        lhs: Box<Expr>,
        /// Right operand.
        rhs: Box<Expr>,
        /// The span of the whole operation (or of the operator where spans cannot be joined).
        span: Span,
    },
    /// A function call; the method form's receiver is the first argument.
    Call {
        /// The function.
        func: Func,
        /// Its arguments, `func.arity()` of them.
        args: Vec<Expr>,
        /// The span of the call (or of the function name where spans cannot be joined).
        span: Span,
    },
}

impl Expr {
    /// The span to blame for this expression.
    pub fn span(&self) -> Span {
        match self {
            Expr::Number { span, .. }
            | Expr::Velocity { span, .. }
            | Expr::Momentum { span, .. }
            | Expr::Neg { span, .. }
            | Expr::Binary { span, .. }
            | Expr::Call { span, .. } => *span,
            Expr::Var { name, .. } => name.span(),
        }
    }

    /// The value as an `i64`, if this is an integer [`Expr::Number`] that fits.
    pub fn as_integer(&self) -> Option<i64> {
        match self {
            Expr::Number { value, .. } if value.is_integer() => {
                i64::try_from(value.to_integer()).ok()
            }
            _ => None,
        }
    }

    /// Height of the tree: 1 for a leaf.
    pub fn height(&self) -> usize {
        match self {
            Expr::Number { .. }
            | Expr::Var { .. }
            | Expr::Velocity { .. }
            | Expr::Momentum { .. } => 1,
            Expr::Neg { arg, .. } => 1 + arg.height(),
            Expr::Binary { lhs, rhs, .. } => 1 + lhs.height().max(rhs.height()),
            Expr::Call { args, .. } => 1 + args.iter().map(Expr::height).max().unwrap_or(0),
        }
    }

    fn precedence(&self) -> u8 {
        match self {
            Expr::Binary { op, .. } => op.precedence(),
            Expr::Neg { .. } => 3,
            // A fraction prints as `n/d`, a division.
            Expr::Number { value, .. } if !value.is_integer() => 2,
            Expr::Number { value, .. } if value.is_negative() => 3,
            _ => 4,
        }
    }
}

impl PartialEq for Expr {
    fn eq(&self, other: &Expr) -> bool {
        match (self, other) {
            (Expr::Number { value: a, .. }, Expr::Number { value: b, .. }) => a == b,
            (Expr::Var { name: a, kind: ka }, Expr::Var { name: b, kind: kb }) => {
                ka == kb && a == b
            }
            (Expr::Velocity { coord: a, .. }, Expr::Velocity { coord: b, .. })
            | (Expr::Momentum { coord: a, .. }, Expr::Momentum { coord: b, .. }) => a == b,
            (Expr::Neg { arg: a, .. }, Expr::Neg { arg: b, .. }) => a == b,
            (
                Expr::Binary {
                    op: oa,
                    lhs: la,
                    rhs: ra,
                    ..
                },
                Expr::Binary {
                    op: ob,
                    lhs: lb,
                    rhs: rb,
                    ..
                },
            ) => oa == ob && la == lb && ra == rb,
            (
                Expr::Call {
                    func: fa, args: aa, ..
                },
                Expr::Call {
                    func: fb, args: ab, ..
                },
            ) => fa == fb && aa == ab,
            _ => false,
        }
    }
}

impl Eq for Expr {}

/// Writes the expression back in declaration syntax (method forms, minimal parentheses),
/// for messages and tests.
impl fmt::Display for Expr {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Expr::Number { value, .. } => write_number(f, value),
            Expr::Var { name, kind } => match kind {
                VarKind::Constant(c) => f.write_str(c.name()),
                _ => write!(f, "{name}"),
            },
            Expr::Velocity { coord, .. } => write!(f, "u[{coord}]"),
            Expr::Momentum { coord, .. } => write!(f, "p[{coord}]"),
            Expr::Neg { arg, .. } => {
                f.write_str("-")?;
                write_operand(f, arg, 3)
            }
            Expr::Binary { op, lhs, rhs, .. } => {
                let p = op.precedence();
                write_operand(f, lhs, p)?;
                write!(f, " {} ", op.symbol())?;
                // Subtraction and division are not associative: a - (b - c) keeps its parens.
                write_operand(f, rhs, p + 1)
            }
            Expr::Call { func, args, .. } => {
                let Some((receiver, rest)) = args.split_first() else {
                    return write!(f, "{}()", func.name());
                };
                write_operand(f, receiver, 4)?;
                write!(f, ".{}(", func.name())?;
                for (k, arg) in rest.iter().enumerate() {
                    if k > 0 {
                        f.write_str(", ")?;
                    }
                    write!(f, "{arg}")?;
                }
                f.write_str(")")
            }
        }
    }
}

fn write_operand(f: &mut fmt::Formatter<'_>, e: &Expr, min_precedence: u8) -> fmt::Result {
    if e.precedence() < min_precedence {
        write!(f, "({e})")
    } else {
        write!(f, "{e}")
    }
}

fn write_number(f: &mut fmt::Formatter<'_>, value: &BigRational) -> fmt::Result {
    if value.denom().is_one() {
        write!(f, "{}", value.numer())
    } else {
        write!(f, "{}/{}", value.numer(), value.denom())
    }
}
