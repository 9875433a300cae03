//! The expression store: a hash-consed DAG with exact rational coefficients.
//!
//! Every expression lives in a [`Store`] as a [`Node`] addressed by an [`ExprId`]. Children are
//! always created before their parents, so ids are a topological order: evaluation and
//! lowering walk ids upward without recursion. Nodes are interned, so structurally equal
//! expressions share one id, and the canonical constructors in [`build`](self) keep sums and
//! products in one normal form (like terms collected, powers merged, constants folded).
//!
//! Determinism: ids are handed out in creation order, and every collection that reaches an
//! output is ordered by id, never by hash.
//!
//! ```
//! use geokern_symbolic::expr::{Store, SymbolKind, Q};
//! let mut s = Store::new();
//! let r = s.symbol("r", SymbolKind::Coordinate(0));
//! let two_r = s.add(&[r, r]);
//! let also = s.scale(r, Q::from_integer(2.into()));
//! assert_eq!(two_r, also);
//! ```

mod build;
mod calculus;
mod collect;
mod display;
mod zero;

pub use zero::proves_zero;

mod hash;
pub(crate) use hash::FastMap;

use std::collections::HashMap;

use num_rational::BigRational;

/// Exact rational number used for every coefficient and exponent.
pub type Q = BigRational;

/// Address of a node in a [`Store`]. Smaller ids were created first.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub struct ExprId(u32);

impl ExprId {
    /// The position of this node in its store.
    pub fn index(self) -> usize {
        self.0 as usize
    }

    /// The id at a position of its store (for walks over every node in order).
    pub fn from_index(i: usize) -> ExprId {
        ExprId(i as u32)
    }
}

/// Elementary functions of one argument. Square roots are powers with exponent 1/2.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub enum Func {
    /// Sine.
    Sin,
    /// Cosine.
    Cos,
    /// Tangent.
    Tan,
    /// Natural exponential.
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
}

impl Func {
    /// Every function, in a fixed order.
    pub const ALL: [Func; 11] = [
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
    ];

    /// The name used in declarations and in Rust's f64 methods.
    pub fn name(self) -> &'static str {
        match self {
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
        }
    }

    /// The function at `v` in f64.
    pub fn eval(self, v: f64) -> f64 {
        match self {
            Func::Sin => v.sin(),
            Func::Cos => v.cos(),
            Func::Tan => v.tan(),
            Func::Exp => v.exp(),
            Func::Ln => v.ln(),
            Func::Sinh => v.sinh(),
            Func::Cosh => v.cosh(),
            Func::Tanh => v.tanh(),
            Func::Asin => v.asin(),
            Func::Acos => v.acos(),
            Func::Atan => v.atan(),
        }
    }
}

/// Named mathematical constants.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub enum NamedConst {
    /// π.
    Pi,
    /// Euler's number e.
    E,
}

impl NamedConst {
    /// The constant in f64.
    pub fn value(self) -> f64 {
        match self {
            NamedConst::Pi => std::f64::consts::PI,
            NamedConst::E => std::f64::consts::E,
        }
    }
}

/// What a symbol stands for; the index is the coordinate (or parameter) number.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub enum SymbolKind {
    /// Coordinate x^i.
    Coordinate(usize),
    /// Metric parameter number i (a runtime value).
    Parameter(usize),
    /// Velocity component u^i.
    Velocity(usize),
    /// Covariant momentum component p_i.
    Momentum(usize),
    /// Transported vector component v^i.
    Vector(usize),
    /// Differential dx^i of a line element.
    Differential(usize),
}

/// A symbol of a store: its display name and what it stands for.
#[derive(Clone, PartialEq, Eq, Debug)]
pub struct Symbol {
    /// Name shown when printing expressions.
    pub name: String,
    /// What the symbol stands for.
    pub kind: SymbolKind,
}

/// One node of the DAG. Sums and products are kept canonical by the constructors.
#[derive(Clone, PartialEq, Eq, Hash, Debug)]
pub enum Node {
    /// An exact rational number.
    Num(Q),
    /// A symbol, by its number in the store.
    Symbol(u32),
    /// A named constant.
    Constant(NamedConst),
    /// `constant + Σ coeff·term`: terms sorted by id, no term a number or a sum, no zero
    /// coefficient; a lone `coeff·term` with zero constant is how scaled terms are written.
    Add(Q, Box<[(ExprId, Q)]>),
    /// `Π base^exponent`: bases sorted by id, no base a number-free product with integer
    /// exponent to merge, no zero exponent, and never a single base with exponent one.
    Mul(Box<[(ExprId, Q)]>),
    /// A function applied to an argument.
    Call(Func, ExprId),
    /// `base^exponent` with a non-numeric exponent.
    Pow(ExprId, ExprId),
    /// A subexpression kept whole: sums and products treat it as an atom, so the structure a
    /// declaration names (a `let` helper) survives into derivatives (the product rule then
    /// acts on `f·l`, not on every factor of both). Its value is its operand's; it costs
    /// nothing when lowered.
    Bound(ExprId),
}

