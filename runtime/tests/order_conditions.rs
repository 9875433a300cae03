//! Every tableau against the rooted-tree order conditions of Butcher (Hairer, Nørsett &
//! Wanner, *Solving Ordinary Differential Equations I*, 2nd ed., Sec. II.2, Theorem 2.13):
//! a method has order p iff `Σ_i b_i Φ_i(t) = 1/γ(t)` for every rooted tree t with at most p
//! vertices, where `Φ_i` is the elementary weight and `γ` the tree's density. Continuous
//! extensions satisfy `Σ_i b_i(θ) Φ_i(t) = θ^|t| / γ(t)` up to their order (same book,
//! Sec. II.6). The rational and Q(√d) tableaus are checked exactly; DOP853, published in
//! decimals, to a tolerance.

use geokern_runtime::dop853::{
    DORMAND_PRINCE_853, DORMAND_PRINCE_853_DENSE, DORMAND_PRINCE_853_DENSE_ORDER,
    DORMAND_PRINCE_853_ERROR_5, DORMAND_PRINCE_853_WEIGHTS_3, STEP_STAGES,
};
use geokern_runtime::tableau::*;
use geokern_runtime::{QuadraticSurd, Rational};
use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::Zero;
use std::collections::BTreeSet;
use std::ops::{Add, Mul, Sub};

/// A rooted tree: the sorted list of its root's subtrees (canonical form).
#[derive(Clone, Debug, PartialEq, Eq, PartialOrd, Ord)]
struct Tree(Vec<Tree>);

impl Tree {
    fn order(&self) -> usize {
        1 + self.0.iter().map(Tree::order).sum::<usize>()
    }
    fn density(&self) -> u64 {
        self.order() as u64 * self.0.iter().map(Tree::density).product::<u64>()
    }
    /// Every tree obtained by attaching one new leaf to some vertex.
    fn grow(&self) -> Vec<Tree> {
        let mut out = Vec::new();
        let mut with_leaf = self.0.clone();
        with_leaf.push(Tree(Vec::new()));
        with_leaf.sort();
        out.push(Tree(with_leaf));
        for i in 0..self.0.len() {
            for grown in self.0[i].grow() {
                let mut children = self.0.clone();
                children[i] = grown;
                children.sort();
                out.push(Tree(children));
            }
        }
        out
    }
}

/// All rooted trees with 1..=max vertices.
fn trees_up_to(max: usize) -> Vec<Tree> {
    let mut all = Vec::new();
    let mut level: BTreeSet<Tree> = BTreeSet::from([Tree(Vec::new())]);
    for _ in 0..max {
        all.extend(level.iter().cloned());
        level = level.iter().flat_map(Tree::grow).collect();
    }
    all
}

#[test]
fn tree_counts_match_oeis_a000081() {
    // Number of rooted trees with n vertices: 1, 1, 2, 4, 9, 20, 48, 115 (OEIS A000081; HNW
    // I, Table II.2.1).
    let trees = trees_up_to(8);
    let counts: Vec<usize> = (1..=8)
        .map(|n| trees.iter().filter(|t| t.order() == n).count())
        .collect();
    assert_eq!(counts, [1, 1, 2, 4, 9, 20, 48, 115]);
}

/// The arithmetic the checks need.
trait Field: Clone + Add<Output = Self> + Sub<Output = Self> + Mul<Output = Self> {
    fn from_ratio(n: i64, d: i64) -> Self;
}

fn big(r: Rational) -> BigRational {
    BigRational::new(BigInt::from(r.numer()), BigInt::from(r.denom()))
}

impl Field for BigRational {
    fn from_ratio(n: i64, d: i64) -> Self {
        BigRational::new(BigInt::from(n), BigInt::from(d))
    }
}

impl Field for f64 {
    fn from_ratio(n: i64, d: i64) -> Self {
        n as f64 / d as f64
    }
}

/// a + b√d, exactly.
#[derive(Clone, Debug, PartialEq)]
struct Surd {
    a: BigRational,
    b: BigRational,
    d: i64,
}

