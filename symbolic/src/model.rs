//! From a checked declaration to a [`MetricModel`]: expressions into the store, the line
//! element into components, and the semantic checks that need algebra (a division by an exact
//! zero, a line element that is not quadratic, a declared inverse that is not one).

use num_traits::{One, Zero};

use crate::expr::{ExprId, Func, NamedConst, Store, SymbolKind, Q};
use crate::geometry::{MetricModel, SamplePoints};
use crate::parse::ast::{self, BinaryOp, Constant, Expr, MetricDecl, Tensor, VarKind};
use crate::parse::{Diagnostic, Diagnostics};

/// Builds the model of one declared metric, reporting every problem found.
pub fn build_model(decl: &MetricDecl) -> Result<MetricModel, Diagnostics> {
    let mut b = Builder {
        store: Store::new(),
        lets: Vec::new(),
        errors: Vec::new(),
    };
    let coords: Vec<String> = decl.coords.iter().map(|c| c.to_string()).collect();
    let params: Vec<String> = decl.params.iter().map(|p| p.to_string()).collect();
    let n = coords.len();
    for (i, c) in coords.iter().enumerate() {
        b.store.symbol(c, SymbolKind::Coordinate(i));
    }
    for (i, p) in params.iter().enumerate() {
        b.store.symbol(p, SymbolKind::Parameter(i));
    }
    let symbols = Symbols { coords: &coords };

    let zero = b.store.int(0);
    let mut metric = vec![vec![zero; n]; n];
    let mut inverse: Option<Vec<Vec<ExprId>>> = None;
    let mut inverse_span = None;
    let mut invariants = Vec::new();
    for item in &decl.items {
        match item {
            ast::Item::Let { value, .. } => {
                let e = b.lower(value, &symbols);
                let e = b.store.bind(e);
                b.lets.push(e);
            }
            ast::Item::Component {
                which,
                i,
                j,
                value,
                index_span,
            } => {
                let e = b.lower(value, &symbols);
                let target = match which {
                    Tensor::Metric => &mut metric,
                    Tensor::InverseMetric => {
                        inverse_span.get_or_insert(*index_span);
                        inverse.get_or_insert_with(|| vec![vec![zero; n]; n])
                    }
                };
                target[*i][*j] = e;
                target[*j][*i] = e;
            }
            ast::Item::LineElement { value, span } => {
                let e = b.lower(value, &symbols);
                match b.line_element_components(e, n, &coords) {
                    Ok(m) => metric = m,
                    Err(msg) => b.errors.push(Diagnostic::new(*span, msg)),
                }
            }
            ast::Item::Invariant { name, value } => {
                let e = b.lower(value, &symbols);
                invariants.push((name.to_string(), e));
            }
        }
    }
    if let (Some(ginv), Some(span)) = (&inverse, inverse_span) {
        if let Err(msg) = b.check_inverse(&metric, ginv, &coords) {
            b.errors.push(Diagnostic::new(span, msg));
        }
    }
    if let Some(d) = Diagnostics::from_vec(std::mem::take(&mut b.errors)) {
        return Err(d);
    }
    Ok(MetricModel {
        name: decl.name.to_string(),
        docs: decl.docs.clone(),
        coords,
        params,
        store: b.store,
        metric,
        declared_inverse: inverse,
        invariants,
        curvature: decl.has_option("curvature"),
        prove_zeros: false,
    })
}

struct Symbols<'a> {
    coords: &'a [String],
}

struct Builder {
    store: Store,
    lets: Vec<ExprId>,
    errors: Vec<Diagnostic>,
}

