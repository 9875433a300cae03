//! Pulling common factors out of sums: the step that turns an expanded sum of products back
//! into a short product form before it is differentiated.

use std::cmp::Reverse;
use std::collections::BTreeMap;

use num_traits::{One, Signed, Zero};

use super::{ExprId, Node, Store, Q};

/// The constant, the `(term, coefficient)` pairs and each term's `(base, exponent)` factors
/// of a sum.
type FactoredTerms = (Q, Vec<(ExprId, Q)>, Vec<Vec<(ExprId, Q)>>);

impl Store {
    /// A sum of two or more terms as [`FactoredTerms`] (a term that is not a product is its
    /// own single factor); `None` for anything else.
    fn terms_as_factors(&self, e: ExprId) -> Option<FactoredTerms> {
        let Node::Add(c, terms) = self.node(e).clone() else {
            return None;
        };
        if terms.len() < 2 {
            return None;
        }
        let lists = terms
            .iter()
            .map(|(t, _)| match self.node(*t) {
                Node::Mul(fs) => fs.to_vec(),
                _ => vec![(*t, Q::one())],
            })
            .collect();
        Some((c, terms.to_vec(), lists))
    }

    /// `e` with the factor shared by the most terms of its sum pulled out, repeatedly (greedy
    /// factoring of a sum of products, common practice): `f·l_x·u^t + f·l_x²·u^x + u^x` becomes
    /// `f·l_x·(u^t + l_x·u^x) + u^x`. A factor is a base with exponents of one sign; the smallest
    /// such exponent among the terms that share it is what comes out.
    pub fn collect_common(&mut self, e: ExprId) -> ExprId {
        let s = self;
        let Some((c, terms, lists)) = s.terms_as_factors(e) else {
            return e;
        };
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

/// A group [`Store::factor_groups`] may pull out: its estimated saving, how many terms hold
/// it, the monomial they share and those terms' positions.
type Candidate = (usize, usize, Vec<(ExprId, Q)>, Vec<usize>);

impl Store {
    /// `e` with every product that holds exactly one sum (to the first power) multiplied out
    /// over that sum, recursively: `s²·(r² + a² + f·s²)·u` becomes `s²·r²·u + s²·a²·u +
    /// f·s⁴·u`, so that [`factor_groups`](Self::factor_groups) sees the factors inside. A
    /// product of two sums, or a power of one, is left whole: multiplying those out swells
    /// the sum more than regrouping wins back.
    pub fn distribute_single_sums(&mut self, e: ExprId) -> ExprId {
        match self.node(e).clone() {
            Node::Add(c, ts) => {
                let mut parts = Vec::with_capacity(ts.len() + 1);
                parts.push((self.num(c), Q::one()));
                for (t, k) in ts.iter() {
                    let x = self.distribute_single_sums(*t);
                    parts.push((x, k.clone()));
                }
                self.lincomb(&parts)
            }
            Node::Mul(fs) => {
                let mut sums = fs
                    .iter()
                    .filter(|(b, x)| x.is_one() && matches!(self.node(*b), Node::Add(..)));
                let (Some(&(sum, _)), None) = (sums.next(), sums.next()) else {
                    return e;
                };
                let rest: Vec<(ExprId, Q)> =
                    fs.iter().filter(|(b, _)| *b != sum).cloned().collect();
                let monomial = self.mul_pow(&rest);
                let sum = self.distribute_single_sums(sum);
                self.mul_spread(monomial, sum)
            }
            _ => e,
        }
    }

    /// `e` with common factors pulled out of its sum, choosing each time the group that
    /// saves the most multiplications: for every base, the terms that hold it and the
    /// monomial they all share; pulling that monomial out of k terms saves about (k − 1)
    /// times its number of bases. Unlike [`collect_common`](Self::collect_common), which pulls
    /// the single most frequent base, this finds `f·l·(u_t − l·u_φ)` when `u_φ` is more
    /// frequent but shares less. What stays inside a pulled factor is normalised so its first
    /// coefficient is one (the factor takes the constant), so that `2·u_t − 2·l·u_φ` and
    /// `−u_t + l·u_φ` become one node.
    pub fn factor_groups(&mut self, e: ExprId) -> ExprId {
        let s = self;
        let Some((c, terms, lists)) = s.terms_as_factors(e) else {
            return e;
        };
        // (base, negative exponent?) → the terms holding it, in order.
        let mut holders: BTreeMap<(ExprId, bool), Vec<usize>> = BTreeMap::new();
        for (i, list) in lists.iter().enumerate() {
            for (b, x) in list {
                holders.entry((*b, x.is_negative())).or_default().push(i);
            }
        }
        // Ties keep the first candidate in base order, so the choice is deterministic.
        // (saving, terms, shared monomial, the terms holding it)
        let mut best: Option<Candidate> = None;
        for members in holders.values() {
            if members.len() < 2 {
                continue;
            }
            let mut shared: Vec<(ExprId, Q)> = lists[members[0]].clone();
            for &m in &members[1..] {
                shared.retain_mut(|(b, x)| {
                    let other = lists[m]
                        .iter()
                        .find(|(ob, ox)| ob == b && ox.is_negative() == x.is_negative());
                    match other {
                        Some((_, ox)) => {
                            if ox.abs() < x.abs() {
                                *x = ox.clone();
                            }
                            true
                        }
                        None => false,
                    }
                });
            }
            let score = (members.len() - 1) * shared.len();
            let better = match &best {
                None => true,
                Some((bs, bc, _, _)) => (score, members.len()) > (*bs, *bc),
            };
            if better {
                best = Some((score, members.len(), shared, members.clone()));
            }
        }
        let Some((_, _, shared, members)) = best else {
            return e;
        };
        let inverse: Vec<(ExprId, Q)> = shared.iter().map(|(b, x)| (*b, -x.clone())).collect();
        let mut inner = Vec::new();
        let mut rest = Vec::new();
        for (i, (t, k)) in terms.iter().enumerate() {
            if members.contains(&i) {
                let mut fs = inverse.clone();
                fs.push((*t, Q::one()));
                inner.push((s.mul_pow(&fs), k.clone()));
            } else {
                rest.push((*t, k.clone()));
            }
        }
        let inner = s.lincomb(&inner);
        let inner = s.factor_groups(inner);
        let (lead, inner) = s.split_leading_coefficient(inner);
        let mut fs = shared;
        fs.push((inner, Q::one()));
        let factored = s.mul_pow(&fs);
        if !c.is_zero() {
            rest.push((s.num(c), Q::one()));
        }
        let rest = s.lincomb(&rest);
        let rest = s.factor_groups(rest);
        s.lincomb(&[(factored, lead), (rest, Q::one())])
    }

    /// `(k, e/k)` for a sum `e` whose first term has coefficient `k`, else `(1, e)`: sums kept
    /// this way are equal whenever they differ by a constant factor.
    fn split_leading_coefficient(&mut self, e: ExprId) -> (Q, ExprId) {
        let Node::Add(c, terms) = self.node(e).clone() else {
            return (Q::one(), e);
        };
        let lead = terms[0].1.clone();
        if terms.len() < 2 || lead.is_one() {
            return (Q::one(), e);
        }
        let mut parts: Vec<(ExprId, Q)> = terms.iter().map(|(t, k)| (*t, k / &lead)).collect();
        parts.push((self.num(&c / &lead), Q::one()));
        (lead, self.lincomb(&parts))
    }

    /// A rough count of the operations `e` costs written out as a tree (symbols, calls and
    /// named pieces free, integer powers by repeated squaring): used to choose between two
    /// factored forms of one sum, not as a promise about the scheduled program.
    pub fn tree_cost(&self, e: ExprId) -> usize {
        match self.node(e) {
            Node::Add(c, ts) => {
                let scaled = ts.iter().filter(|(_, k)| !k.abs().is_one()).count();
                let inner: usize = ts.iter().map(|(t, _)| self.tree_cost(*t)).sum();
                inner + scaled + ts.len() + usize::from(!c.is_zero()) - 1
            }
            Node::Mul(fs) => {
                let inner: usize = fs
                    .iter()
                    .map(|(b, x)| {
                        let power = if x.is_integer() {
                            let n = x.numer().magnitude();
                            (n.bits() as usize - 1) + (n.count_ones() as usize - 1)
                        } else {
                            1
                        };
                        self.tree_cost(*b) + power
                    })
                    .sum();
                inner + fs.len() - 1
            }
            _ => 0,
        }
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

    /// A sum shaped like Kerr's p_φ: grouping pulls out r·m·a·s² from the two terms that share
    /// it, so the contraction u_t − a·s²·u_φ appears as a node of its own, and the value is
    /// unchanged.
    #[test]
    fn grouping_finds_the_shared_contraction() {
        let mut s = Store::new();
        let r = s.symbol("r", SymbolKind::Coordinate(0));
        let sn = s.symbol("s", SymbolKind::Coordinate(1));
        let m = s.symbol("m", SymbolKind::Parameter(0));
        let a = s.symbol("a", SymbolKind::Parameter(1));
        let ut = s.symbol("ut", SymbolKind::Velocity(0));
        let up = s.symbol("up", SymbolKind::Velocity(1));
        let s2 = s.powi(sn, 2);
        let s4 = s.powi(sn, 4);
        let r2 = s.powi(r, 2);
        let a2 = s.powi(a, 2);
        let t1 = s.mul(&[r, m, a, s2, ut]);
        let t2 = s.mul(&[r2, s2, up]);
        let t3 = s.mul(&[a2, s2, up]);
        let t4 = s.mul(&[r, m, a2, s4, up]);
        let two = crate::expr::Q::from_integer(2.into());
        let e = s.lincomb(&[
            (t1, -two.clone()),
            (t2, crate::expr::Q::from_integer(1.into())),
            (t3, crate::expr::Q::from_integer(1.into())),
            (t4, two),
        ]);
        let g = s.factor_groups(e);
        let a_s2_up = s.mul(&[a, s2, up]);
        let contraction = s.sub(ut, a_s2_up);
        let mut found = false;
        let mut stack = vec![g];
        while let Some(x) = stack.pop() {
            found |= x == contraction;
            match s.node(x) {
                Node::Add(_, ts) | Node::Mul(ts) => stack.extend(ts.iter().map(|t| t.0)),
                _ => {}
            }
        }
        assert!(found, "{}", s.display(g));
        for vals in [
            [0.7, 0.3, 1.1, -0.4, 2.0, 0.5],
            [3.0, -0.8, 0.2, 0.9, -1.5, 4.0],
        ] {
            let at = |sym: &crate::expr::Symbol| match sym.name.as_str() {
                "r" => vals[0],
                "s" => vals[1],
                "m" => vals[2],
                "a" => vals[3],
                "ut" => vals[4],
                _ => vals[5],
            };
            let (x, y) = (s.eval(e, &at), s.eval(g, &at));
            assert!((x - y).abs() <= 1e-13 * x.abs().max(1.0), "{x} vs {y}");
        }
        // The rough count prefers the grouped form to the expanded sum.
        assert!(s.tree_cost(g) < s.tree_cost(e));
    }

    /// A product holding one sum is multiplied out; a product of two sums is not.
    #[test]
    fn distributes_over_a_single_sum_only() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let z = s.symbol("z", SymbolKind::Coordinate(2));
        let xy = s.add(&[x, y]);
        let one_sum = s.mul(&[z, xy]);
        let spread = s.distribute_single_sums(one_sum);
        let zx = s.mul(&[z, x]);
        let zy = s.mul(&[z, y]);
        assert_eq!(spread, s.add(&[zx, zy]));
        let xz = s.add(&[x, z]);
        let two_sums = s.mul(&[xy, xz]);
        assert_eq!(s.distribute_single_sums(two_sums), two_sums);
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
