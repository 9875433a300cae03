//! Differentiation and substitution on the DAG.

use std::collections::HashMap;

use num_traits::One;

use super::{ExprId, Func, Node, Store, Q};

impl Store {
    /// ∂e/∂s for a symbol node `s`, exact and memoised: subexpressions shared in `e` give
    /// shared derivatives.
    ///
    /// Returns zero at once for any node that does not depend on `s`.
    pub fn diff(&mut self, e: ExprId, s: ExprId) -> ExprId {
        let Node::Symbol(sym) = *self.node(s) else {
            return self.int(0);
        };
        self.diff_sym(e, sym)
    }

    fn diff_sym(&mut self, e: ExprId, sym: u32) -> ExprId {
        if !self.deps(e).contains(sym) {
            return self.int(0);
        }
        if let Some(&d) = self.diff_cache.get(&(e, sym)) {
            return d;
        }
        let d = match self.node(e).clone() {
            Node::Num(_) | Node::Constant(_) => self.int(0),
            Node::Symbol(n) => self.int(if n == sym { 1 } else { 0 }),
            Node::Add(_, terms) => {
                let mut parts = Vec::with_capacity(terms.len());
                for (t, k) in terms.iter() {
                    let dt = self.diff_sym(*t, sym);
                    parts.push((dt, k.clone()));
                }
                self.lincomb(&parts)
            }
            Node::Mul(factors) => {
                // d(Π bᵢ^eᵢ) = Σᵢ eᵢ·bᵢ^(eᵢ−1)·bᵢ'·Π_{j≠i} bⱼ^eⱼ
                let mut parts = Vec::new();
                for (i, (b, eb)) in factors.iter().enumerate() {
                    if !self.deps(*b).contains(sym) {
                        continue;
                    }
                    let db = self.diff_sym(*b, sym);
                    let mut fs: Vec<(ExprId, Q)> = factors.to_vec();
                    fs[i].1 = eb - Q::one();
                    fs.push((db, Q::one()));
                    let term = self.mul_pow(&fs);
                    parts.push((term, eb.clone()));
                }
                self.lincomb(&parts)
            }
            Node::Call(f, a) => {
                let da = self.diff_sym(a, sym);
                let outer = self.call_derivative(f, a, e);
                self.mul(&[outer, da])
            }
            Node::Pow(b, x) => {
                // d(b^x) = b^x·(x'·ln b + x·b'/b)
                let db = self.diff_sym(b, sym);
                let dx = self.diff_sym(x, sym);
                let lnb = self.call(Func::Ln, b);
                let t1 = self.mul(&[dx, lnb]);
                let t2 = self.mul_pow(&[(x, Q::one()), (db, Q::one()), (b, -Q::one())]);
                let inner = self.add(&[t1, t2]);
                self.mul(&[e, inner])
            }
            // A named piece's derivative is named too, with its common factors pulled out:
            // the product rule acting on it stays as short as the declaration.
            Node::Bound(a) => {
                let da = self.diff_sym(a, sym);
                let da = self.collect_common(da);
                self.bind(da)
            }
        };
        self.diff_cache.insert((e, sym), d);
        d
    }

    /// f'(a), given the node `fa = f(a)` so that derivatives can reuse it.
    fn call_derivative(&mut self, f: Func, a: ExprId, fa: ExprId) -> ExprId {
        let half = Q::new(1.into(), 2.into());
        match f {
            Func::Sin => self.call(Func::Cos, a),
            Func::Cos => {
                let s = self.call(Func::Sin, a);
                self.neg(s)
            }
            // 1 + tan²a reuses tan a.
            Func::Tan => {
                let t2 = self.powi(fa, 2);
                let one = self.int(1);
                self.add(&[one, t2])
            }
            Func::Exp => fa,
            Func::Ln => self.powi(a, -1),
            Func::Sinh => self.call(Func::Cosh, a),
            Func::Cosh => self.call(Func::Sinh, a),
            Func::Tanh => {
                let t2 = self.powi(fa, 2);
                let one = self.int(1);
                self.sub(one, t2)
            }
            Func::Asin | Func::Acos => {
                let a2 = self.powi(a, 2);
                let one = self.int(1);
                let d = self.sub(one, a2);
                let r = self.pow_q(d, -half);
                if f == Func::Asin {
                    r
                } else {
                    self.neg(r)
                }
            }
            Func::Atan => {
                let a2 = self.powi(a, 2);
                let one = self.int(1);
                let d = self.add(&[one, a2]);
                self.powi(d, -1)
            }
        }
    }