impl Add for Surd {
    type Output = Surd;
    fn add(self, o: Surd) -> Surd {
        Surd {
            a: self.a + o.a,
            b: self.b + o.b,
            d: self.d,
        }
    }
}
impl Sub for Surd {
    type Output = Surd;
    fn sub(self, o: Surd) -> Surd {
        Surd {
            a: self.a - o.a,
            b: self.b - o.b,
            d: self.d,
        }
    }
}
impl Mul for Surd {
    type Output = Surd;
    fn mul(self, o: Surd) -> Surd {
        let d = BigRational::from_integer(BigInt::from(self.d));
        Surd {
            a: self.a.clone() * o.a.clone() + self.b.clone() * o.b.clone() * d,
            b: self.a * o.b + self.b * o.a,
            d: self.d,
        }
    }
}

// Q(√d) for the d of the tableau at hand (thread-local so `from_ratio` can see it).
thread_local!(static RADICAND: std::cell::Cell<i64> = const { std::cell::Cell::new(1) });

impl Field for Surd {
    fn from_ratio(n: i64, d: i64) -> Self {
        Surd {
            a: BigRational::from_ratio(n, d),
            b: BigRational::zero(),
            d: RADICAND.with(|c| c.get()),
        }
    }
}

fn surd(q: QuadraticSurd) -> Surd {
    Surd {
        a: big(q.rational),
        b: big(q.radical),
        d: q.radicand as i64,
    }
}

/// Elementary weights Φ_i(t) for every stage i.
fn elementary_weights<F: Field>(a: &[Vec<F>], t: &Tree) -> Vec<F> {
    let s = a.len();
    let mut phi = vec![F::from_ratio(1, 1); s];
    for child in &t.0 {
        let inner = elementary_weights(a, child);
        for i in 0..s {
            let mut sum = F::from_ratio(0, 1);
            for j in 0..s {
                sum = sum + a[i][j].clone() * inner[j].clone();
            }
            phi[i] = phi[i].clone() * sum;
        }
    }
    phi
}

/// `Σ b_i Φ_i(t) - θ^|t|/γ(t)` for every tree up to `order`, with `theta` as a ratio.
fn residuals<F: Field>(a: &[Vec<F>], b: &[F], order: usize, theta: (i64, i64)) -> Vec<(Tree, F)> {
    trees_up_to(order)
        .into_iter()
        .map(|t| {
            let phi = elementary_weights(a, &t);
            let mut sum = F::from_ratio(0, 1);
            for (bi, pi) in b.iter().zip(phi.iter()) {
                sum = sum + bi.clone() * pi.clone();
            }
            let n = t.order() as u32;
            let target = F::from_ratio(theta.0.pow(n), theta.1.pow(n) * t.density() as i64);
            (t, sum - target)
        })
        .collect()
}

fn exact<const S: usize>(
    t: &ButcherTableau<Rational, S>,
) -> (Vec<Vec<BigRational>>, Vec<BigRational>) {
    (
        t.a.iter()
            .map(|row| row.iter().map(|&c| big(c)).collect())
            .collect(),
        t.b.iter().map(|&c| big(c)).collect(),
    )
}

fn assert_row_sums_exact<const S: usize>(t: &ButcherTableau<Rational, S>) {
    let (a, _) = exact(t);
    for (i, row) in a.iter().enumerate() {
        let sum: BigRational = row.iter().cloned().sum();
        assert_eq!(sum, big(t.c[i]), "row {i}: c_i must equal Σ_j a_ij");
    }
}

fn assert_exact_order(a: &[Vec<BigRational>], b: &[BigRational], order: usize, what: &str) {
    for (t, r) in residuals(a, b, order, (1, 1)) {
        assert!(r.is_zero(), "{what}: condition for tree {t:?} fails by {r}");
    }
    // ... and not of higher order: some condition of order+1 fails.
    let next = residuals(a, b, order + 1, (1, 1));
    assert!(
        next.iter().any(|(_, r)| !r.is_zero()),
        "{what}: order exceeds {order}"
    );
}

#[test]
fn classic_rk4_has_order_4() {
    assert_row_sums_exact(&CLASSIC_RK4);
    let (a, b) = exact(&CLASSIC_RK4);
    assert_exact_order(&a, &b, 4, "RK4");
}

