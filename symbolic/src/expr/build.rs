//! Canonical constructors: every sum and product is normalised as it is built.

use std::collections::BTreeMap;

use num_bigint::BigInt;
use num_traits::{One, Signed, Zero};

use super::{ExprId, Func, NamedConst, Node, Store, Q};

impl Store {
    /// The exact number `q`.
    pub fn num(&mut self, q: Q) -> ExprId {
        self.intern(Node::Num(q))
    }

    /// The integer `n`.
    pub fn int(&mut self, n: i64) -> ExprId {
        self.num(Q::from_integer(n.into()))
    }

    /// A named constant (π or e).
    pub fn constant(&mut self, c: NamedConst) -> ExprId {
        self.intern(Node::Constant(c))
    }

    /// The linear combination `Σ coeff·term`, in canonical form.
    pub fn lincomb(&mut self, parts: &[(ExprId, Q)]) -> ExprId {
        let mut constant = Q::zero();
        let mut terms: BTreeMap<ExprId, Q> = BTreeMap::new();
        for (id, k) in parts {
            if k.is_zero() {
                continue;
            }
            match self.node(*id) {
                Node::Num(q) => constant += q * k,
                Node::Add(c, ts) => {
                    constant += c * k;
                    for (t, ck) in ts.iter() {
                        *terms.entry(*t).or_insert_with(Q::zero) += ck * k;
                    }
                }
                _ => *terms.entry(*id).or_insert_with(Q::zero) += k.clone(),
            }
        }
        let terms: Vec<(ExprId, Q)> = terms.into_iter().filter(|(_, k)| !k.is_zero()).collect();
        if terms.is_empty() {
            return self.num(constant);
        }
        if constant.is_zero() && terms.len() == 1 && terms[0].1.is_one() {
            return terms[0].0;
        }
        self.intern(Node::Add(constant, terms.into_boxed_slice()))
    }

    /// `a₁ + a₂ + …`.
    pub fn add(&mut self, items: &[ExprId]) -> ExprId {
        let parts: Vec<(ExprId, Q)> = items.iter().map(|&i| (i, Q::one())).collect();
        self.lincomb(&parts)
    }

    /// `a − b`.
    pub fn sub(&mut self, a: ExprId, b: ExprId) -> ExprId {
        self.lincomb(&[(a, Q::one()), (b, -Q::one())])
    }

    /// `−a`.
    pub fn neg(&mut self, a: ExprId) -> ExprId {
        self.lincomb(&[(a, -Q::one())])
    }

    /// `k·a`.
    pub fn scale(&mut self, a: ExprId, k: Q) -> ExprId {
        self.lincomb(&[(a, k)])
    }