impl Builder {
    fn lower(&mut self, e: &Expr, syms: &Symbols<'_>) -> ExprId {
        match e {
            Expr::Number { value, .. } => self.store.num(value.clone()),
            Expr::Var { kind, name } => match *kind {
                VarKind::Coordinate(k) => self
                    .store
                    .symbol(&syms.coords[k], SymbolKind::Coordinate(k)),
                VarKind::Parameter(k) => self
                    .store
                    .symbol(&name.to_string(), SymbolKind::Parameter(k)),
                VarKind::Let(k) => match self.lets.get(k) {
                    Some(&id) => id,
                    None => {
                        self.errors.push(Diagnostic::new(
                            name.span(),
                            format!("`{name}` is used before it is defined"),
                        ));
                        self.store.int(0)
                    }
                },
                VarKind::Differential(k) => self
                    .store
                    .symbol(&format!("d{}", syms.coords[k]), SymbolKind::Differential(k)),
                VarKind::Constant(Constant::Pi) => self.store.constant(NamedConst::Pi),
                VarKind::Constant(Constant::E) => self.store.constant(NamedConst::E),
            },
            Expr::Velocity { coord, .. } => self.store.symbol(
                &format!("u_{}", syms.coords[*coord]),
                SymbolKind::Velocity(*coord),
            ),
            Expr::Momentum { coord, .. } => self.store.symbol(
                &format!("p_{}", syms.coords[*coord]),
                SymbolKind::Momentum(*coord),
            ),
            Expr::Neg { arg, .. } => {
                let a = self.lower(arg, syms);
                self.store.neg(a)
            }
            Expr::Binary { op, lhs, rhs, span } => {
                let a = self.lower(lhs, syms);
                let b = self.lower(rhs, syms);
                match op {
                    BinaryOp::Add => self.store.add(&[a, b]),
                    BinaryOp::Sub => self.store.sub(a, b),
                    BinaryOp::Mul => self.store.mul(&[a, b]),
                    BinaryOp::Div => {
                        let r = self.store.div(a, b);
                        if self.store.take_division_by_zero() {
                            self.errors.push(Diagnostic::new(*span, "division by zero"));
                        }
                        r
                    }
                }
            }
            Expr::Call { func, args, span } => {
                let a = self.lower(&args[0], syms);
                let r = match func {
                    ast::Func::Sqrt => self.store.sqrt(a),
                    ast::Func::Powi => {
                        let n = args.get(1).and_then(Expr::as_integer).unwrap_or(1);
                        self.store.powi(a, n)
                    }
                    ast::Func::Powf => {
                        let b = match args.get(1) {
                            Some(x) => self.lower(x, syms),
                            None => self.store.int(1),
                        };
                        self.store.pow(a, b)
                    }
                    ast::Func::Sin => self.store.call(Func::Sin, a),
                    ast::Func::Cos => self.store.call(Func::Cos, a),
                    ast::Func::Tan => self.store.call(Func::Tan, a),
                    ast::Func::Exp => self.store.call(Func::Exp, a),
                    ast::Func::Ln => self.store.call(Func::Ln, a),
                    ast::Func::Sinh => self.store.call(Func::Sinh, a),
                    ast::Func::Cosh => self.store.call(Func::Cosh, a),
                    ast::Func::Tanh => self.store.call(Func::Tanh, a),
                    ast::Func::Asin => self.store.call(Func::Asin, a),
                    ast::Func::Acos => self.store.call(Func::Acos, a),
                    ast::Func::Atan => self.store.call(Func::Atan, a),
                };
                if self.store.take_division_by_zero() {
                    self.errors.push(Diagnostic::new(
                        *span,
                        "division by zero (a zero raised to a negative power)",
                    ));
                }
                r
            }
        }
    }

    /// g_ij = ½ ∂²f/∂dxⁱ∂dxʲ, after checking that f is a quadratic form in the differentials:
    /// no component may still contain a differential, and f − Σ g_ij dxⁱ dxʲ must vanish.
    fn line_element_components(
        &mut self,
        f: ExprId,
        n: usize,
        coords: &[String],
    ) -> Result<Vec<Vec<ExprId>>, String> {
        let s = &mut self.store;
        let ds: Vec<ExprId> = (0..n)
            .map(|i| s.symbol(&format!("d{}", coords[i]), SymbolKind::Differential(i)))
            .collect();
        let half = Q::new(1.into(), 2.into());
        let zero = s.int(0);
        let mut g = vec![vec![zero; n]; n];
        let first: Vec<ExprId> = ds.iter().map(|&d| s.diff(f, d)).collect();
        for i in 0..n {
            for j in i..n {
                let second = s.diff(first[i], ds[j]);
                let gij = s.scale(second, half.clone());
                let still = (0..n).find(|&k| s.depends_on(gij, SymbolKind::Differential(k)));
                if let Some(k) = still {
                    return Err(format!(
                        "the line element is not quadratic in the differentials: the coefficient \
                         of d{}·d{} still contains d{}",
                        coords[i], coords[j], coords[k]
                    ));
                }
                g[i][j] = gij;
                g[j][i] = gij;
            }
        }
        let mut parts = vec![(f, Q::one())];
        for i in 0..n {
            for j in 0..n {
                let t = s.mul(&[g[i][j], ds[i], ds[j]]);
                parts.push((t, -Q::one()));
            }
        }
        let residual = s.lincomb(&parts);
        if !s.is_zero(residual) && !SamplePoints::standard().all_zero(s, residual) {
            return Err(
                "the line element is not quadratic in the differentials: it has terms of \
                        degree other than two (every term must be a product of exactly two \
                        differentials, e.g. `dt.powi(2)` or `2.0 * dt * dphi`)"
                    .to_string(),
            );
        }
        Ok(g)
    }

