//! Sharing inside n-ary sums and products before they are lowered.
//!
//! Value numbering alone shares only whole subexpressions. Canonical sums and products are
//! flat, so `m·r·a²·sin θ` and `m·r·a²·cos θ` share `m·r·a²` without any node saying so.
//! Here every product (and every sum) a kernel reaches is written as a list of atoms, and the
//! pair of atoms that occurs in the most lists is repeatedly given a name of its own and
//! substituted (greedy pairing, the classic approach to common-subexpression elimination over
//! associative operators; common practice). Ties go to the smallest pair, so the result does
//! not depend on hash order.

use std::collections::{BTreeMap, BTreeSet};

use crate::expr::{ExprId, FastMap, Node, Store, Q};

/// A factor of a product: a base to a positive rational power, or a named pair of factors.
#[derive(Clone, PartialEq, Eq, Hash, Debug)]
pub enum Factor {
    /// `base^exponent`, exponent nonzero (negative powers are powers of the reciprocal).
    Power(ExprId, Q),
    /// The product of two earlier factors.
    Pair(usize, usize),
}

/// A term of a sum: an expression, or a named pair `a + k·b` of earlier terms.
#[derive(Clone, PartialEq, Eq, Hash, Debug)]
pub enum Term {
    /// An expression of the store.
    Expr(ExprId),
    /// `terms[a] + k·terms[b]`.
    Pair(usize, usize, Q),
}

/// Longest sum whose terms take part in pairing.
const MAX_PAIRED_SUM: usize = 8;

/// The factored form of every product and sum a kernel reaches.
#[derive(Debug, Default)]
pub struct Factoring {
    /// Factor table; lists refer to it by index.
    pub factors: Vec<Factor>,
    /// For each product node: (numerator factors, denominator factors).
    pub products: FastMap<ExprId, (Vec<usize>, Vec<usize>)>,
    /// Term table; lists refer to it by index.
    pub terms: Vec<Term>,
    /// For each sum node: its (term, coefficient) list.
    pub sums: FastMap<ExprId, Vec<(usize, Q)>>,
    /// Bases that products reach with exactly one negative exponent (`sin θ` only as
    /// `sin⁻² θ`): their reciprocal is taken after the power, which the numerators may share.
    pub single_negative: BTreeSet<ExprId>,
}

impl Factoring {
    /// Factors every product and sum reachable from `roots`.
    pub fn new(store: &Store, roots: &[ExprId]) -> Factoring {
        let reach = reachable(store, roots);
        let mut f = Factoring::default();
        let mut factor_index: FastMap<Factor, usize> = FastMap::default();
        let mut term_index: FastMap<ExprId, usize> = FastMap::default();
        let mut product_lists: Vec<(ExprId, Vec<usize>, Vec<usize>)> = Vec::new();
        let mut sum_lists: Vec<(ExprId, Vec<(usize, Q)>)> = Vec::new();
        for (i, &r) in reach.iter().enumerate() {
            if !r {
                continue;
            }
            let id = ExprId::from_index(i);
            match store.node(id) {
                Node::Mul(fs) => {
                    let (mut num, den) = (Vec::new(), Vec::new());
                    for (b, e) in fs.iter() {
                        // Negative powers stay factors of the one list: they are lowered as
                        // powers of a reciprocal computed once per base, so a denominator
                        // shared by many products costs a single division.
                        let key = Factor::Power(*b, e.clone());
                        let next = f.factors.len();
                        let k = *factor_index.entry(key.clone()).or_insert(next);
                        if k == next {
                            f.factors.push(key);
                        }
                        num.push(k);
                    }
                    product_lists.push((id, num, den));
                }
                Node::Add(_, ts) => {
                    let mut items = Vec::new();
                    for (t, k) in ts.iter() {
                        let next = f.terms.len();
                        let ti = *term_index.entry(*t).or_insert(next);
                        if ti == next {
                            f.terms.push(Term::Expr(*t));
                        }
                        items.push((ti, k.clone()));
                    }
                    sum_lists.push((id, items));
                }
                _ => {}
            }
        }
        let mut negatives: BTreeMap<ExprId, BTreeSet<Q>> = BTreeMap::new();
        for factor in &f.factors {
            if let Factor::Power(b, e) = factor {
                if num_traits::Signed::is_negative(e) {
                    negatives.entry(*b).or_default().insert(e.clone());
                }
            }
        }
        f.single_negative = negatives
            .into_iter()
            .filter(|(_, es)| es.len() == 1)
            .map(|(b, _)| b)
            .collect();
        f.pair_products(&mut product_lists);
        f.pair_sums(&mut sum_lists);
        f.products = product_lists
            .into_iter()
            .map(|(id, n, d)| (id, (n, d)))
            .collect();
        f.sums = sum_lists.into_iter().collect();
        f
    }