/// Maximum number of distinct symbols a store tracks dependencies for.
pub const MAX_SYMBOLS: usize = 256;

/// A set of symbol numbers, used to know which symbols a node depends on.
#[derive(Clone, Copy, PartialEq, Eq, Hash, Debug, Default)]
pub struct SymbolSet([u64; MAX_SYMBOLS / 64]);

impl SymbolSet {
    /// Whether symbol number `s` is in the set.
    pub fn contains(&self, s: u32) -> bool {
        let s = s as usize;
        s < MAX_SYMBOLS && self.0[s / 64] >> (s % 64) & 1 == 1
    }

    fn insert(&mut self, s: u32) {
        let s = s as usize;
        if s < MAX_SYMBOLS {
            self.0[s / 64] |= 1 << (s % 64);
        }
    }

    fn union(&mut self, other: &SymbolSet) {
        for (a, b) in self.0.iter_mut().zip(other.0.iter()) {
            *a |= b;
        }
    }

    /// Whether the set is empty.
    pub fn is_empty(&self) -> bool {
        self.0.iter().all(|w| *w == 0)
    }
}

/// The arena of interned nodes.
#[derive(Clone, Debug, Default)]
pub struct Store {
    nodes: Vec<Node>,
    deps: Vec<SymbolSet>,
    intern: FastMap<Node, ExprId>,
    symbols: Vec<Symbol>,
    symbol_ids: HashMap<SymbolKind, ExprId>,
    diff_cache: FastMap<(ExprId, u32), ExprId>,
    division_by_zero: bool,
}

impl Store {
    /// An empty store.
    pub fn new() -> Store {
        Store::default()
    }

    /// Number of nodes created so far.
    pub fn len(&self) -> usize {
        self.nodes.len()
    }

    /// Whether the store holds no node.
    pub fn is_empty(&self) -> bool {
        self.nodes.is_empty()
    }

    /// The node at `id`.
    pub fn node(&self, id: ExprId) -> &Node {
        &self.nodes[id.index()]
    }

    /// The symbols `id` depends on.
    pub fn deps(&self, id: ExprId) -> &SymbolSet {
        &self.deps[id.index()]
    }

    /// Whether `id` depends on the symbol of kind `kind` (false if no such symbol exists).
    pub fn depends_on(&self, id: ExprId, kind: SymbolKind) -> bool {
        match self.symbol_ids.get(&kind) {
            Some(&sym) => match self.nodes[sym.index()] {
                Node::Symbol(n) => self.deps(id).contains(n),
                _ => false,
            },
            None => false,
        }
    }

    /// The symbol table, indexed by symbol number.
    pub fn symbols(&self) -> &[Symbol] {
        &self.symbols
    }

    /// Whether some constructor met a division by an exact zero since the last
    /// [`take_division_by_zero`](Self::take_division_by_zero).
    pub fn take_division_by_zero(&mut self) -> bool {
        std::mem::take(&mut self.division_by_zero)
    }

    /// The node for the symbol of this kind, creating it with `name` on first use.
    pub fn symbol(&mut self, name: &str, kind: SymbolKind) -> ExprId {
        if let Some(&id) = self.symbol_ids.get(&kind) {
            return id;
        }
        let n = self.symbols.len() as u32;
        self.symbols.push(Symbol {
            name: name.to_string(),
            kind,
        });
        let id = self.intern(Node::Symbol(n));
        self.symbol_ids.insert(kind, id);
        id
    }

    /// The node for an existing symbol of this kind, if any.
    pub fn find_symbol(&self, kind: SymbolKind) -> Option<ExprId> {
        self.symbol_ids.get(&kind).copied()
    }

    /// The symbol behind a `Node::Symbol` id.
    pub fn symbol_of(&self, id: ExprId) -> Option<&Symbol> {
        match self.node(id) {
            Node::Symbol(n) => self.symbols.get(*n as usize),
            _ => None,
        }
    }

    /// The exact value of `id` if it is a number.
    pub fn as_num(&self, id: ExprId) -> Option<&Q> {
        match self.node(id) {
            Node::Num(q) => Some(q),
            _ => None,
        }
    }

    /// Whether `id` is exactly zero in canonical form.
    pub fn is_zero(&self, id: ExprId) -> bool {
        matches!(self.node(id), Node::Num(q) if num_traits::Zero::is_zero(q))
    }

