//! Algebraic laws on random expressions: canonical construction keeps the value, the
//! derivative matches central finite differences, and the scheduled program computes what
//! the DAG says.

use geokern_symbolic::expr::{ExprId, Func, Store, SymbolKind};
use geokern_symbolic::program::{lower, InputArray, KernelKind};
use proptest::prelude::*;

/// A random expression tree in two variables, kept well-defined near the sample points by
/// construction (divisions and logarithms only of expressions bounded away from zero).
#[derive(Clone, Debug)]
enum Tree {
    X,
    Y,
    Int(i8),
    Add(Box<Tree>, Box<Tree>),
    Sub(Box<Tree>, Box<Tree>),
    Mul(Box<Tree>, Box<Tree>),
    /// a / (2 + b²)
    DivSafe(Box<Tree>, Box<Tree>),
    Sin(Box<Tree>),
    Cos(Box<Tree>),
    /// exp(a / 4)
    ExpQuarter(Box<Tree>),
    /// √(1 + a²)
    Hypot(Box<Tree>),
    Powi(Box<Tree>, u8),
}

fn tree() -> impl Strategy<Value = Tree> {
    let leaf = prop_oneof![Just(Tree::X), Just(Tree::Y), (-3i8..=3).prop_map(Tree::Int)];
    leaf.prop_recursive(5, 40, 2, |inner| {
        prop_oneof![
            (inner.clone(), inner.clone()).prop_map(|(a, b)| Tree::Add(a.into(), b.into())),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| Tree::Sub(a.into(), b.into())),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| Tree::Mul(a.into(), b.into())),
            (inner.clone(), inner.clone()).prop_map(|(a, b)| Tree::DivSafe(a.into(), b.into())),
            inner.clone().prop_map(|a| Tree::Sin(a.into())),
            inner.clone().prop_map(|a| Tree::Cos(a.into())),
            inner.clone().prop_map(|a| Tree::ExpQuarter(a.into())),
            inner.clone().prop_map(|a| Tree::Hypot(a.into())),
            (inner, 0u8..4).prop_map(|(a, n)| Tree::Powi(a.into(), n)),
        ]
    })
}

fn eval(t: &Tree, x: f64, y: f64) -> f64 {
    match t {
        Tree::X => x,
        Tree::Y => y,
        Tree::Int(i) => f64::from(*i),
        Tree::Add(a, b) => eval(a, x, y) + eval(b, x, y),
        Tree::Sub(a, b) => eval(a, x, y) - eval(b, x, y),
        Tree::Mul(a, b) => eval(a, x, y) * eval(b, x, y),
        Tree::DivSafe(a, b) => eval(a, x, y) / (2.0 + eval(b, x, y).powi(2)),
        Tree::Sin(a) => eval(a, x, y).sin(),
        Tree::Cos(a) => eval(a, x, y).cos(),
        Tree::ExpQuarter(a) => (eval(a, x, y) / 4.0).exp(),
        Tree::Hypot(a) => (1.0 + eval(a, x, y).powi(2)).sqrt(),
        Tree::Powi(a, n) => eval(a, x, y).powi(i32::from(*n)),
    }
}

fn build(s: &mut Store, t: &Tree, x: ExprId, y: ExprId) -> ExprId {
    match t {
        Tree::X => x,
        Tree::Y => y,
        Tree::Int(i) => s.int(i64::from(*i)),
        Tree::Add(a, b) => {
            let (a, b) = (build(s, a, x, y), build(s, b, x, y));
            s.add(&[a, b])
        }
        Tree::Sub(a, b) => {
            let (a, b) = (build(s, a, x, y), build(s, b, x, y));
            s.sub(a, b)
        }
        Tree::Mul(a, b) => {
            let (a, b) = (build(s, a, x, y), build(s, b, x, y));
            s.mul(&[a, b])
        }
        Tree::DivSafe(a, b) => {
            let (a, b) = (build(s, a, x, y), build(s, b, x, y));
            let two = s.int(2);
            let b2 = s.powi(b, 2);
            let d = s.add(&[two, b2]);
            s.div(a, d)
        }
        Tree::Sin(a) => {
            let a = build(s, a, x, y);
            s.call(Func::Sin, a)
        }
        Tree::Cos(a) => {
            let a = build(s, a, x, y);
            s.call(Func::Cos, a)
        }
        Tree::ExpQuarter(a) => {
            let a = build(s, a, x, y);
            let q = s.scale(a, geokern_symbolic::expr::Q::new(1.into(), 4.into()));
            s.call(Func::Exp, q)
        }
        Tree::Hypot(a) => {
            let a = build(s, a, x, y);
            let one = s.int(1);
            let a2 = s.powi(a, 2);
            let r = s.add(&[one, a2]);
            s.sqrt(r)
        }
        Tree::Powi(a, n) => {
            let a = build(s, a, x, y);
            s.powi(a, i64::from(*n))
        }
    }
}

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol * (1.0 + a.abs().max(b.abs()))
}

fn setup(t: &Tree) -> (Store, ExprId, ExprId, ExprId) {
    let mut s = Store::new();
    let x = s.symbol("x", SymbolKind::Coordinate(0));
    let y = s.symbol("y", SymbolKind::Coordinate(1));
    let e = build(&mut s, t, x, y);
    (s, x, y, e)
}

fn at(s: &Store, e: ExprId, x: f64, y: f64) -> f64 {
    s.eval(e, &|sym| match sym.kind {
        SymbolKind::Coordinate(0) => x,
        _ => y,
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn canonical_construction_keeps_the_value(t in tree(), x in -1.5f64..1.5, y in -1.5f64..1.5) {
        let (s, _, _, e) = setup(&t);
        let want = eval(&t, x, y);
        prop_assume!(want.is_finite() && want.abs() < 1e8);
        let got = at(&s, e, x, y);
        prop_assert!(close(got, want, 1e-9), "{} = {got} vs {want}", s.display(e));
    }

    #[test]
    fn derivative_matches_central_differences(t in tree(), x in -1.5f64..1.5, y in -1.5f64..1.5) {
        let (mut s, xs, _, e) = setup(&t);
        let d = s.diff(e, xs);
        let h = 1e-5;
        let (fp, fm) = (eval(&t, x + h, y), eval(&t, x - h, y));
        prop_assume!(fp.is_finite() && fm.is_finite() && fp.abs() < 1e6 && fm.abs() < 1e6);
        let fd = (fp - fm) / (2.0 * h);
        let got = at(&s, d, x, y);
        // Central differences are accurate to O(h²·f''') plus rounding O(ε/h).
        prop_assert!(close(got, fd, 1e-5), "d/dx {} = {got}, finite differences {fd}", s.display(e));
    }

    #[test]
    fn scheduled_program_computes_the_dag(t in tree(), x in -1.5f64..1.5, y in -1.5f64..1.5) {
        let (mut s, xs, ys, e) = setup(&t);
        let dx = s.diff(e, xs);
        let dy = s.diff(e, ys);
        let outs = [e, dx, dy];
        let want: Vec<f64> = outs.iter().map(|&o| at(&s, o, x, y)).collect();
        prop_assume!(want.iter().all(|v| v.is_finite() && v.abs() < 1e8));
        let p = lower(&s, KernelKind::Christoffel, 2, &outs, vec![3]);
        let mut got = Vec::new();
        p.eval_f64(&|a| if a == InputArray::X { vec![x, y] } else { vec![] }, &mut got);
        for (g, w) in got.iter().zip(&want) {
            prop_assert!(close(*g, *w, 1e-9), "program {g} vs DAG {w}\n{p}");
        }
    }
}