    /// The product `Π base^exponent`, in canonical form.
    pub fn mul_pow(&mut self, factors: &[(ExprId, Q)]) -> ExprId {
        let mut coeff = Q::one();
        let mut bases: BTreeMap<ExprId, Q> = BTreeMap::new();
        let mut pending: Vec<(ExprId, Q)> = factors.to_vec();
        while let Some((id, e)) = pending.pop() {
            if e.is_zero() {
                continue;
            }
            match self.node(id).clone() {
                Node::Num(q) => match rational_power(&q, &e) {
                    Some(Ok(v)) => coeff *= v,
                    Some(Err(())) => {
                        self.division_by_zero = true;
                        return self.int(0);
                    }
                    None => *bases.entry(id).or_insert_with(Q::zero) += e,
                },
                // (c·t)^e = c^e·t^e for integer e, and for c > 0 with any e (both sides are
                // undefined together when t < 0).
                Node::Add(c, ts) if c.is_zero() && ts.len() == 1 => {
                    let (t, k) = &ts[0];
                    if e.is_integer() || k.is_positive() {
                        let kid = self.num(k.clone());
                        pending.push((kid, e.clone()));
                        pending.push((*t, e));
                    } else {
                        *bases.entry(id).or_insert_with(Q::zero) += e;
                    }
                }
                // (Π bᵢ^eᵢ)^e merges only for integer e: (x²)^(1/2) is |x|, not x.
                Node::Mul(fs) if e.is_integer() => {
                    for (b, eb) in fs.iter() {
                        pending.push((*b, eb * &e));
                    }
                }
                _ => *bases.entry(id).or_insert_with(Q::zero) += e,
            }
        }
        // A base whose exponents summed to an integer can now be flattened.
        let mut out: BTreeMap<ExprId, Q> = BTreeMap::new();
        let mut again: Vec<(ExprId, Q)> = Vec::new();
        for (b, e) in bases {
            if e.is_zero() {
                continue;
            }
            let flattenable = e.is_integer()
                && (matches!(self.node(b), Node::Mul(_))
                    || matches!(self.node(b), Node::Add(c, ts) if c.is_zero() && ts.len() == 1));
            if flattenable {
                again.push((b, e));
            } else {
                out.insert(b, e);
            }
        }
        if !again.is_empty() {
            let mut all: Vec<(ExprId, Q)> = out.into_iter().collect();
            all.extend(again);
            let c = self.num(coeff);
            all.push((c, Q::one()));
            return self.mul_pow(&all);
        }
        if coeff.is_zero() {
            return self.int(0);
        }
        let factors: Vec<(ExprId, Q)> = out.into_iter().collect();
        let body = if factors.is_empty() {
            return self.num(coeff);
        } else if factors.len() == 1 && factors[0].1.is_one() {
            factors[0].0
        } else {
            self.intern(Node::Mul(factors.into_boxed_slice()))
        };
        self.lincomb(&[(body, coeff)])
    }

    /// `a₁·a₂·…`.
    pub fn mul(&mut self, items: &[ExprId]) -> ExprId {
        if items.iter().any(|&i| self.is_zero(i)) {
            return self.int(0);
        }
        let parts: Vec<(ExprId, Q)> = items.iter().map(|&i| (i, Q::one())).collect();
        self.mul_pow(&parts)
    }

    /// `Σ aᵢ·bᵢ`, skipping pairs with a structural zero.
    pub fn sum_of_products(&mut self, pairs: &[(ExprId, ExprId)]) -> ExprId {
        let mut terms = Vec::with_capacity(pairs.len());
        for &(a, b) in pairs {
            if !self.is_zero(a) && !self.is_zero(b) {
                terms.push(self.mul(&[a, b]));
            }
        }
        self.add(&terms)
    }

    /// `a·b`, multiplied out over the terms of `b` when `b` is a sum, `a` is not, and like
    /// powers merge in every term on average (`r⁻²·(2r·u + r²·v)` becomes `2r⁻¹·u + v`);
    /// otherwise the plain product, which keeps the sum shared.
    pub fn mul_distributed(&mut self, a: ExprId, b: ExprId) -> ExprId {
        let (Node::Add(c, ts), false) =
            (self.node(b).clone(), matches!(self.node(a), Node::Add(..)))
        else {
            return self.mul(&[a, b]);
        };
        let width = |s: &Store, e: ExprId| match s.node(e) {
            Node::Mul(fs) => fs.len(),
            Node::Num(_) => 0,
            _ => 1,
        };
        let mut parts: Vec<(ExprId, Q)> = Vec::with_capacity(ts.len() + 1);
        let mut merged = 0;
        if !c.is_zero() {
            parts.push((a, c));
        }
        for (t, k) in ts.iter() {
            let p = self.mul(&[a, *t]);
            merged += (width(self, a) + width(self, *t)).saturating_sub(width(self, p));
            parts.push((p, k.clone()));
        }
        if merged < ts.len() {
            return self.mul(&[a, b]);
        }
        self.lincomb(&parts)
    }

    /// `a·b` multiplied out over the terms of `b` whenever `b` is a sum and `a` is not (the
    /// unconditional form of [`mul_distributed`](Self::mul_distributed), for callers that
    /// pull common factors back out afterwards).
    pub fn mul_spread(&mut self, a: ExprId, b: ExprId) -> ExprId {
        let (Node::Add(c, ts), false) =
            (self.node(b).clone(), matches!(self.node(a), Node::Add(..)))
        else {
            return self.mul(&[a, b]);
        };
        let mut parts: Vec<(ExprId, Q)> = Vec::with_capacity(ts.len() + 1);
        if !c.is_zero() {
            parts.push((a, c));
        }
        for (t, k) in ts.iter() {
            let p = self.mul(&[a, *t]);
            parts.push((p, k.clone()));
        }
        self.lincomb(&parts)
    }