    /// Proves that `ginv` inverts `g`: symbolically where canonical forms settle it, else at
    /// every sample point to 1e-9 relative.
    fn check_inverse(
        &mut self,
        g: &[Vec<ExprId>],
        ginv: &[Vec<ExprId>],
        coords: &[String],
    ) -> Result<(), String> {
        let n = g.len();
        let s = &mut self.store;
        let mut pending: Vec<(usize, usize, ExprId)> = Vec::new();
        for i in 0..n {
            for j in 0..n {
                let pairs: Vec<(ExprId, ExprId)> = (0..n).map(|k| (g[i][k], ginv[k][j])).collect();
                let prod = s.sum_of_products(&pairs);
                let want = if i == j { Q::one() } else { Q::zero() };
                if s.as_num(prod) != Some(&want) {
                    pending.push((i, j, prod));
                }
            }
        }
        if pending.is_empty() {
            return Ok(());
        }
        let pts = SamplePoints::standard();
        let roots: Vec<ExprId> = pending.iter().map(|p| p.2).collect();
        let mut checked = 0;
        for k in 0..pts.len() {
            let vals = pts.eval(s, &roots, k);
            if vals.iter().any(|v| !v.is_finite()) {
                continue;
            }
            checked += 1;
            for ((i, j, _), v) in pending.iter().zip(&vals) {
                let want = if i == j { 1.0 } else { 0.0 };
                if (v - want).abs() > 1e-9 {
                    return Err(format!(
                        "the declared inverse metric is not the inverse of g: (g·ginv)[{}][{}] \
                         is {v:.6e} at a sample point, not {want}",
                        coords[*i], coords[*j]
                    ));
                }
            }
        }
        if checked == 0 {
            return Err(
                "the declared inverse metric could not be checked: g·ginv is not finite \
                        at any sample point"
                    .to_string(),
            );
        }
        Ok(())
    }
}

/// Compiles one declaration to its kernels.
pub fn compile(decl: &MetricDecl) -> Result<crate::kernels::KernelSet, Diagnostics> {
    compile_with(decl, &CompileOptions::default())
}

/// What [`compile_with`] adds to what the declaration asks for.
#[derive(Clone, Copy, Debug, Default)]
pub struct CompileOptions {
    /// Derive the curvature kernels even without `options: [curvature]`.
    pub curvature: bool,
    /// Try to prove each vanishing Ricci component exactly (as one rational function), not
    /// only check it at sample points. Costs seconds for Kerr in an optimized build.
    pub prove_zeros: bool,
}

/// [`compile`] with extra [`CompileOptions`].
pub fn compile_with(
    decl: &MetricDecl,
    options: &CompileOptions,
) -> Result<crate::kernels::KernelSet, Diagnostics> {
    let mut model = build_model(decl)?;
    model.prove_zeros = options.prove_zeros;
    model.curvature |= options.curvature;
    crate::kernels::build(&mut model).map_err(|e| {
        let crate::geometry::InverseError::SingularBlock { coords } = &e;
        let names: Vec<String> = coords.iter().map(|&i| decl.coords[i].to_string()).collect();
        let msg = format!(
            "{e}: the block of coordinates {} is degenerate",
            names.join(", ")
        );
        Diagnostics::new(Diagnostic::new(decl.name.span(), msg))
    })
}
