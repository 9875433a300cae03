//! Pulling common factors out of sums: the step that turns an expanded sum of products back
//! into a short product form before it is differentiated.

use std::cmp::Reverse;
use std::collections::BTreeMap;

use num_traits::{One, Signed, Zero};

use super::{ExprId, Node, Store, Q};

impl Store {
    /// `e` with the factor shared by the most terms of its sum pulled out, repeatedly (greedy
    /// factoring of a sum of products, common practice): `f·l_x·u^t + f·l_x²·u^x + u^x` becomes
    /// `f·l_x·(u^t + l_x·u^x) + u^x`. A factor is a base with exponents of one sign; the smallest
    /// such exponent among the terms that share it is what comes out.
    pub fn collect_common(&mut self, e: ExprId) -> ExprId {
        let s = self;
        let Node::Add(c, terms) = s.node(e).clone() else {
            return e;
        };
        if terms.len() < 2 {
            return e;
        }
        let lists: Vec<Vec<(ExprId, Q)>> = terms
            .iter()
            .map(|(t, _)| match s.node(*t) {
                Node::Mul(fs) => fs.to_vec(),
                _ => vec![(*t, Q::one())],
            })
            .collect();
        // (base, negative exponent?) → (terms containing it, smallest magnitude).
        let mut shared: BTreeMap<(ExprId, bool), (usize, Q)> = BTreeMap::new();
        for list in &lists {
            for (b, x) in list {
                let entry = shared.entry((*b, x.is_negative())).or_insert((0, x.abs()));
                entry.0 += 1;
                if x.abs() < entry.1 {
                    entry.1 = x.abs();
                }
            }
        }
        let best = shared
            .iter()
            .filter(|(_, (count, _))| *count >= 2)
            .max_by_key(|((b, neg), (count, _))| (*count, Reverse((*b, *neg))));
        let Some((&(base, negative), (_, magnitude))) = best else {
            return e;
        };
        let amount = if negative {
            -magnitude.clone()
        } else {
            magnitude.clone()
        };
        let mut inner = Vec::new();
        let mut rest = Vec::new();
        for ((t, k), list) in terms.iter().zip(&lists) {
            if list
                .iter()
                .any(|(b, x)| *b == base && x.is_negative() == negative)
            {
                let quotient = s.mul_pow(&[(*t, Q::one()), (base, -amount.clone())]);
                inner.push((quotient, k.clone()));
            } else {
                rest.push((*t, k.clone()));
            }
        }
        let inner = s.lincomb(&inner);
        let inner = s.collect_common(inner);
        let factored = s.mul_pow(&[(base, amount), (inner, Q::one())]);
        if !c.is_zero() {
            let cid = s.num(c);
            rest.push((cid, Q::one()));
        }
        let rest = s.lincomb(&rest);
        let rest = s.collect_common(rest);
        s.lincomb(&[(factored, Q::one()), (rest, Q::one())])
    }
}

#[cfg(test)]
mod tests {
    use crate::expr::{Node, Store, SymbolKind};

    /// The greedy factoring keeps the value and pulls the most shared factor out first.
    #[test]
    fn pulls_out_the_most_shared_factor() {
        let mut s = Store::new();
        let f = s.symbol("f", SymbolKind::Coordinate(0));
        let l = s.symbol("l", SymbolKind::Coordinate(1));
        let u = s.symbol("u", SymbolKind::Velocity(0));
        let v = s.symbol("v", SymbolKind::Velocity(1));
        // f·l·u + f·l²·v + v
        let t1 = s.mul(&[f, l, u]);
        let l2 = s.powi(l, 2);
        let t2 = s.mul(&[f, l2, v]);
        let e = s.add(&[t1, t2, v]);
        let c = s.collect_common(e);
        let Node::Add(_, terms) = s.node(c).clone() else {
            panic!("still a sum: {}", s.display(c));
        };
        // f·l·(u + l·v) + v: two terms, the first a product of f, l and a sum.
        assert_eq!(terms.len(), 2, "{}", s.display(c));
        for (fv, lv, uv, vv) in [(0.3, -1.7, 2.0, 0.25), (5.0, 0.5, -3.0, 1.5)] {
            let at = |sym: &crate::expr::Symbol| match sym.name.as_str() {
                "f" => fv,
                "l" => lv,
                "u" => uv,
                _ => vv,
            };
            let (a, b) = (s.eval(e, &at), s.eval(c, &at));
            assert!((a - b).abs() <= 1e-14 * a.abs().max(1.0), "{a} vs {b}");
        }
    }

    #[test]
    fn leaves_sums_without_shared_factors_alone() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let e = s.add(&[x, y]);
        assert_eq!(s.collect_common(e), e);
        assert_eq!(s.collect_common(x), x);
    }
}