    fn intern(&mut self, node: Node) -> ExprId {
        if let Some(&id) = self.intern.get(&node) {
            return id;
        }
        let mut deps = SymbolSet::default();
        match &node {
            Node::Num(_) | Node::Constant(_) => {}
            Node::Symbol(n) => deps.insert(*n),
            Node::Add(_, terms) | Node::Mul(terms) => {
                for (t, _) in terms.iter() {
                    deps.union(&self.deps[t.index()]);
                }
            }
            Node::Call(_, a) | Node::Bound(a) => deps = self.deps[a.index()],
            Node::Pow(b, e) => {
                deps = self.deps[b.index()];
                deps.union(&self.deps[e.index()]);
            }
        }
        let id = ExprId(self.nodes.len() as u32);
        self.nodes.push(node.clone());
        self.deps.push(deps);
        self.intern.insert(node, id);
        id
    }

    /// Evaluates every node up to and including the largest root in f64, children first.
    ///
    /// `symbol_value` gives the value of each symbol (by symbol number). Returns a vector
    /// indexed by [`ExprId::index`].
    pub fn eval_all(&self, roots: &[ExprId], symbol_value: &dyn Fn(&Symbol) -> f64) -> Vec<f64> {
        let end = roots.iter().map(|r| r.index() + 1).max().unwrap_or(0);
        let mut v = vec![0.0; end];
        for i in 0..end {
            v[i] = match &self.nodes[i] {
                Node::Num(q) => q_to_f64(q),
                Node::Symbol(n) => symbol_value(&self.symbols[*n as usize]),
                Node::Constant(c) => c.value(),
                Node::Add(c, terms) => terms
                    .iter()
                    .fold(q_to_f64(c), |acc, (t, k)| acc + q_to_f64(k) * v[t.index()]),
                Node::Mul(factors) => factors
                    .iter()
                    .fold(1.0, |acc, (b, e)| acc * pow_q_f64(v[b.index()], e)),
                Node::Call(f, a) => f.eval(v[a.index()]),
                Node::Pow(b, e) => v[b.index()].powf(v[e.index()]),
                Node::Bound(a) => v[a.index()],
            };
        }
        v
    }

    /// For every node up to the largest root: its value and a magnitude that bounds the sizes
    /// of what was added on the way to it (sums of absolute values of terms, products of
    /// magnitudes), so that a value cancelling to rounding noise can be told from a small one:
    /// f64 evaluation errs by a few ulps of the magnitude, not of the value.
    pub fn eval_with_magnitude(
        &self,
        roots: &[ExprId],
        symbol_value: &dyn Fn(&Symbol) -> f64,
    ) -> (Vec<f64>, Vec<f64>) {
        let v = self.eval_all(roots, symbol_value);
        let mut m = vec![0.0; v.len()];
        for i in 0..v.len() {
            m[i] = match &self.nodes[i] {
                Node::Add(c, terms) => terms.iter().fold(q_to_f64(c).abs(), |acc, (t, k)| {
                    acc + q_to_f64(k).abs() * m[t.index()]
                }),
                Node::Mul(factors) => factors.iter().fold(1.0, |acc, (b, e)| {
                    // Denominators scale by their value; numerators by their magnitude.
                    let base = if num_traits::Signed::is_negative(e) {
                        v[b.index()].abs()
                    } else {
                        m[b.index()]
                    };
                    acc * pow_q_f64(base, e)
                }),
                Node::Bound(a) => m[a.index()],
                _ => v[i].abs(),
            };
        }
        (v, m)
    }

    /// Evaluates one expression in f64.
    pub fn eval(&self, root: ExprId, symbol_value: &dyn Fn(&Symbol) -> f64) -> f64 {
        self.eval_all(&[root], symbol_value)[root.index()]
    }
}

/// The nearest f64 to an exact rational, without overflowing on huge numerators.
pub fn q_to_f64(q: &Q) -> f64 {
    use num_traits::ToPrimitive;
    q.to_f64().unwrap_or(f64::NAN)
}

/// `x^e` for a rational exponent, using exact integer and square-root paths where possible.
pub fn pow_q_f64(x: f64, e: &Q) -> f64 {
    use num_traits::ToPrimitive;
    let two = num_bigint::BigInt::from(2);
    if e.is_integer() {
        match e.numer().to_i32() {
            Some(n) => x.powi(n),
            None => x.powf(q_to_f64(e)),
        }
    } else if *e.denom() == two {
        match e.numer().to_i32() {
            Some(n) => x.sqrt().powi(n),
            None => x.powf(q_to_f64(e)),
        }
    } else {
        x.powf(q_to_f64(e))
    }
}
