//! Lowering expressions to a straight-line program with common-subexpression elimination.
//!
//! Every instruction goes through value numbering (a table from instruction to value), so a
//! subexpression shared anywhere among a kernel's outputs is computed once. On the way the
//! canonical sums and products are turned into cheap code: integer powers by repeated
//! multiplication (x·x, (x·x)·(x·x)), half-integer powers through one square root, a product's
//! negative powers taken as powers of one reciprocal per base, a sum's terms grouped by coefficient so
//! that a shared factor is multiplied once, and signs absorbed into subtractions.

use std::collections::{BTreeMap, HashMap};

use num_integer::Integer;
use num_traits::{One, Signed, ToPrimitive, Zero};

use super::factor::{Factor, Factoring, Term};
use super::{InputArray, Instr, KernelKind, KernelProgram, Val};
use crate::expr::{ExprId, Node, Store, SymbolKind, Q};

/// Lowers `outputs` (flattened over `shape`) of one kernel to a program.
///
/// Symbols map to inputs by kind: coordinates to `x`, parameters to `params`, and so on.
/// A symbol whose array the kernel does not read becomes NaN, which tests catch.
pub fn lower(
    store: &Store,
    kind: KernelKind,
    dim: usize,
    outputs: &[ExprId],
    shape: Vec<usize>,
) -> KernelProgram {
    let mut l = Lowerer {
        store,
        instrs: Vec::new(),
        numbering: HashMap::new(),
        memo: HashMap::new(),
        factoring: Factoring::new(store, outputs),
        factor_vals: HashMap::new(),
        term_vals: HashMap::new(),
        sum_memo: HashMap::new(),
    };
    let outs: Vec<Val> = outputs.iter().map(|&e| l.lower(e)).collect();
    KernelProgram {
        kind,
        dim,
        instrs: l.instrs,
        outputs: outs,
        shape,
    }
}

/// A sign-normalised sum: its constant and its (term, coefficient) list.
type SumKey = (Q, Vec<(usize, Q)>);

struct Lowerer<'a> {
    store: &'a Store,
    instrs: Vec<Instr>,
    numbering: HashMap<Instr, Val>,
    memo: HashMap<ExprId, (Val, bool)>,
    factoring: Factoring,
    factor_vals: HashMap<usize, (Val, bool)>,
    term_vals: HashMap<usize, (Val, bool)>,
    sum_memo: HashMap<SumKey, (Val, bool)>,
}