    fn pair_products(&mut self, lists: &mut [(ExprId, Vec<usize>, Vec<usize>)]) {
        let key = |a: usize, b: usize| (a.min(b), a.max(b));
        let mut pc = PairCounts::default();
        let mut lists_of: FastMap<usize, Vec<usize>> = FastMap::default();
        for (li, (_, l, _)) in lists.iter().enumerate() {
            for (x, &a) in l.iter().enumerate() {
                lists_of.entry(a).or_default().push(li);
                for &b in &l[x + 1..] {
                    pc.change(key(a, b), 1);
                }
            }
        }
        while let Some((a, b)) = pc.best() {
            let new = self.factors.len();
            self.factors.push(Factor::Pair(a, b));
            let candidates = lists_of.get(&a).cloned().unwrap_or_default();
            for li in candidates {
                let l = &mut lists[li].1;
                if !(l.contains(&a) && l.contains(&b)) {
                    continue;
                }
                for &x in l.iter() {
                    if x != a && x != b {
                        pc.change(key(a, x), -1);
                        pc.change(key(b, x), -1);
                    }
                }
                pc.change(key(a, b), -1);
                l.retain(|&x| x != a && x != b);
                for &x in l.iter() {
                    pc.change(key(new, x), 1);
                }
                l.push(new);
                lists_of.entry(new).or_default().push(li);
            }
        }
    }

    fn pair_sums(&mut self, lists: &mut [(ExprId, Vec<(usize, Q)>)]) {
        // Key (a, b, k_b/k_a) with a < b: the pair a + (k_b/k_a)·b, scaled by k_a.
        let key = |a: usize, ka: &Q, b: usize, kb: &Q| {
            if a < b {
                (a, b, kb / ka)
            } else {
                (b, a, ka / kb)
            }
        };
        let mut pc = PairCounts::default();
        let mut lists_of: FastMap<usize, Vec<usize>> = FastMap::default();
        for (li, (_, l)) in lists.iter().enumerate() {
            // Pairs grow as the square of a sum's length; long sums (curvature kernels) are
            // left as they are, where pairing costs far more time than it saves operations.
            if l.len() > MAX_PAIRED_SUM {
                continue;
            }
            for (x, (a, ka)) in l.iter().enumerate() {
                lists_of.entry(*a).or_default().push(li);
                for (b, kb) in &l[x + 1..] {
                    pc.change(key(*a, ka, *b, kb), 1);
                }
            }
        }
        while let Some((a, b, ratio)) = pc.best() {
            let new = self.terms.len();
            self.terms.push(Term::Pair(a, b, ratio.clone()));
            let candidates = lists_of.get(&a).cloned().unwrap_or_default();
            for li in candidates {
                let l = &mut lists[li].1;
                let pa = l.iter().position(|(t, _)| *t == a);
                let pb = l.iter().position(|(t, _)| *t == b);
                let (Some(pa), Some(pb)) = (pa, pb) else {
                    continue;
                };
                let (ka, kb) = (l[pa].1.clone(), l[pb].1.clone());
                if kb != &ka * &ratio {
                    continue;
                }
                for (x, kx) in l.iter() {
                    if *x != a && *x != b {
                        pc.change(key(a, &ka, *x, kx), -1);
                        pc.change(key(b, &kb, *x, kx), -1);
                    }
                }
                pc.change(key(a, &ka, b, &kb), -1);
                l.retain(|(t, _)| *t != a && *t != b);
                for (x, kx) in l.iter() {
                    pc.change(key(new, &ka, *x, kx), 1);
                }
                l.push((new, ka));
                lists_of.entry(new).or_default().push(li);
            }
        }
    }
}

/// Occurrence counts of pairs, with the most frequent one at hand: ordered by count, then
/// by key, so the choice never depends on hash order.
struct PairCounts<K: Ord + Clone + std::hash::Hash> {
    counts: FastMap<K, u32>,
    queue: std::collections::BTreeSet<(std::cmp::Reverse<u32>, K)>,
}

impl<K: Ord + Clone + std::hash::Hash> Default for PairCounts<K> {
    fn default() -> Self {
        PairCounts {
            counts: FastMap::default(),
            queue: std::collections::BTreeSet::new(),
        }
    }
}

impl<K: Ord + Clone + std::hash::Hash> PairCounts<K> {
    fn change(&mut self, k: K, delta: i32) {
        let c = self.counts.entry(k.clone()).or_insert(0);
        if *c > 0 {
            self.queue.remove(&(std::cmp::Reverse(*c), k.clone()));
        }
        *c = c.saturating_add_signed(delta);
        if *c > 0 {
            self.queue.insert((std::cmp::Reverse(*c), k));
        }
    }

    /// The most frequent pair, if it occurs at least twice.
    fn best(&self) -> Option<K> {
        self.queue
            .first()
            .filter(|(c, _)| c.0 >= 2)
            .map(|(_, k)| k.clone())
    }
}

/// Which nodes the roots reach; ids are topological, so one downward sweep suffices.
fn reachable(store: &Store, roots: &[ExprId]) -> Vec<bool> {
    let end = roots.iter().map(|r| r.index() + 1).max().unwrap_or(0);
    let mut seen = vec![false; end];
    for r in roots {
        seen[r.index()] = true;
    }
    for i in (0..end).rev() {
        if !seen[i] {
            continue;
        }
        match store.node(ExprId::from_index(i)) {
            Node::Add(_, ts) | Node::Mul(ts) => {
                for (t, _) in ts.iter() {
                    seen[t.index()] = true;
                }
            }
            Node::Call(_, a) | Node::Bound(a) => seen[a.index()] = true,
            Node::Pow(b, e) => {
                seen[b.index()] = true;
                seen[e.index()] = true;
            }
            Node::Num(_) | Node::Symbol(_) | Node::Constant(_) => {}
        }
    }
    seen
}
