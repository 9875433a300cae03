//! Lowering expressions to a straight-line program with common-subexpression elimination.
//!
//! Every instruction goes through value numbering (a table from instruction to value), so a
//! subexpression shared anywhere among a kernel's outputs is computed once. On the way the
//! canonical sums and products are turned into cheap code: integer powers by repeated
//! multiplication (x·x, (x·x)·(x·x)), half-integer powers through one square root, a product's
//! negative powers taken as powers of one reciprocal per base (or as the reciprocal of the
//! power, for a base with no other negative power), and a sum's terms grouped by coefficient
//! so that a shared factor is multiplied once.
//!
//! Constant factors float upwards: every value is lowered as `k·v`, an exact rational `k`
//! the parent still owes and an SSA value `v`. A product multiplies its factors' `k`s for
//! free, a reciprocal takes `1/k`, and a sum divides out its most common coefficient, so that a
//! constant is multiplied in once, where it finally meets a function, a square root or an
//! output, instead of at every level (`2·(a·(2·b) − 4·c)` costs what `4·(a·b − c)` costs).
//! Signs are the special case `k = −1`: absorbed into subtractions, and at an output into the
//! single-use subtraction or constant-scaled product that defines it. A last sweep turns a
//! product with a reciprocal read nowhere else into one division and drops values nothing
//! reads.

use std::collections::BTreeMap;

use num_traits::{One, Signed, ToPrimitive, Zero};

use super::factor::{Factor, Factoring, Term};
use super::{InputArray, Instr, KernelKind, KernelProgram, Val};
use crate::expr::{ExprId, FastMap, Node, Store, SymbolKind, Q};

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
        numbering: FastMap::default(),
        memo: FastMap::default(),
        factoring: Factoring::new(store, outputs),
        factor_vals: FastMap::default(),
        term_vals: FastMap::default(),
        sum_memo: FastMap::default(),
    };
    let outs: Vec<Val> = outputs.iter().map(|&e| l.lower(e)).collect();
    let (instrs, outputs) = eliminate_dead(l.instrs, outs);
    let instrs = fold_single_reciprocals(instrs, &outputs);
    let (instrs, outputs) = eliminate_dead(instrs, outputs);
    KernelProgram {
        kind,
        dim,
        instrs,
        outputs,
        shape,
    }
}

/// `a·(1/y)` where the reciprocal `1/y` is read by nothing else becomes `a/y`: one division
/// instead of a division and a multiplication. The reciprocal is left for
/// [`eliminate_dead`] to drop.
fn fold_single_reciprocals(mut instrs: Vec<Instr>, outputs: &[Val]) -> Vec<Instr> {
    let mut uses = vec![0u32; instrs.len()];
    for ins in &instrs {
        for o in operands(ins) {
            uses[o as usize] += 1;
        }
    }
    for &o in outputs {
        uses[o as usize] += 1;
    }
    let single_reciprocal = |instrs: &[Instr], uses: &[u32], r: Val| match instrs[r as usize] {
        Instr::Div(n, y) if uses[r as usize] == 1 => {
            matches!(&instrs[n as usize], Instr::Const(c) if c.is_one()).then_some(y)
        }
        _ => None,
    };
    for i in 0..instrs.len() {
        let Instr::Mul(a, b) = instrs[i] else {
            continue;
        };
        let folded = match single_reciprocal(&instrs, &uses, b) {
            Some(y) => Some((a, y, b)),
            None => single_reciprocal(&instrs, &uses, a).map(|y| (b, y, a)),
        };
        if let Some((numerator, y, r)) = folded {
            instrs[i] = Instr::Div(numerator, y);
            uses[r as usize] = 0;
        }
    }
    instrs
}

/// Keeps only the instructions the outputs read, renumbered in their original order.
fn eliminate_dead(instrs: Vec<Instr>, outputs: Vec<Val>) -> (Vec<Instr>, Vec<Val>) {
    let mut live = vec![false; instrs.len()];
    for &o in &outputs {
        live[o as usize] = true;
    }
    for i in (0..instrs.len()).rev() {
        if live[i] {
            for operand in operands(&instrs[i]) {
                live[operand as usize] = true;
            }
        }
    }
    let mut new_index = vec![0 as Val; instrs.len()];
    let mut kept = Vec::with_capacity(instrs.len());
    for (i, ins) in instrs.into_iter().enumerate() {
        if live[i] {
            new_index[i] = kept.len() as Val;
            kept.push(renumber(ins, &new_index));
        }
    }
    let outputs = outputs.iter().map(|&o| new_index[o as usize]).collect();
    (kept, outputs)
}