    /// `a` kept whole (see [`Node::Bound`]), unless it is already an atom or a sum of at
    /// most one term (`k·t` or `c + t`), which gains nothing from being kept whole.
    pub fn bind(&mut self, a: ExprId) -> ExprId {
        match self.node(a) {
            Node::Num(_) | Node::Symbol(_) | Node::Constant(_) | Node::Bound(_) => a,
            Node::Add(_, ts) if ts.len() < 2 => a,
            _ => self.intern(Node::Bound(a)),
        }
    }

    /// `a / b`; a division by an exact zero is recorded (see
    /// [`take_division_by_zero`](Store::take_division_by_zero)) and yields zero.
    pub fn div(&mut self, a: ExprId, b: ExprId) -> ExprId {
        if self.is_zero(b) {
            self.division_by_zero = true;
            return self.int(0);
        }
        if self.is_zero(a) {
            return a;
        }
        self.mul_pow(&[(a, Q::one()), (b, -Q::one())])
    }

    /// `a^e` for an exact rational exponent.
    pub fn pow_q(&mut self, a: ExprId, e: Q) -> ExprId {
        if e.is_zero() {
            return self.int(1);
        }
        if self.is_zero(a) {
            if e.is_negative() {
                self.division_by_zero = true;
            }
            return self.int(0);
        }
        self.mul_pow(&[(a, e)])
    }

    /// `a^n` for an integer exponent.
    pub fn powi(&mut self, a: ExprId, n: i64) -> ExprId {
        self.pow_q(a, Q::from_integer(n.into()))
    }

    /// `√a`.
    pub fn sqrt(&mut self, a: ExprId) -> ExprId {
        self.pow_q(a, Q::new(1.into(), 2.into()))
    }

    /// `a^b` for any exponent; numeric exponents become rational powers.
    pub fn pow(&mut self, a: ExprId, b: ExprId) -> ExprId {
        if let Some(e) = self.as_num(b) {
            let e = e.clone();
            return self.pow_q(a, e);
        }
        if matches!(self.node(a), Node::Num(q) if q.is_one()) {
            return a;
        }
        if matches!(self.node(a), Node::Constant(NamedConst::E)) {
            return self.call(Func::Exp, b);
        }
        self.intern(Node::Pow(a, b))
    }

    /// `f(a)`, with exact values folded (sin 0 = 0, ln 1 = 0, …) and the parity of odd and
    /// even functions used to pull out a sign.
    pub fn call(&mut self, f: Func, a: ExprId) -> ExprId {
        if let Some(q) = self.as_num(a) {
            if q.is_zero() {
                match f {
                    Func::Sin | Func::Tan | Func::Sinh | Func::Tanh | Func::Asin | Func::Atan => {
                        return self.int(0)
                    }
                    Func::Cos | Func::Cosh | Func::Exp => return self.int(1),
                    Func::Ln | Func::Acos => {}
                }
            } else if q.is_one() && f == Func::Ln {
                return self.int(0);
            }
        }
        if let (Func::Ln, Node::Constant(NamedConst::E)) = (f, self.node(a)) {
            return self.int(1);
        }
        if let Node::Add(c, ts) = self.node(a) {
            let negative = c.is_zero() && ts.len() == 1 && ts[0].1.is_negative();
            if negative {
                let pos = self.neg(a);
                match f {
                    Func::Sin | Func::Tan | Func::Sinh | Func::Tanh | Func::Asin | Func::Atan => {
                        let inner = self.intern(Node::Call(f, pos));
                        return self.neg(inner);
                    }
                    Func::Cos | Func::Cosh => return self.intern(Node::Call(f, pos)),
                    _ => {}
                }
            }
        }
        self.intern(Node::Call(f, a))
    }
}