    /// `e` with every symbol in `map` replaced by its image, rebuilt canonically.
    pub fn substitute(&mut self, e: ExprId, map: &HashMap<ExprId, ExprId>) -> ExprId {
        let mut memo: HashMap<ExprId, ExprId> = HashMap::new();
        self.subst_rec(e, map, &mut memo)
    }

    fn subst_rec(
        &mut self,
        e: ExprId,
        map: &HashMap<ExprId, ExprId>,
        memo: &mut HashMap<ExprId, ExprId>,
    ) -> ExprId {
        if let Some(&r) = map.get(&e) {
            return r;
        }
        if let Some(&r) = memo.get(&e) {
            return r;
        }
        let touches = map.keys().any(|k| match self.node(*k) {
            Node::Symbol(n) => self.deps(e).contains(*n),
            _ => false,
        });
        if !touches {
            return e;
        }
        let r = match self.node(e).clone() {
            Node::Num(_) | Node::Constant(_) | Node::Symbol(_) => e,
            Node::Add(c, terms) => {
                let mut parts = Vec::with_capacity(terms.len() + 1);
                let cid = self.num(c);
                parts.push((cid, Q::one()));
                for (t, k) in terms.iter() {
                    let nt = self.subst_rec(*t, map, memo);
                    parts.push((nt, k.clone()));
                }
                self.lincomb(&parts)
            }
            Node::Mul(factors) => {
                let mut parts = Vec::with_capacity(factors.len());
                for (b, x) in factors.iter() {
                    let nb = self.subst_rec(*b, map, memo);
                    parts.push((nb, x.clone()));
                }
                self.mul_pow(&parts)
            }
            Node::Call(f, a) => {
                let na = self.subst_rec(a, map, memo);
                self.call(f, na)
            }
            Node::Pow(b, x) => {
                let nb = self.subst_rec(b, map, memo);
                let nx = self.subst_rec(x, map, memo);
                self.pow(nb, nx)
            }
            Node::Bound(a) => {
                let na = self.subst_rec(a, map, memo);
                self.bind(na)
            }
        };
        memo.insert(e, r);
        r
    }
}

#[cfg(test)]
mod tests {
    use super::super::SymbolKind;
    use super::*;

    /// A named piece differentiates to a named piece with the value of the plain derivative,
    /// and stays one atom in products (no flattening into its factors).
    #[test]
    fn bound_pieces_keep_their_shape_and_value() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let x2 = s.powi(x, 2);
        let plain = s.mul(&[x2, y]);
        let bound = s.bind(plain);
        assert!(matches!(s.node(bound), Node::Bound(_)));
        let prod = s.mul(&[bound, x]);
        let Node::Mul(factors) = s.node(prod).clone() else {
            panic!("a product");
        };
        assert_eq!(
            factors.len(),
            2,
            "bound piece stays whole: {}",
            s.display(prod)
        );
        let d_bound = s.diff(prod, x);
        let plain_prod = s.mul(&[plain, x]);
        let d_plain = s.diff(plain_prod, x);
        for (xv, yv) in [(0.5, 2.0), (-1.5, 0.3)] {
            let at = |sym: &super::super::Symbol| if sym.name == "x" { xv } else { yv };
            let (a, b) = (s.eval(d_bound, &at), s.eval(d_plain, &at));
            assert!((a - b).abs() < 1e-14 * a.abs().max(1.0), "{a} vs {b}");
        }
        // Atoms and single-term sums are never wrapped.
        assert_eq!(s.bind(x), x);
        let two_x = s.scale(x, Q::from_integer(2.into()));
        assert_eq!(s.bind(two_x), two_x);
    }

    #[test]
    fn product_and_chain_rules() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let sx = s.call(Func::Sin, x);
        let x3 = s.powi(x, 3);
        let e = s.mul(&[x3, sx]); // x³ sin x
        let d = s.diff(e, x);
        let at = |v: f64| 3.0 * v * v * v.sin() + v.powi(3) * v.cos();
        for v in [0.3, 1.7, -2.2] {
            let got = s.eval(d, &|_| v);
            assert!((got - at(v)).abs() < 1e-12 * at(v).abs().max(1.0));
        }
    }

    #[test]
    fn derivative_of_independent_expression_is_zero() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let e = s.call(Func::Exp, y);
        let d = s.diff(e, x);
        assert!(s.is_zero(d));
    }

    #[test]
    fn substitution_rebuilds_canonically() {
        let mut s = Store::new();
        let x = s.symbol("x", SymbolKind::Coordinate(0));
        let y = s.symbol("y", SymbolKind::Coordinate(1));
        let e = s.sub(x, y);
        let map: HashMap<_, _> = [(y, x)].into_iter().collect();
        let z = s.substitute(e, &map);
        assert!(s.is_zero(z));
    }
}
