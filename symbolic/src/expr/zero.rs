//! Proving an expression identically zero by bringing it to one rational function.
//!
//! Canonical sums and products already cancel like terms, but not across fractions:
//! `1/(r − 2m) − r/(r(r − 2m))` stays as it is. Here an expression is turned into
//! numerator / denominator, where the numerator is an expanded polynomial over atoms (symbols,
//! function calls, irrational powers) and the denominator a product of powers of such
//! polynomials, brought to a common denominator by their least common multiple; the expression
//! is zero exactly when the numerator expands to the zero polynomial. sin² x + cos² x = 1 is
//! applied by writing every cos² x as 1 − sin² x. A budget on the number of monomials keeps
//! the proof from swelling: past it the answer is "not proved", never a wrong "zero".

use std::collections::{BTreeMap, HashMap};
use std::rc::Rc;

use num_traits::{One, ToPrimitive, Zero};

use super::{ExprId, Func, Node, Store, Q};

/// An indivisible factor of a monomial.
#[derive(Clone, PartialEq, Eq, PartialOrd, Ord, Hash, Debug)]
enum Atom {
    /// Any node that is not a sum, product or number (symbols, calls, irrational powers).
    Node(ExprId),
    /// sin a, named by its argument so that cos² a can be rewritten without the node.
    Sin(ExprId),
    /// cos a.
    Cos(ExprId),
}

type Monomial = Vec<(Atom, u32)>;
type Poly = BTreeMap<Monomial, Q>;

/// numerator / Π denominator-factor^power, the factors normalised (leading coefficient 1).
#[derive(Clone, Debug)]
struct RatFun {
    num: Poly,
    den: BTreeMap<Poly, u32>,
}

/// Gives up past this many monomials in one polynomial.
const BUDGET: usize = 4000;

/// Whether `e` is provably identically zero (false means "not proved", not "nonzero").
pub fn proves_zero(s: &Store, e: ExprId) -> bool {
    let mut memo = Memo::new();
    match ratfun(s, e, &mut memo) {
        Some(r) => r.num.is_empty(),
        None => false,
    }
}

/// Memo of converted nodes, shared: a node used by many parents is converted once.
type Memo = HashMap<ExprId, Option<Rc<RatFun>>>;

fn ratfun(s: &Store, e: ExprId, memo: &mut Memo) -> Option<Rc<RatFun>> {
    if let Some(r) = memo.get(&e) {
        return r.clone();
    }
    let r = build(s, e, memo).map(Rc::new);
    memo.insert(e, r.clone());
    r
}

fn atom_poly(a: Atom) -> Poly {
    let mut p = Poly::new();
    p.insert(vec![(a, 1)], Q::one());
    p
}

fn constant(q: Q) -> Poly {
    let mut p = Poly::new();
    if !q.is_zero() {
        p.insert(Vec::new(), q);
    }
    p
}

fn build(s: &Store, e: ExprId, memo: &mut Memo) -> Option<RatFun> {
    let plain = |num: Poly| {
        Some(RatFun {
            num,
            den: BTreeMap::new(),
        })
    };
    match s.node(e) {
        Node::Num(q) => plain(constant(q.clone())),
        Node::Bound(a) => build(s, *a, memo),
        Node::Call(Func::Sin, a) => plain(atom_poly(Atom::Sin(*a))),
        Node::Call(Func::Cos, a) => plain(atom_poly(Atom::Cos(*a))),
        Node::Symbol(_) | Node::Constant(_) | Node::Call(..) | Node::Pow(..) => {
            plain(atom_poly(Atom::Node(e)))
        }
        Node::Add(c, terms) => {
            let mut parts = vec![(
                Rc::new(RatFun {
                    num: constant(c.clone()),
                    den: BTreeMap::new(),
                }),
                Q::one(),
            )];
            for (t, k) in terms.iter() {
                parts.push((ratfun(s, *t, memo)?, k.clone()));
            }
            // Least common multiple of the denominators, then each numerator lifted to it.
            let mut lcm: BTreeMap<Poly, u32> = BTreeMap::new();
            for (p, _) in &parts {
                for (f, k) in &p.den {
                    let slot = lcm.entry(f.clone()).or_insert(0);
                    *slot = (*slot).max(*k);
                }
            }
            let mut num = Poly::new();
            for (p, k) in parts {
                let mut lifted = scale(&p.num, &k);
                for (f, want) in &lcm {
                    let have = p.den.get(f).copied().unwrap_or(0);
                    for _ in have..*want {
                        lifted = mul(&lifted, f)?;
                    }
                }
                add_into(&mut num, &lifted)?;
            }
            Some(RatFun { num, den: lcm })
        }
        Node::Mul(factors) => {
            let mut acc = RatFun {
                num: constant(Q::one()),
                den: BTreeMap::new(),
            };
            for (b, x) in factors.iter() {
                let n = if x.is_integer() {
                    x.numer().to_i64()?
                } else {
                    0
                };
                let base = if n == 0 {
                    // An irrational power is an atom of its own.
                    Rc::new(RatFun {
                        num: atom_poly(Atom::Node(*b)),
                        den: BTreeMap::new(),
                    })
                } else {
                    ratfun(s, *b, memo)?
                };
                let n = if n == 0 { 1 } else { n };
                let (num, den) = if n > 0 {
                    (base.num.clone(), base.den.clone())
                } else {
                    // (p / Π f^k)^-1 = Π f^k / p: p joins the denominator, normalised.
                    let (lead, p) = normalise(&base.num)?;
                    let mut num = constant(lead.recip());
                    for (f, k) in &base.den {
                        for _ in 0..*k {
                            num = mul(&num, f)?;
                        }
                    }
                    let mut den = BTreeMap::new();
                    den.insert(p, 1);
                    (num, den)
                };
                for _ in 0..n.unsigned_abs() {
                    acc.num = mul(&acc.num, &num)?;
                    for (f, k) in &den {
                        *acc.den.entry(f.clone()).or_insert(0) += k;
                    }
                }
            }
            Some(acc)
        }
    }
}