/// The values an instruction reads.
fn operands(ins: &Instr) -> Vec<Val> {
    match *ins {
        Instr::Input(..) | Instr::Const(_) | Instr::Named(_) => Vec::new(),
        Instr::Neg(a) | Instr::Sqrt(a) | Instr::Call(_, a) => vec![a],
        Instr::Add(a, b)
        | Instr::Sub(a, b)
        | Instr::Mul(a, b)
        | Instr::Div(a, b)
        | Instr::Powf(a, b) => vec![a, b],
    }
}

/// `ins` with its operands renamed by `map`.
fn renumber(ins: Instr, map: &[Val]) -> Instr {
    let m = |v: Val| map[v as usize];
    match ins {
        Instr::Add(a, b) => Instr::Add(m(a), m(b)),
        Instr::Sub(a, b) => Instr::Sub(m(a), m(b)),
        Instr::Mul(a, b) => Instr::Mul(m(a), m(b)),
        Instr::Div(a, b) => Instr::Div(m(a), m(b)),
        Instr::Powf(a, b) => Instr::Powf(m(a), m(b)),
        Instr::Neg(a) => Instr::Neg(m(a)),
        Instr::Sqrt(a) => Instr::Sqrt(m(a)),
        Instr::Call(f, a) => Instr::Call(f, m(a)),
        other => other,
    }
}

/// A sum normalised by its first term's coefficient: its constant and its (term,
/// coefficient) list.
type SumKey = (Q, Vec<(usize, Q)>);

/// A lowered value that still owes a constant factor: it stands for `k·v`.
type Scaled = (Val, Q);

