//! Lowering expressions to a straight-line program with common-subexpression elimination.
//!
//! Every instruction goes through value numbering (a table from instruction to value), so a
//! subexpression shared anywhere among a kernel's outputs is computed once. On the way the
//! canonical sums and products are turned into cheap code: integer powers by repeated
//! multiplication (x·x, (x·x)·(x·x)), half-integer powers through one square root, a product's
//! negative powers gathered under a single division, a sum's terms grouped by coefficient so
//! that a shared factor is multiplied once, and signs absorbed into subtractions.

use std::collections::{BTreeMap, HashMap};

use num_traits::{One, Signed, ToPrimitive, Zero};

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
    let mut l = Lowerer { store, instrs: Vec::new(), numbering: HashMap::new(), memo: HashMap::new() };
    let outs: Vec<Val> = outputs.iter().map(|&e| l.lower(e)).collect();
    KernelProgram { kind, dim, instrs: l.instrs, outputs: outs, shape }
}

struct Lowerer<'a> {
    store: &'a Store,
    instrs: Vec<Instr>,
    numbering: HashMap<Instr, Val>,
    memo: HashMap<ExprId, Val>,
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

    fn lower(&mut self, e: ExprId) -> Val {
        if let Some(&v) = self.memo.get(&e) {
            return v;
        }
        let v = match self.store.node(e).clone() {
            Node::Num(q) => self.constant(q),
            Node::Symbol(n) => {
                let (array, index) = match self.store.symbols()[n as usize].kind {
                    SymbolKind::Coordinate(i) => (InputArray::X, i),
                    SymbolKind::Parameter(i) => (InputArray::Params, i),
                    SymbolKind::Velocity(i) => (InputArray::U, i),
                    SymbolKind::Momentum(i) => (InputArray::P, i),
                    SymbolKind::Vector(i) => (InputArray::V, i),
                    SymbolKind::Differential(i) => (InputArray::U, i),
                };
                self.emit(Instr::Input(array, index as u16))
            }
            Node::Constant(c) => self.emit(Instr::Named(c)),
            Node::Add(c, terms) => self.lower_sum(&c, &terms),
            Node::Mul(factors) => self.lower_product(&factors),
            Node::Call(f, a) => {
                let a = self.lower(a);
                self.emit(Instr::Call(f, a))
            }
            Node::Pow(b, x) => {
                let b = self.lower(b);
                let x = self.lower(x);
                self.emit(Instr::Powf(b, x))
            }
        };
        self.memo.insert(e, v);
        v
    }

    /// `c + Σ kᵢ tᵢ`: terms grouped by |k| so each distinct factor is applied once,
    /// `|k|·(Σ± tᵢ)`, then the groups combined with additions and subtractions.
    fn lower_sum(&mut self, c: &Q, terms: &[(ExprId, Q)]) -> Val {
        let mut groups: BTreeMap<Q, (Vec<Val>, Vec<Val>)> = BTreeMap::new();
        for (t, k) in terms {
            let v = self.lower(*t);
            let g = groups.entry(k.abs()).or_default();
            if k.is_positive() {
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
                (self.signed_sum(&[], &neg), false)
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
            let s = self.signed_sum(&neg, &[]);
            self.emit(Instr::Neg(s))
        } else {
            self.signed_sum(&pos, &neg)
        }
    }

    /// `Σ pos − Σ neg`, left to right; `pos` must be non-empty unless `neg` is used as the
    /// positive list by the caller.
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

    /// `Π bᵢ^eᵢ` as (product of positive powers) / (product of negative powers).
    fn lower_product(&mut self, factors: &[(ExprId, Q)]) -> Val {
        let mut num: Vec<Val> = Vec::new();
        let mut den: Vec<Val> = Vec::new();
        for (b, e) in factors {
            let bv = self.lower(*b);
            let p = self.power(bv, &e.abs());
            if e.is_positive() {
                num.push(p);
            } else {
                den.push(p);
            }
        }
        let n = self.product(&num);
        if den.is_empty() {
            return n.unwrap_or_else(|| self.constant(Q::one()));
        }
        let d = self.product(&den).unwrap_or_else(|| self.constant(Q::one()));
        let n = n.unwrap_or_else(|| self.constant(Q::one()));
        self.emit(Instr::Div(n, d))
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