impl Lowerer<'_> {
    fn emit(&mut self, ins: Instr) -> Val {
        let ins = match ins {
            Instr::Add(a, b) if b < a => Instr::Add(b, a),
            Instr::Mul(a, b) if b < a => Instr::Mul(b, a),
            other => other,
        };
        if let Some(&v) = self.numbering.get(&ins) {
            return v;
        }
        let v = self.instrs.len() as Val;
        self.instrs.push(ins.clone());
        self.numbering.insert(ins, v);
        v
    }

    fn constant(&mut self, q: Q) -> Val {
        self.emit(Instr::Const(q))
    }

    /// The value of `e`, with any pending sign applied.
    fn lower(&mut self, e: ExprId) -> Val {
        let (v, negated) = self.lower_signed(e);
        self.materialize(v, negated)
    }

    fn materialize(&mut self, v: Val, negated: bool) -> Val {
        if negated {
            self.emit(Instr::Neg(v))
        } else {
            v
        }
    }

    /// `(v, negated)` with `e = −v` when `negated`: a sign is carried to the parent, which
    /// absorbs it in a subtraction or in the sign of a product, instead of costing a negation.
    fn lower_signed(&mut self, e: ExprId) -> (Val, bool) {
        if let Some(&v) = self.memo.get(&e) {
            return v;
        }
        let v = match self.store.node(e).clone() {
            Node::Num(q) => (self.constant(q.abs()), q.is_negative()),
            Node::Symbol(n) => {
                let (array, index) = match self.store.symbols()[n as usize].kind {
                    SymbolKind::Coordinate(i) => (InputArray::X, i),
                    SymbolKind::Parameter(i) => (InputArray::Params, i),
                    SymbolKind::Velocity(i) => (InputArray::U, i),
                    SymbolKind::Momentum(i) => (InputArray::P, i),
                    SymbolKind::Vector(i) => (InputArray::V, i),
                    SymbolKind::Differential(i) => (InputArray::U, i),
                };
                (self.emit(Instr::Input(array, index as u16)), false)
            }
            Node::Constant(c) => (self.emit(Instr::Named(c)), false),
            Node::Add(c, _) => {
                let items = self.factoring.sums.get(&e).cloned().unwrap_or_default();
                self.lower_sum(&c, &items)
            }
            Node::Mul(_) => {
                let factors = self.factoring.products.get(&e).cloned().unwrap_or_default();
                self.lower_product(&factors.0)
            }
            Node::Call(f, a) => {
                let a = self.lower(a);
                (self.emit(Instr::Call(f, a)), false)
            }
            Node::Pow(b, x) => {
                let b = self.lower(b);
                let x = self.lower(x);
                (self.emit(Instr::Powf(b, x)), false)
            }
        };
        self.memo.insert(e, v);
        v
    }

    /// `c + Σ kᵢ tᵢ`: terms grouped by |k| so each distinct factor is applied once,
    /// `|k|·(Σ± tᵢ)`, then the groups combined with additions and subtractions.
    fn lower_sum(&mut self, c: &Q, terms: &[(usize, Q)]) -> (Val, bool) {
        // f and −f are one value with two signs: normalise so that the term with the
        // smallest index has a positive coefficient, and share the sum across both signs.
        let mut key: Vec<(usize, Q)> = terms.to_vec();
        key.sort_by_key(|t| t.0);
        let flip = match key.first() {
            Some((_, k)) => k.is_negative(),
            None => c.is_negative(),
        };
        let c = if flip { -c } else { c.clone() };
        if flip {
            for t in &mut key {
                t.1 = -t.1.clone();
            }
        }
        let memo_key = (c.clone(), key);
        if let Some(&(v, negated)) = self.sum_memo.get(&memo_key) {
            return (v, negated != flip);
        }
        let (v, negated) = self.lower_normalized_sum(&c, &memo_key.1);
        self.sum_memo.insert(memo_key, (v, negated));
        (v, negated != flip)
    }

    fn lower_normalized_sum(&mut self, c: &Q, terms: &[(usize, Q)]) -> (Val, bool) {
        let mut groups: BTreeMap<Q, (Vec<Val>, Vec<Val>)> = BTreeMap::new();
        for (t, k) in terms {
            let (v, negated) = self.lower_term(*t);
            let g = groups.entry(k.abs()).or_default();
            if k.is_positive() != negated {
                g.0.push(v);
            } else {
                g.1.push(v);
            }
        }
        // Signed parts of the final sum: (value, positive?).
        let mut parts: Vec<(Val, bool)> = Vec::new();
        // Unit coefficients first so that the common case reads as a plain sum.
        if let Some((pos, neg)) = groups.remove(&Q::one()) {
            parts.extend(pos.into_iter().map(|v| (v, true)));
            parts.extend(neg.into_iter().map(|v| (v, false)));
        }
        for (k, (pos, neg)) in groups {
            let kv = self.constant(k);
            let (body, positive) = if pos.is_empty() {
                (self.signed_sum(&neg, &[]), false)
            } else {
                (self.signed_sum(&pos, &neg), true)
            };
            let scaled = self.emit(Instr::Mul(kv, body));
            parts.push((scaled, positive));
        }
        if !c.is_zero() {
            let cv = self.constant(c.abs());
            parts.push((cv, c.is_positive()));
        }
        let pos: Vec<Val> = parts.iter().filter(|p| p.1).map(|p| p.0).collect();
        let neg: Vec<Val> = parts.iter().filter(|p| !p.1).map(|p| p.0).collect();
        if pos.is_empty() {
            (self.signed_sum(&neg, &[]), true)
        } else {
            (self.signed_sum(&pos, &neg), false)
        }
    }

    /// `Σ pos − Σ neg`, left to right (zero when both are empty).
    fn signed_sum(&mut self, pos: &[Val], neg: &[Val]) -> Val {
        let (first, rest_pos, neg) = match pos.split_first() {
            Some((f, r)) => (*f, r, neg),
            None => match neg.split_first() {
                Some((f, r)) => (*f, r, &[][..]),
                None => return self.constant(Q::zero()),
            },
        };
        let mut acc = first;
        for &p in rest_pos {
            acc = self.emit(Instr::Add(acc, p));
        }
        for &n in neg {
            acc = self.emit(Instr::Sub(acc, n));
        }
        acc
    }

    fn lower_term(&mut self, t: usize) -> (Val, bool) {
        if let Some(&v) = self.term_vals.get(&t) {
            return v;
        }
        let v = match self.factoring.terms[t].clone() {
            Term::Expr(e) => self.lower_signed(e),
            Term::Pair(a, b, k) => self.lower_sum(&Q::zero(), &[(a, Q::one()), (b, k)]),
        };
        self.term_vals.insert(t, v);
        v
    }

    fn lower_factor(&mut self, f: usize) -> (Val, bool) {
        if let Some(&v) = self.factor_vals.get(&f) {
            return v;
        }
        let v = match self.factoring.factors[f].clone() {
            Factor::Power(b, e) => {
                let (bv, negated) = self.lower_signed(b);
                // (−v)^n = ±v^n for integer n; other powers need the true base.
                let (bv, sign) = if negated && e.is_integer() {
                    (bv, e.numer().is_odd())
                } else {
                    (self.materialize(bv, negated), false)
                };
                if e.is_negative() {
                    let one = self.constant(Q::one());
                    let r = self.emit(Instr::Div(one, bv));
                    (self.power(r, &e.abs()), sign)
                } else {
                    (self.power(bv, &e), sign)
                }
            }
            Factor::Pair(a, b) => {
                let ((a, na), (b, nb)) = (self.lower_factor(a), self.lower_factor(b));
                (self.emit(Instr::Mul(a, b)), na != nb)
            }
        };
        self.factor_vals.insert(f, v);
        v
    }

    /// A product of factors; negative powers are powers of reciprocals (see [`Factoring`]).
    fn lower_product(&mut self, factors: &[usize]) -> (Val, bool) {
        let mut sign = false;
        let mut vals = Vec::with_capacity(factors.len());
        for &f in factors {
            let (v, negated) = self.lower_factor(f);
            sign ^= negated;
            vals.push(v);
        }
        let v = self
            .product(&vals)
            .unwrap_or_else(|| self.constant(Q::one()));
        (v, sign)
    }

    fn product(&mut self, vals: &[Val]) -> Option<Val> {
        let (&first, rest) = vals.split_first()?;
        let mut acc = first;
        for &v in rest {
            acc = self.emit(Instr::Mul(acc, v));
        }
        Some(acc)
    }

    /// `v^q` for q > 0: repeated squaring for integers, one square root for halves, `powf`
    /// otherwise.
    fn power(&mut self, v: Val, q: &Q) -> Val {
        if q.is_integer() {
            match q.numer().to_u32() {
                Some(n) if n <= 64 => return self.int_power(v, n),
                _ => {}
            }
        } else if *q.denom() == 2.into() {
            if let Some(n) = q.numer().to_u32() {
                if n <= 64 {
                    let r = self.emit(Instr::Sqrt(v));
                    if n == 1 {
                        return r;
                    }
                    let whole = self.int_power(v, (n - 1) / 2);
                    return self.emit(Instr::Mul(whole, r));
                }
            }
        }
        let e = self.constant(q.clone());
        self.emit(Instr::Powf(v, e))
    }

    fn int_power(&mut self, v: Val, n: u32) -> Val {
        match n {
            0 => self.constant(Q::one()),
            1 => v,
            _ => {
                let half = self.int_power(v, n / 2);
                let sq = self.emit(Instr::Mul(half, half));
                if n % 2 == 1 {
                    self.emit(Instr::Mul(sq, v))
                } else {
                    sq
                }
            }
        }
    }
}