#[test]
fn dormand_prince_54_has_orders_5_and_4() {
    assert_row_sums_exact(&DORMAND_PRINCE_54);
    let (a, b) = exact(&DORMAND_PRINCE_54);
    assert_exact_order(&a, &b, 5, "DP5");
    let embedded: Vec<BigRational> = DORMAND_PRINCE_54_EMBEDDED.iter().map(|&c| big(c)).collect();
    assert_exact_order(
        &a,
        &embedded,
        DORMAND_PRINCE_54_EMBEDDED_ORDER as usize,
        "DP4",
    );
    // FSAL: the last row of a is b, at c = 1.
    assert_eq!(DORMAND_PRINCE_54.a[6], DORMAND_PRINCE_54.b);
}

/// Weights of the nested continuous extension shared by both Dormand-Prince pairs:
/// `θ b + θθ'(e₀ - b) + θ²θ'(2b - e₀ - e_last) + Σ_j θ^⌈(j+4)/2⌉ θ'^⌊(j+4)/2⌋ d_j`
/// (the expansion of the nested forms documented beside the coefficients).
fn dense_weights<F: Field>(b: &[F], d: &[Vec<F>], last: usize, theta: &F) -> Vec<F> {
    let one = F::from_ratio(1, 1);
    let t1 = one.clone() - theta.clone();
    let s = b.len();
    let e = |i: usize, j: usize| {
        if i == j {
            F::from_ratio(1, 1)
        } else {
            F::from_ratio(0, 1)
        }
    };
    let pow = |x: &F, n: usize| (0..n).fold(F::from_ratio(1, 1), |acc, _| acc * x.clone());
    (0..s)
        .map(|i| {
            let mut w = theta.clone() * b[i].clone()
                + theta.clone() * t1.clone() * (e(i, 0) - b[i].clone())
                + pow(theta, 2)
                    * t1.clone()
                    * (F::from_ratio(2, 1) * b[i].clone() - e(i, 0) - e(i, last));
            for (j, dj) in d.iter().enumerate() {
                let (pt, p1) = ((j + 5) / 2, (j + 4) / 2);
                w = w + pow(theta, pt) * pow(&t1, p1) * dj[i].clone();
            }
            w
        })
        .collect()
}

#[test]
fn dormand_prince_54_dense_output_has_order_4() {
    let (a, b) = exact(&DORMAND_PRINCE_54);
    let d = vec![DORMAND_PRINCE_54_DENSE
        .iter()
        .map(|&c| big(c))
        .collect::<Vec<_>>()];
    for theta in [(1, 2), (1, 3), (3, 4), (1, 10), (1, 1)] {
        let th = BigRational::from_ratio(theta.0, theta.1);
        let w = dense_weights(&b, &d, 6, &th);
        for (t, r) in residuals(&a, &w, DORMAND_PRINCE_54_DENSE_ORDER as usize, theta) {
            assert!(r.is_zero(), "θ = {theta:?}, tree {t:?}: {r}");
        }
    }
}

fn assert_surd_order<const S: usize>(t: &ButcherTableau<QuadraticSurd, S>, d: i64, what: &str) {
    RADICAND.with(|c| c.set(d));
    let a: Vec<Vec<Surd>> =
        t.a.iter()
            .map(|row| row.iter().map(|&c| surd(c)).collect())
            .collect();
    let b: Vec<Surd> = t.b.iter().map(|&c| surd(c)).collect();
    for (i, row) in a.iter().enumerate() {
        let sum = row
            .iter()
            .cloned()
            .fold(Surd::from_ratio(0, 1), |x, y| x + y);
        assert_eq!(sum, surd(t.c[i]), "{what}: row {i} sum");
    }
    let zero = |s: &Surd| s.a.is_zero() && s.b.is_zero();
    for (tree, r) in residuals(&a, &b, t.order as usize, (1, 1)) {
        assert!(zero(&r), "{what}: tree {tree:?} fails by {r:?}");
    }
    assert!(residuals(&a, &b, t.order as usize + 1, (1, 1))
        .iter()
        .any(|(_, r)| !zero(r)));
}

#[test]
fn gauss_legendre_tableaus_have_orders_4_and_6() {
    assert_surd_order(&GAUSS_LEGENDRE_4, 3, "GL4");
    assert_surd_order(&GAUSS_LEGENDRE_6, 15, "GL6");
}