struct Lowerer<'a> {
    store: &'a Store,
    instrs: Vec<Instr>,
    numbering: FastMap<Instr, Val>,
    memo: FastMap<ExprId, Scaled>,
    factoring: Factoring,
    factor_vals: FastMap<usize, Scaled>,
    term_vals: FastMap<usize, Scaled>,
    sum_memo: FastMap<SumKey, Scaled>,
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

    fn constant_value(&self, v: Val) -> Option<&Q> {
        match &self.instrs[v as usize] {
            Instr::Const(c) => Some(c),
            _ => None,
        }
    }

    /// The value of `e` as one SSA value.
    fn lower(&mut self, e: ExprId) -> Val {
        let (v, k) = self.lower_scaled(e);
        self.materialize(v, &k)
    }

    /// `k·v` as one SSA value: free when `k = 1` or `v` is a constant; for `k = −1` a
    /// subtraction turned round or a constant folded where `v` allows (the old value is then
    /// dead unless something else reads it); otherwise one multiplication, folded into a
    /// product by a constant when `v` is one.
    fn materialize(&mut self, v: Val, k: &Q) -> Val {
        if k.is_one() {
            return v;
        }
        if let Some(c) = self.constant_value(v) {
            let c = c * k;
            return self.constant(c);
        }
        match self.instrs[v as usize].clone() {
            Instr::Mul(a, b) => {
                if let Some(c) = self.constant_value(a).cloned() {
                    let c = self.constant(c * k);
                    return self.emit(Instr::Mul(c, b));
                }
            }
            Instr::Sub(a, b) if *k == -Q::one() => return self.emit(Instr::Sub(b, a)),
            Instr::Neg(a) if *k == -Q::one() => return a,
            _ => {}
        }
        if *k == -Q::one() {
            self.emit(Instr::Neg(v))
        } else {
            let c = self.constant(k.clone());
            self.emit(Instr::Mul(c, v))
        }
    }

    /// `(v, k)` with `e = k·v`: the constant factor is left to the parent, which multiplies
    /// it into its own for free or divides it out of a sum.
    fn lower_scaled(&mut self, e: ExprId) -> Scaled {
        if let Some(v) = self.memo.get(&e) {
            return v.clone();
        }
        let v = match self.store.node(e).clone() {
            Node::Num(q) if q.is_zero() => (self.constant(q), Q::one()),
            Node::Num(q) => (self.constant(Q::one()), q),
            Node::Symbol(n) => {
                let (array, index) = match self.store.symbols()[n as usize].kind {
                    SymbolKind::Coordinate(i) => (InputArray::X, i),
                    SymbolKind::Parameter(i) => (InputArray::Params, i),
                    SymbolKind::Velocity(i) => (InputArray::U, i),
                    SymbolKind::Momentum(i) => (InputArray::P, i),
                    SymbolKind::Vector(i) => (InputArray::V, i),
                    SymbolKind::Differential(i) => (InputArray::U, i),
                };
                (self.emit(Instr::Input(array, index as u16)), Q::one())
            }
            Node::Constant(c) => (self.emit(Instr::Named(c)), Q::one()),
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
                (self.emit(Instr::Call(f, a)), Q::one())
            }
            Node::Pow(b, x) => {
                let b = self.lower(b);
                let x = self.lower(x);
                (self.emit(Instr::Powf(b, x)), Q::one())
            }
            Node::Bound(a) => self.lower_scaled(a),
        };
        self.memo.insert(e, v.clone());
        v
    }

    /// `c + Σ kᵢ tᵢ`, shared with every sum that differs from it by a constant factor.
    fn lower_sum(&mut self, c: &Q, terms: &[(usize, Q)]) -> Scaled {
        let mut key: Vec<(usize, Q)> = terms.to_vec();
        key.sort_by_key(|t| t.0);
        let lead = match key.first() {
            Some((_, k)) => k.clone(),
            None if c.is_zero() => Q::one(),
            None => c.clone(),
        };
        for t in &mut key {
            t.1 = &t.1 / &lead;
        }
        let memo_key = (c / &lead, key);
        if let Some((v, k)) = self.sum_memo.get(&memo_key).cloned() {
            return (v, k * lead);
        }
        let (v, k) = self.lower_normalized_sum(&memo_key.0, &memo_key.1);
        self.sum_memo.insert(memo_key, (v, k.clone()));
        (v, k * lead)
    }

    /// The sum with its most common coefficient divided out (it is what the sum owes), the
    /// remaining terms grouped by coefficient so that each distinct factor is applied once,
    /// `r·(Σ± tᵢ)`, then the groups combined with additions and subtractions.
    fn lower_normalized_sum(&mut self, c: &Q, terms: &[(usize, Q)]) -> Scaled {
        let mut items: Vec<(Val, Q)> = Vec::with_capacity(terms.len());
        for (t, k) in terms {
            let (v, owed) = self.lower_term(*t);
            let k = k * owed;
            // Two terms of different form may lower to one value (a named piece and the
            // same expression written out): their coefficients add.
            match items.iter_mut().find(|(w, _)| *w == v) {
                Some(item) => item.1 += k,
                None => items.push((v, k)),
            }
        }
        items.retain(|(_, k)| !k.is_zero());
        let Some(common) = most_common_magnitude(&items) else {
            return (self.constant(c.clone()), Q::one());
        };
        let mut groups: BTreeMap<Q, (Vec<Val>, Vec<Val>)> = BTreeMap::new();
        for (v, k) in &items {
            let r = k / &common;
            let g = groups.entry(r.abs()).or_default();
            if r.is_positive() {
                g.0.push(*v);
            } else {
                g.1.push(*v);
            }
        }
        // Signed parts of the final sum: (value, positive?).
        let mut parts: Vec<(Val, bool)> = Vec::new();
        // Unit coefficients first so that the common case reads as a plain sum.
        if let Some((pos, neg)) = groups.remove(&Q::one()) {
            parts.extend(pos.into_iter().map(|v| (v, true)));
            parts.extend(neg.into_iter().map(|v| (v, false)));
        }
        for (r, (pos, neg)) in groups {
            let rv = self.constant(r);
            let (body, positive) = if pos.is_empty() {
                (self.signed_sum(&neg, &[]), false)
            } else {
                (self.signed_sum(&pos, &neg), true)
            };
            let scaled = self.emit(Instr::Mul(rv, body));
            parts.push((scaled, positive));
        }
        let c = c / &common;
        if !c.is_zero() {
            let cv = self.constant(c.abs());
            parts.push((cv, c.is_positive()));
        }
        let pos: Vec<Val> = parts.iter().filter(|p| p.1).map(|p| p.0).collect();
        let neg: Vec<Val> = parts.iter().filter(|p| !p.1).map(|p| p.0).collect();
        if pos.is_empty() {
            (self.signed_sum(&neg, &[]), -common)
        } else {
            (self.signed_sum(&pos, &neg), common)
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

    fn lower_term(&mut self, t: usize) -> Scaled {
        if let Some(v) = self.term_vals.get(&t) {
            return v.clone();
        }
        let v = match self.factoring.terms[t].clone() {
            Term::Expr(e) => self.lower_scaled(e),
            Term::Pair(a, b, k) => self.lower_sum(&Q::zero(), &[(a, Q::one()), (b, k)]),
        };
        self.term_vals.insert(t, v.clone());
        v
    }

    fn lower_factor(&mut self, f: usize) -> Scaled {
        if let Some(v) = self.factor_vals.get(&f) {
            return v.clone();
        }
        let v = match self.factoring.factors[f].clone() {
            Factor::Power(b, e) => {
                let (bv, bk) = self.lower_scaled(b);
                // (k·v)^e = k^e·v^e where k^e is rational: integer e, or a half-integer e
                // of a positive square k; otherwise the power needs the true base.
                let (bv, owed) = match owed_power(&bk, &e) {
                    Some(owed) => (bv, owed),
                    None => (self.materialize(bv, &bk), Q::one()),
                };
                let v = if e.is_negative() && *e.denom() == 2.into() {
                    // b^(−n/2) = (1/√b)^n: the square root is the one b^(1/2) uses.
                    let root = self.emit(Instr::Sqrt(bv));
                    let one = self.constant(Q::one());
                    let r = self.emit(Instr::Div(one, root));
                    self.power(r, &Q::from_integer(e.numer().abs()))
                } else if e.is_negative() && self.factoring.single_negative.contains(&b) && {
                    let one = self.constant(Q::one());
                    !self.numbering.contains_key(&Instr::Div(one, bv))
                } {
                    // The only negative power of this base, and 1/b not computed already:
                    // 1/bⁿ costs what (1/b)ⁿ costs and shares bⁿ with the numerators (sin²θ).
                    let one = self.constant(Q::one());
                    let p = self.power(bv, &e.abs());
                    self.emit(Instr::Div(one, p))
                } else if e.is_negative() {
                    let one = self.constant(Q::one());
                    let r = self.emit(Instr::Div(one, bv));
                    self.power(r, &e.abs())
                } else {
                    self.power(bv, &e)
                };
                (v, owed)
            }
            Factor::Pair(a, b) => {
                let ((a, ka), (b, kb)) = (self.lower_factor(a), self.lower_factor(b));
                (self.emit(Instr::Mul(a, b)), ka * kb)
            }
        };
        self.factor_vals.insert(f, v.clone());
        v
    }

    /// A product of factors; negative powers are powers of reciprocals (see [`Factoring`]).
    fn lower_product(&mut self, factors: &[usize]) -> Scaled {
        let mut owed = Q::one();
        let mut vals = Vec::with_capacity(factors.len());
        for &f in factors {
            let (v, k) = self.lower_factor(f);
            owed *= k;
            // A factor that was all constant is now all owed.
            if self.constant_value(v).is_some_and(|c| c.is_one()) {
                continue;
            }
            vals.push(v);
        }
        let v = self
            .product(&vals)
            .unwrap_or_else(|| self.constant(Q::one()));
        (v, owed)
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

/// The magnitude shared by the most coefficients (ties: the first term's, then the
/// smallest), `None` for no terms. Dividing it out leaves the most unit coefficients.
fn most_common_magnitude(items: &[(Val, Q)]) -> Option<Q> {
    let first = items.first()?.1.abs();
    let mut counts: BTreeMap<Q, usize> = BTreeMap::new();
    for (_, k) in items {
        *counts.entry(k.abs()).or_default() += 1;
    }
    let top = counts.values().copied().max().unwrap_or(0);
    if counts.get(&first) == Some(&top) {
        return Some(first);
    }
    counts.into_iter().find(|(_, n)| *n == top).map(|(k, _)| k)
}

/// `k^e` when it is rational and small: `e` an integer of magnitude at most 64, or a
/// half-integer with `k` a positive square of integers.
fn owed_power(k: &Q, e: &Q) -> Option<Q> {
    if k.is_one() {
        return Some(Q::one());
    }
    let n = e.numer().to_i32().filter(|n| n.abs() <= 64)?;
    if e.is_integer() {
        return Some(pow_i32(k, n));
    }
    if *e.denom() != 2.into() || !k.is_positive() {
        return None;
    }
    let (num, den) = (k.numer().sqrt(), k.denom().sqrt());
    if &(&num * &num) != k.numer() || &(&den * &den) != k.denom() {
        return None;
    }
    Some(pow_i32(&Q::new(num, den), n))
}

/// `k^n` for an integer `n` (k nonzero).
fn pow_i32(k: &Q, n: i32) -> Q {
    let mut r = Q::one();
    for _ in 0..n.unsigned_abs() {
        r *= k;
    }
    if n < 0 {
        r.recip()
    } else {
        r
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::SymbolKind;

    /// x/y and 1/sin²θ: a reciprocal read once becomes one division, and a base with one
    /// negative power takes the reciprocal of the power it already squares.
    #[test]
    fn single_reciprocals_fold_into_divisions() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let q = s.div(x, y);
        let p = lower(&s, KernelKind::Metric, 2, &[q], vec![1]);
        assert_eq!(p.op_counts().total(), 1, "{p}");
        assert!(p.instrs.iter().any(|i| matches!(i, Instr::Div(..))), "{p}");
        let sn = s.call(crate::expr::Func::Sin, y);
        let s2 = s.powi(sn, 2);
        let inv_s2 = s.powi(sn, -2);
        let both = s.add(&[s2, inv_s2]);
        let p = lower(&s, KernelKind::Metric, 2, &[both], vec![1]);
        // sin, sin², 1/sin², the sum.
        assert_eq!(p.op_counts().total(), 4, "{p}");
        let mut out = Vec::new();
        p.eval_f64(&|_| vec![0.3, 0.7], &mut out);
        let want = 0.7f64.sin().powi(2) + 0.7f64.sin().powi(-2);
        assert!((out[0] - want).abs() < 1e-14 * want, "{} vs {want}", out[0]);
    }
}