/// (leading coefficient, polynomial divided by it); None for the zero polynomial.
fn normalise(p: &Poly) -> Option<(Q, Poly)> {
    let lead = p.values().next_back()?.clone();
    Some((
        lead.clone(),
        p.iter().map(|(m, c)| (m.clone(), c / &lead)).collect(),
    ))
}

fn scale(p: &Poly, k: &Q) -> Poly {
    p.iter().map(|(m, c)| (m.clone(), c * k)).collect()
}

fn add_into(acc: &mut Poly, p: &Poly) -> Option<()> {
    for (m, c) in p {
        let slot = acc.entry(m.clone()).or_insert_with(Q::zero);
        *slot += c;
        if slot.is_zero() {
            acc.remove(m);
        }
    }
    (acc.len() <= BUDGET).then_some(())
}

fn mul(a: &Poly, b: &Poly) -> Option<Poly> {
    if a.len().saturating_mul(b.len()) > BUDGET * 8 {
        return None;
    }
    let mut out = Poly::new();
    for (ma, ca) in a {
        for (mb, cb) in b {
            let prod = ca * cb;
            for (m, c) in reduce(merge(ma, mb)) {
                let slot = out.entry(m).or_insert_with(Q::zero);
                *slot += &prod * c;
            }
        }
    }
    out.retain(|_, c| !c.is_zero());
    (out.len() <= BUDGET).then_some(out)
}

/// Product of two monomials: a merge of their sorted atom lists.
fn merge(a: &Monomial, b: &Monomial) -> Monomial {
    let mut out = Vec::with_capacity(a.len() + b.len());
    let (mut i, mut j) = (0, 0);
    while i < a.len() && j < b.len() {
        match a[i].0.cmp(&b[j].0) {
            std::cmp::Ordering::Less => {
                out.push(a[i].clone());
                i += 1;
            }
            std::cmp::Ordering::Greater => {
                out.push(b[j].clone());
                j += 1;
            }
            std::cmp::Ordering::Equal => {
                out.push((a[i].0.clone(), a[i].1 + b[j].1));
                i += 1;
                j += 1;
            }
        }
    }
    out.extend_from_slice(&a[i..]);
    out.extend_from_slice(&b[j..]);
    out
}

/// Rewrites cos² a as 1 − sin² a until no cosine has a power above one.
fn reduce(m: Monomial) -> Vec<(Monomial, Q)> {
    let Some(pos) = m
        .iter()
        .position(|(a, k)| matches!(a, Atom::Cos(_)) && *k >= 2)
    else {
        return vec![(m, Q::one())];
    };
    let (Atom::Cos(arg), k) = m[pos].clone() else {
        return vec![(m, Q::one())];
    };
    let mut lowered = m.clone();
    lowered[pos].1 = k - 2;
    lowered.retain(|(_, k)| *k > 0);
    let with_sin = merge(&lowered, &vec![(Atom::Sin(arg), 2)]);
    let mut out = reduce(lowered);
    for (mm, c) in reduce(with_sin) {
        out.push((mm, -c));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::SymbolKind;

    #[test]
    fn fractions_cancel_across_denominators() {
        // 1/(r − 2m) − 1/r − 2m/(r(r − 2m)) = 0, which no like-term collection sees.
        let mut s = Store::new();
        let r = s.symbol("r", SymbolKind::Coordinate(0));
        let m = s.symbol("m", SymbolKind::Parameter(0));
        let two_m = s.scale(m, Q::from_integer(2.into()));
        let d = s.sub(r, two_m);
        let a = s.powi(d, -1);
        let b = s.powi(r, -1);
        let rd = s.mul(&[r, d]);
        let c = s.div(two_m, rd);
        let z = s.lincomb(&[(a, Q::one()), (b, -Q::one()), (c, -Q::one())]);
        assert!(!s.is_zero(z));
        assert!(proves_zero(&s, z));
        let nz = s.lincomb(&[(a, Q::one()), (b, -Q::one()), (c, Q::one())]);
        assert!(!proves_zero(&s, nz));
    }

    #[test]
    fn pythagoras_is_known() {
        let mut s = Store::new();
        let t = s.symbol("t", SymbolKind::Coordinate(0));
        let sn = s.call(Func::Sin, t);
        let cs = s.call(Func::Cos, t);
        let s2 = s.powi(sn, 2);
        let c2 = s.powi(cs, 2);
        let one = s.int(1);
        let sum = s.add(&[s2, c2]);
        let z = s.sub(sum, one);
        assert!(proves_zero(&s, z));
        let c4 = s.powi(cs, 4);
        let s4 = s.powi(sn, 4);
        // cos⁴ − sin⁴ = cos² − sin²
        let lhs = s.sub(c4, s4);
        let rhs = s.sub(c2, s2);
        let z = s.sub(lhs, rhs);
        assert!(proves_zero(&s, z));
    }
}