/// `q^e` exactly when the result is rational: `Some(Ok(v))`; `Some(Err(()))` for zero to a
/// negative power; `None` when the result is irrational (kept symbolic).
fn rational_power(q: &Q, e: &Q) -> Option<Result<Q, ()>> {
    if q.is_zero() {
        return Some(if e.is_negative() {
            Err(())
        } else {
            Ok(Q::zero())
        });
    }
    if q.is_one() {
        return Some(Ok(Q::one()));
    }
    // Guard against exponents that would build enormous integers.
    let max_bits = 4096u64;
    let bits = q.numer().bits().max(q.denom().bits());
    let num_abs = e.numer().abs();
    let n: u32 = num_abs.try_into().ok()?;
    if bits.saturating_mul(n as u64) > max_bits {
        return None;
    }
    let d: u32 = e.denom().try_into().ok()?;
    let base = if d == 1 {
        q.clone()
    } else {
        if q.is_negative() {
            return None;
        }
        let rn = exact_root(q.numer(), d)?;
        let rd = exact_root(q.denom(), d)?;
        Q::new(rn, rd)
    };
    let mut v = num_traits::pow(base, n as usize);
    if e.is_negative() {
        v = v.recip();
    }
    Some(Ok(v))
}

fn exact_root(n: &BigInt, d: u32) -> Option<BigInt> {
    let r = n.nth_root(d);
    (num_traits::pow(r.clone(), d as usize) == *n).then_some(r)
}

#[cfg(test)]
mod tests {
    use super::super::SymbolKind;
    use super::*;

    fn q(n: i64, d: i64) -> Q {
        Q::new(n.into(), d.into())
    }

    #[test]
    fn like_terms_collect_and_cancel() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let a = s.add(&[x, y, x]);
        let b = s.lincomb(&[(x, q(2, 1)), (y, q(1, 1))]);
        assert_eq!(a, b);
        let z = s.sub(a, b);
        assert!(s.is_zero(z));
    }

    #[test]
    fn powers_merge_and_reciprocals_cancel() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let x2 = s.mul(&[x, x]);
        let also = s.powi(x, 2);
        assert_eq!(x2, also);
        let one = s.div(x2, also);
        assert_eq!(s.as_num(one), Some(&q(1, 1)));
        let r = s.sqrt(x);
        let back = s.mul(&[r, r]);
        assert_eq!(back, x);
    }

    #[test]
    fn square_root_of_a_square_is_not_folded() {
        // (x²)^(1/2) = |x|: folding it to x would be wrong for negative x.
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let x2 = s.powi(x, 2);
        let r = s.sqrt(x2);
        assert_ne!(r, x);
        let v = s.eval(r, &|_| -3.0);
        assert_eq!(v, 3.0);
    }

    #[test]
    fn numbers_fold_exactly() {
        let mut s = Store::new();
        let four = s.int(4);
        let two = s.sqrt(four);
        assert_eq!(s.as_num(two), Some(&q(2, 1)));
        let t = s.num(q(9, 4));
        let r = s.pow_q(t, q(-3, 2));
        assert_eq!(s.as_num(r), Some(&q(8, 27)));
        let two = s.int(2);
        let irr = s.sqrt(two);
        assert!(s.as_num(irr).is_none());
    }

    #[test]
    fn coefficients_pull_out_of_products() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let tx = s.scale(x, q(3, 1));
        let p = s.mul(&[tx, y]);
        let xy = s.mul(&[x, y]);
        let expect = s.scale(xy, q(3, 1));
        assert_eq!(p, expect);
    }

    #[test]
    fn division_by_exact_zero_is_recorded() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let z = s.sub(x, x);
        let _ = s.div(x, z);
        assert!(s.take_division_by_zero());
        assert!(!s.take_division_by_zero());
    }

    #[test]
    fn odd_and_even_functions_pull_out_signs() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let mx = s.neg(x);
        let a = s.call(Func::Sin, mx);
        let sx = s.call(Func::Sin, x);
        let b = s.neg(sx);
        assert_eq!(a, b);
        let c = s.call(Func::Cos, mx);
        let cx = s.call(Func::Cos, x);
        assert_eq!(c, cx);
    }
}