#[test]
fn gauss_legendre_is_symplectic() {
    // Symplecticity condition b_i a_ij + b_j a_ji - b_i b_j = 0 (Sanz-Serna 1988; Hairer,
    // Lubich & Wanner, Geometric Numerical Integration, Theorem VI.4.3).
    fn check<const S: usize>(t: &ButcherTableau<QuadraticSurd, S>, d: i64) {
        RADICAND.with(|c| c.set(d));
        for i in 0..S {
            for j in 0..S {
                let m = surd(t.b[i]) * surd(t.a[i][j]) + surd(t.b[j]) * surd(t.a[j][i])
                    - surd(t.b[i]) * surd(t.b[j]);
                assert!(m.a.is_zero() && m.b.is_zero(), "({i},{j})");
            }
        }
    }
    check(&GAUSS_LEGENDRE_4, 3);
    check(&GAUSS_LEGENDRE_6, 15);
}

fn max_abs_residual(a: &[Vec<f64>], b: &[f64], order: usize, theta: (i64, i64)) -> (f64, Tree) {
    residuals(a, b, order, theta)
        .into_iter()
        .map(|(t, r)| (r.abs(), t))
        .fold(
            (0.0, Tree(vec![])),
            |acc, x| if x.0 > acc.0 { x } else { acc },
        )
}

fn dop853_f64() -> (Vec<Vec<f64>>, Vec<f64>) {
    let t = &DORMAND_PRINCE_853;
    (t.a.iter().map(|r| r.to_vec()).collect(), t.b.to_vec())
}

#[test]
fn dormand_prince_853_has_order_8_to_rounding() {
    let (a, b) = dop853_f64();
    for (i, row) in a.iter().enumerate() {
        let sum: f64 = row.iter().sum();
        assert!((sum - DORMAND_PRINCE_853.c[i]).abs() < 1e-14, "row {i}");
    }
    // Tolerance: the coefficients are f64 roundings of 30-digit decimals, up to ~50 in size;
    // rounding leaves residuals near 1e-13, while a wrong coefficient leaves ≥ 1e-6.
    let (r, t) = max_abs_residual(&a[..STEP_STAGES], &b[..STEP_STAGES], 8, (1, 1));
    assert!(r < 1e-11, "order 8 fails at {t:?} by {r}");
    let (r9, _) = max_abs_residual(&a[..STEP_STAGES], &b[..STEP_STAGES], 9, (1, 1));
    assert!(r9 > 1e-6, "an order-9 condition must fail");
    // The check is sensitive: perturbing one coefficient in its 8th digit breaks order 8.
    let mut perturbed = a.clone();
    perturbed[9][5] *= 1.0 + 1e-8;
    let (rp, _) = max_abs_residual(&perturbed[..STEP_STAGES], &b[..STEP_STAGES], 8, (1, 1));
    assert!(rp > 1e-9, "perturbation went unnoticed: {rp}");
}

#[test]
fn dormand_prince_853_error_estimators_have_orders_5_and_3() {
    let (a, b) = dop853_f64();
    let fifth: Vec<f64> = (0..16)
        .map(|i| b[i] - DORMAND_PRINCE_853_ERROR_5[i])
        .collect();
    let (r, t) = max_abs_residual(&a[..STEP_STAGES], &fifth[..STEP_STAGES], 5, (1, 1));
    assert!(r < 1e-12, "fifth-order weights fail at {t:?} by {r}");
    let third = &DORMAND_PRINCE_853_WEIGHTS_3;
    let (r, t) = max_abs_residual(&a[..STEP_STAGES], &third[..STEP_STAGES], 3, (1, 1));
    assert!(r < 1e-12, "third-order weights fail at {t:?} by {r}");
}

#[test]
fn dormand_prince_853_dense_output_has_order_7() {
    let (a, b) = dop853_f64();
    let d: Vec<Vec<f64>> = DORMAND_PRINCE_853_DENSE
        .iter()
        .map(|r| r.to_vec())
        .collect();
    for theta in [(1, 2), (1, 3), (3, 4), (1, 10), (9, 10)] {
        let th = theta.0 as f64 / theta.1 as f64;
        let w = dense_weights(&b, &d, 12, &th);
        let (r, t) = max_abs_residual(&a, &w, DORMAND_PRINCE_853_DENSE_ORDER as usize, theta);
        assert!(r < 1e-11, "θ = {theta:?}: tree {t:?} fails by {r}");
    }
}
