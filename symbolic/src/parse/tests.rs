//! Tests of the parser and checker: every diagnostic, as `input => message at line:col`
//! tables, the accepted forms, and robustness against arbitrary input.

use num_bigint::BigInt;
use num_rational::BigRational;
use proptest::prelude::*;
use quote::quote;

use super::ast::{BinaryOp, Constant, Expr, File, Func, Item, Tensor, VarKind};
use super::{parse_str, parse_tokens, Diagnostics, MAX_EXPR_HEIGHT, MAX_NESTING};

fn ok(source: &str) -> File {
    match parse_str(source) {
        Ok(file) => file,
        Err(errors) => panic!("expected success, got:\n{}", errors.render("test.gk")),
    }
}

fn err(source: &str) -> Diagnostics {
    match parse_str(source) {
        Ok(_) => panic!("expected an error for {source:?}"),
        Err(errors) => errors,
    }
}

fn ratio(numer: i64, denom: i64) -> BigRational {
    BigRational::new(BigInt::from(numer), BigInt::from(denom))
}

/// `(input, expected message substring, line, column)`; the blamed token starts at
/// line:column (both 1-based).
const ERROR_CASES: &[(&str, &str, usize, usize)] = &[
    // unknown_identifier
    ("struct M { coords: [t, r], params: [m], g[t, t] = rr; }", "unknown identifier `rr`; coordinates are t, r; parameters are m", 1, 51),
    // unknown_identifier_in_line_element
    ("struct M {\n    coords: [t, x],\n    line_element = -dt.powi(2) + dy.powi(2);\n}", "unknown identifier `dy`", 3, 34),
    // index_out_of_range
    ("struct M { coords: [t, r], params: [m], g[0, 2] = 1; }", "index 2 is out of range: coordinates are numbered 0 to 1", 1, 46),
    // index_huge
    ("struct M { coords: [t, r], params: [m], g[0, 99999999999999999999999] = 1; }", "out of range", 1, 46),
    // unknown_coordinate_in_index
    ("struct M { coords: [t, r], params: [m], g[t, x] = 1; }", "unknown coordinate `x` in index; coordinates are t, r", 1, 46),
    // three_indices
    ("struct M { coords: [t, r], params: [m], g[t, r, t] = 1; }", "expected two indices", 1, 42),
    // coordinate_twice
    ("struct M { coords: [t, r, t], g[t, t] = 1; }", "the name `t` is already used by a coordinate", 1, 27),
    // parameter_clashes_with_coordinate
    ("struct M { coords: [t, r], params: [r], g[t, t] = 1; }", "the name `r` is already used by a coordinate", 1, 37),
    // let_clashes_with_parameter
    ("struct M { coords: [t, r], params: [m], let m = 2; g[t, t] = 1; }", "the name `m` is already used by a parameter", 1, 45),
    // let_twice
    ("struct M { coords: [t, r], params: [m], let a = 2; let a = 3; g[t, t] = a; }", "the name `a` is already used by a `let` helper", 1, 56),
    // invariant_clashes_with_let
    ("struct M { coords: [t, r], params: [m], let k = 2; g[t, t] = k; invariant k = u[t]; }", "the name `k` is already used by a `let` helper", 1, 75),
    // name_clashes_with_pi
    ("struct M { coords: [t], params: [PI], g[t, t] = 1; }", "the name `PI` is reserved for the constant", 1, 34),
    // name_clashes_with_e
    ("struct M { coords: [t, E], g[t, t] = 1; }", "the name `E` is reserved for the constant e", 1, 24),
    // name_clashes_with_u
    ("struct M { coords: [t, u], g[t, t] = 1; }", "the name `u` is reserved for velocity components", 1, 24),
    // name_clashes_with_p
    ("struct M { coords: [t], params: [p], g[t, t] = p; }", "the name `p` is reserved for momentum components", 1, 34),
    // let_used_before_defined
    ("struct M {\n    coords: [t],\n    g[t, t] = a;\n    let a = 1;\n}", "let `a` used before it is defined (defined at line 4)", 3, 15),
    // let_used_in_own_definition
    ("struct M { coords: [t, r], params: [m], let a = a + 1; g[t, t] = a; }", "let `a` used before it is defined", 1, 49),
    // component_set_twice
    ("struct M {\n    coords: [t, phi],\n    g[t, phi] = 1;\n    g[phi, t] = 2;\n}", "component `g[phi, t]` is set twice with different expressions (first at line 3)", 4, 6),
    // inverse_component_set_twice
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1; ginv[r, t] = 1; ginv[t, r] = 2.0 * 1; }", "component `ginv[t, r]` is set twice", 1, 74),
    // line_element_after_components
    ("struct M {\n    coords: [t, x],\n    g[t, t] = -1;\n    line_element = dx.powi(2);\n}", "a `line_element` and `g[..]` lines (line 3) cannot both define the metric", 4, 5),
    // components_after_line_element
    ("struct M {\n    coords: [t, x],\n    line_element = dx.powi(2);\n    g[t, t] = -1;\n}", "`g[..]` lines and a `line_element` (line 3) cannot both define the metric", 4, 6),
    // line_element_twice
    ("struct M { coords: [x], line_element = dx * dx; line_element = dx * dx; }", "`line_element` is given twice", 1, 49),
    // no_components
    ("struct Empty { coords: [t, r], params: [m], }", "metric `Empty` defines no components", 1, 8),
    // only_inverse_components
    ("struct Half { coords: [t], ginv[t, t] = 1; }", "metric `Half` defines no components", 1, 8),
    // unsupported_method
    ("struct M { coords: [t, r], params: [m], g[t, t] = r.floor(); }", "unsupported function `floor`; supported: sqrt, sin, cos, tan, exp, ln, sinh, cosh, tanh, asin, acos, atan, powi, powf", 1, 53),
    // unsupported_function
    ("struct M { coords: [t, r], params: [m], g[t, t] = log(r); }", "unsupported function `log`; supported: sqrt", 1, 51),
    // unsupported_function_path
    ("struct M { coords: [t, r], params: [m], g[t, t] = f32::sin(r); }", "unsupported function `f32::sin`", 1, 51),
    // method_with_argument
    ("struct M { coords: [t, r], params: [m], g[t, t] = r.sin(2); }", "method `sin` takes no arguments, found 1", 1, 53),
    // method_missing_argument
    ("struct M { coords: [t, r], params: [m], g[t, t] = r.powi(); }", "method `powi` takes 1 argument, found 0", 1, 53),
    // function_wrong_arity
    ("struct M { coords: [t, r], params: [m], g[t, t] = powi(r); }", "`powi` takes 2 arguments, found 1", 1, 51),
    // function_too_many_arguments
    ("struct M { coords: [t, r], params: [m], g[t, t] = sqrt(r, m); }", "`sqrt` takes 1 argument, found 2", 1, 51),
    // powi_float_exponent
    ("struct M { coords: [t, r], params: [m], g[t, t] = r.powi(2.0); }", "the exponent of `powi` must be an integer literal", 1, 58),
    // powi_variable_exponent
    ("struct M { coords: [t, r], params: [m], g[t, t] = powi(r, m); }", "the exponent of `powi` must be an integer literal", 1, 59),
    // powi_exponent_out_of_range
    ("struct M { coords: [t, r], params: [m], g[t, t] = r.powi(3000000000); }", "out of range for an `i32`", 1, 58),
    // differential_outside_line_element
    ("struct M { coords: [t, r], params: [m], g[t, t] = dr; }", "differential `dr` is only allowed in a `line_element`", 1, 51),
    // differential_in_let
    ("struct M { coords: [x], let q = dx * dx; line_element = q; }", "differential `dx` is only allowed in a `line_element`", 1, 33),
    // velocity_outside_invariant
    ("struct M { coords: [t, r], params: [m], g[t, t] = u[t]; }", "velocity `u[..]` is only allowed in an `invariant`", 1, 51),
    // momentum_outside_invariant
    ("struct M { coords: [t, r], params: [m], let k = p[r]; g[t, t] = k; }", "momentum `p[..]` is only allowed in an `invariant`", 1, 49),
    // bare_velocity
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1; invariant e = u * 2; }", "`u` must be indexed by a coordinate, as in `u[t]`", 1, 68),
    // velocity_bad_index
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1; invariant e = u[5]; }", "index 5 is out of range", 1, 70),
    // index_with_two_entries
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1; invariant e = u[t, r]; }", "expected one index, as in `u[t]`", 1, 68),
    // indexing_other_names
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1; g[r, r] = g[t, t]; }", "`g[..]` cannot be used in an expression", 1, 64),
    // invariant_used_in_expression
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1; invariant e = u[t]; invariant f = e * 2; }", "invariant `e` cannot be used in an expression", 1, 88),
    // missing_coords
    ("struct NoCoords { params: [m], g[0, 0] = m; }", "metric `NoCoords` has no `coords: [..]` line", 1, 8),
    // empty_coords
    ("struct M { coords: [], g[0, 0] = 1; }", "`coords` needs 1 to 16 coordinate names", 1, 12),
    // too_many_coords
    ("struct M { coords: [a0, a1, a2, a3, a4, a5, a6, a7, a8, a9, b0, b1, b2, b3, b4, b5, b6, b7], g[0, 0] = 1; }", "too many coordinates: 18 given, at most 16", 1, 85),
    // coords_twice
    ("struct M { coords: [t], coords: [r], g[0, 0] = 1; }", "`coords` is given twice", 1, 25),
    // unknown_option
    ("struct M { coords: [t, r], params: [m], options: [torsion], g[t, t] = 1; }", "unknown option `torsion`; known options: curvature", 1, 51),
    // option_twice
    ("struct M { coords: [t, r], params: [m], options: [curvature, curvature], g[t, t] = 1; }", "option `curvature` is given twice", 1, 62),
    // struct_declared_twice
    ("struct A { coords: [x], g[x, x] = 1; }\nstruct A { coords: [y], g[y, y] = 1; }", "metric `A` is declared twice (first at line 1)", 2, 8),
    // syntax_missing_operand
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1 +; }", "expected an expression", 1, 54),
    // syntax_missing_semicolon
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1 g[r, r] = 1; }", "expected `;`", 1, 53),
    // syntax_unknown_line
    ("struct M { coords: [t, r], params: [m], metric = 1; }", "expected `coords: [..]`, `params: [..]`", 1, 41),
    // syntax_not_a_struct
    ("fn main() {}", "expected `struct`", 1, 1),
    // syntax_generic_struct
    ("struct M<T> { coords: [t], g[t, t] = 1; }", "generic parameters are not supported", 1, 9),
    // syntax_struct_without_body
    ("struct M", "unexpected end of input", 1, 8),
    // syntax_keyword_as_name
    ("struct M { coords: [t, fn], g[t, t] = 1; }", "expected identifier, found keyword `fn`", 1, 24),
    // syntax_attribute_in_body
    ("struct M { coords: [t, r], params: [m], #[inline] g[t, t] = 1; }", "attributes are not supported inside a metric body", 1, 41),
    // unsupported_operator
    ("struct M { coords: [t, r], params: [m], g[t, t] = r % 2; }", "unsupported operator `%`", 1, 53),
    // python_power
    ("struct M { coords: [t, r], params: [m], g[t, t] = r ** 2; }", "for powers write `x.powi(n)`", 1, 54),
    // cast
    ("struct M { coords: [t, r], params: [m], g[t, t] = 2 as f64; }", "casts (`as`) are not supported", 1, 53),
    // string_literal
    ("struct M { coords: [t, r], params: [m], g[t, t] = \"one\"; }", "unsupported literal", 1, 51),
    // literal_suffix
    ("struct M { coords: [t, r], params: [m], g[t, t] = 2u8; }", "unsupported literal suffix `u8`", 1, 51),
    // literal_exponent_too_large
    ("struct M { coords: [t, r], params: [m], g[t, t] = 1e5000; }", "out of range", 1, 51),
    // unsupported_path
    ("struct M { coords: [t, r], params: [m], g[t, t] = std::f64::consts::TAU; }", "unsupported path `std::f64::consts::TAU`", 1, 51),
    // macro_call
    ("struct M { coords: [t, r], params: [m], g[t, t] = vec![1]; }", "macros are not supported", 1, 54),
    // tuple
    ("struct M { coords: [t, r], params: [m], g[t, t] = (r, m); }", "tuples are not supported", 1, 53),
    // lex_unclosed_brace
    ("struct M {\n    coords: [t],\n    g[t, t] = 1;\n", "unclosed delimiter `{`", 1, 10),
    // lex_unclosed_paren
    ("struct M { coords: [t], g[t, t] = (1 + t; }", "mismatched or unbalanced closing delimiter `}`", 1, 43),
    // lex_stray_closer
    ("struct M { coords: [t], g[t, t] = 1; }}", "mismatched or unbalanced closing delimiter `}`", 1, 39),
    // lex_stray_character
    ("struct M {\n    coords: [t],\n    g[t, t] = 1 ` 2;\n}", "unexpected character", 3, 17),
    // empty_file
    ("  // only a comment\n", "expected at least one `struct NAME { .. }` declaration", 1, 1),

];

#[test]
fn each_error_is_reported_at_the_offending_token() {
    let mut failures = Vec::new();
    for &(source, message, line, col) in ERROR_CASES {
        let errors = match parse_str(source) {
            Ok(_) => {
                failures.push(format!("{source:?}: parsed without error"));
                continue;
            }
            Err(errors) => errors,
        };
        let found = errors
            .iter()
            .any(|d| d.message.contains(message) && d.line_col() == (line, col));
        if !found {
            failures.push(format!(
                "{source:?}: wanted `{message}` at {line}:{col}, got:\n{}",
                errors.render("test.gk")
            ));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}

#[test]
fn messages_are_lowercase() {
    for &(source, _, _, _) in ERROR_CASES {
        if let Err(errors) = parse_str(source) {
            for d in &errors {
                let first = d.message.chars().next();
                assert!(
                    first.is_some_and(|c| !c.is_uppercase()),
                    "message starts uppercase: {}",
                    d.message
                );
            }
        }
    }
}

const KERR: &str = "
/// Kerr black hole, Boyer-Lindquist coordinates.
pub struct Kerr {
    coords: [t, r, theta, phi],
    params: [m, a],
    let sigma = r.powi(2) + (a * theta.cos()).powi(2);
    let delta = r.powi(2) - 2.0 * m * r + a.powi(2);
    g[t, t] = -(1.0 - 2.0 * m * r / sigma);
    g[t, phi] = -2.0 * m * a * r * theta.sin().powi(2) / sigma;
    g[r, r] = sigma / delta;
    g[theta, theta] = sigma;
    g[phi, phi] = (r.powi(2) + a.powi(2)
        + 2.0 * m * r * (a * theta.sin()).powi(2) / sigma) * theta.sin().powi(2);
}
";

#[test]
fn kerr_parses_with_its_items() {
    let file = ok(KERR);
    assert_eq!(file.metrics.len(), 1);
    let kerr = &file.metrics[0];
    assert_eq!(kerr.name, "Kerr");
    assert_eq!(kerr.docs, ["Kerr black hole, Boyer-Lindquist coordinates."]);
    assert!(matches!(kerr.vis, syn::Visibility::Public(_)));
    assert_eq!(kerr.coords, ["t", "r", "theta", "phi"]);
    assert_eq!(kerr.params, ["m", "a"]);
    assert_eq!(kerr.lets, ["sigma", "delta"]);
    assert_eq!(kerr.items.len(), 7);
    let components: Vec<(usize, usize)> = kerr
        .components(Tensor::Metric)
        .map(|(i, j, _)| (i, j))
        .collect();
    assert_eq!(components, [(0, 0), (0, 3), (1, 1), (2, 2), (3, 3)]);
    assert_eq!(
        kerr.let_value(0).map(ToString::to_string).as_deref(),
        Some("r.powi(2) + (a * theta.cos()).powi(2)")
    );
    assert_eq!(
        kerr.let_value(1).map(ToString::to_string).as_deref(),
        Some("r.powi(2) - 2 * m * r + a.powi(2)")
    );
    // g[r, r] = sigma / delta: both helpers resolved by index.
    let (_, _, g_rr) = kerr
        .components(Tensor::Metric)
        .nth(2)
        .expect("g[r, r] is set");
    let Expr::Binary {
        op: BinaryOp::Div,
        lhs,
        rhs,
        ..
    } = g_rr
    else {
        panic!("g[r, r] should be a division, got {g_rr}");
    };
    assert!(matches!(
        **lhs,
        Expr::Var {
            kind: VarKind::Let(0),
            ..
        }
    ));
    assert!(matches!(
        **rhs,
        Expr::Var {
            kind: VarKind::Let(1),
            ..
        }
    ));
    // sigma = r.powi(2) + ...: r is coordinate 1, the exponent an exact integer.
    let Some(Expr::Binary { lhs, .. }) = kerr.let_value(0) else {
        panic!("sigma should be a sum");
    };
    let Expr::Call {
        func: Func::Powi,
        args,
        ..
    } = &**lhs
    else {
        panic!("sigma should start with r.powi(2), got {lhs}");
    };
    assert!(matches!(
        args[0],
        Expr::Var {
            kind: VarKind::Coordinate(1),
            ..
        }
    ));
    assert_eq!(args[1].as_integer(), Some(2));
    assert!(!kerr.has_option("curvature"));
}

#[test]
fn kerr_spans_point_into_the_source() {
    let kerr = &ok(KERR).metrics[0];
    assert_eq!(kerr.name.span().start().line, 3);
    let spans: Vec<(usize, usize)> = kerr
        .items
        .iter()
        .filter_map(|item| match item {
            Item::Component { index_span, .. } => {
                Some((index_span.start().line, index_span.start().column + 1))
            }
            _ => None,
        })
        .collect();
    assert_eq!(spans, [(8, 6), (9, 6), (10, 6), (11, 6), (12, 6)]);
}

#[test]
fn tokens_and_text_give_the_same_declaration() {
    let from_tokens = parse_tokens(quote! {
        pub struct Kerr {
            coords: [t, r, theta, phi],
            params: [m, a],
            let sigma = r.powi(2) + (a * theta.cos()).powi(2);
            let delta = r.powi(2) - 2.0 * m * r + a.powi(2);
            g[t, t] = -(1.0 - 2.0 * m * r / sigma);
            g[t, phi] = -2.0 * m * a * r * theta.sin().powi(2) / sigma;
            g[r, r] = sigma / delta;
            g[theta, theta] = sigma;
            g[phi, phi] = (r.powi(2) + a.powi(2)
                + 2.0 * m * r * (a * theta.sin()).powi(2) / sigma) * theta.sin().powi(2);
        }
    })
    .expect("Kerr parses from tokens");
    let from_text = ok(KERR);
    let a = &from_tokens.metrics[0];
    let b = &from_text.metrics[0];
    assert_eq!(a.items.len(), b.items.len());
    for (x, y) in a.items.iter().zip(&b.items) {
        match (x, y) {
            (Item::Let { value: v, .. }, Item::Let { value: w, .. })
            | (Item::Component { value: v, .. }, Item::Component { value: w, .. }) => {
                assert_eq!(v, w)
            }
            _ => panic!("items differ: {x:?} vs {y:?}"),
        }
    }
}

#[test]
fn line_element_with_differentials() {
    let file = ok("
        struct Schwarzschild {
            coords: [t, r, theta, phi],
            params: [m],
            line_element = -(1.0 - 2.0*m/r) * dt.powi(2) + dr.powi(2) / (1.0 - 2.0*m/r)
                + r.powi(2) * (dtheta.powi(2) + theta.sin().powi(2) * dphi.powi(2));
        }");
    let metric = &file.metrics[0];
    assert_eq!(metric.items.len(), 1);
    let Some(Item::LineElement { value, span }) = metric.items.first() else {
        panic!("expected a line element");
    };
    assert_eq!((span.start().line, span.start().column + 1), (5, 13));
    let mut differentials = Vec::new();
    collect_differentials(value, &mut differentials);
    differentials.sort_unstable();
    differentials.dedup();
    assert_eq!(differentials, [0, 1, 2, 3]);
    assert_eq!(metric.line_element(), Some(value));
    assert_eq!(metric.components(Tensor::Metric).count(), 0);
}

fn collect_differentials(e: &Expr, out: &mut Vec<usize>) {
    match e {
        Expr::Var {
            kind: VarKind::Differential(k),
            ..
        } => out.push(*k),
        Expr::Neg { arg, .. } => collect_differentials(arg, out),
        Expr::Binary { lhs, rhs, .. } => {
            collect_differentials(lhs, out);
            collect_differentials(rhs, out);
        }
        Expr::Call { args, .. } => args.iter().for_each(|a| collect_differentials(a, out)),
        _ => {}
    }
}

#[test]
fn a_name_in_scope_shadows_a_differential() {
    // `dr` is a coordinate here, so in the line element it is that coordinate, not d(r).
    let file = ok("struct M { coords: [r, dr], line_element = dr * r; }");
    let value = file.metrics[0].line_element().expect("line element");
    let Expr::Binary { lhs, .. } = value else {
        panic!("expected a product");
    };
    assert!(matches!(
        **lhs,
        Expr::Var {
            kind: VarKind::Coordinate(1),
            ..
        }
    ));
}

/// The single component's value in a one-line metric `g[x, x] = EXPR`.
fn value_of(expr: &str) -> Expr {
    let file = ok(&format!(
        "struct M {{ coords: [x, y], params: [m], g[x, x] = {expr}; }}"
    ));
    let metric = &file.metrics[0];
    let (_, _, value) = metric
        .components(Tensor::Metric)
        .next()
        .expect("one component");
    value.clone()
}

fn number_of(expr: &str) -> BigRational {
    match value_of(expr) {
        Expr::Number { value, .. } => value,
        other => panic!("{expr}: expected a number, got {other:?}"),
    }
}

#[test]
fn decimal_literals_are_exact() {
    let cases: &[(&str, BigRational)] = &[
        ("0.1", ratio(1, 10)),
        ("1.5707963", ratio(15707963, 10000000)),
        ("2.0", ratio(2, 1)),
        ("2", ratio(2, 1)),
        ("1e-3", ratio(1, 1000)),
        ("2.5E+3", ratio(2500, 1)),
        ("1_000.5", ratio(2001, 2)),
        ("2.0_f64", ratio(2, 1)),
        ("2f64", ratio(2, 1)),
        ("0.25f32", ratio(1, 4)),
        ("0x10", ratio(16, 1)),
        ("1.", ratio(1, 1)),
        ("0.000", ratio(0, 1)),
        ("12.5e-1", ratio(5, 4)),
    ];
    for (text, expected) in cases {
        assert_eq!(&number_of(text), expected, "literal {text}");
    }
    // A value no f64 holds exactly keeps all its digits.
    let long = number_of("0.12345678901234567890123456789");
    assert_eq!(long.denom(), &num_traits::pow(BigInt::from(10), 29));
}

#[test]
fn negative_literals_stay_negations_except_powi_exponents() {
    assert!(matches!(value_of("-2"), Expr::Neg { .. }));
    let Expr::Call {
        func: Func::Powi,
        args,
        ..
    } = value_of("x.powi(-2)")
    else {
        panic!("expected powi");
    };
    assert_eq!(args[1].as_integer(), Some(-2));
    let Expr::Call {
        func: Func::Powi,
        args,
        ..
    } = value_of("powi(x, -3)")
    else {
        panic!("expected powi");
    };
    assert_eq!(args[1].as_integer(), Some(-3));
}

#[test]
fn function_and_method_forms_agree() {
    let pairs = [
        ("x.sin()", "sin(x)"),
        ("x.sqrt()", "f64::sqrt(x)"),
        ("(x + m).ln()", "ln(x + m)"),
        ("x.powi(3)", "powi(x, 3)"),
        ("x.powf(m)", "powf(x, m)"),
        ("x.atan().tanh()", "tanh(atan(x))"),
    ];
    for (method, function) in pairs {
        assert_eq!(
            value_of(method),
            value_of(function),
            "{method} vs {function}"
        );
    }
    for func in Func::ALL {
        let source = match func.arity() {
            1 => format!("x.{}()", func.name()),
            _ => format!("x.{}(2)", func.name()),
        };
        assert!(
            matches!(value_of(&source), Expr::Call { func: f, .. } if f == func),
            "{source}"
        );
    }
}

#[test]
fn constants_by_name_and_by_path() {
    for (text, constant) in [
        ("PI", Constant::Pi),
        ("E", Constant::E),
        ("std::f64::consts::PI", Constant::Pi),
        ("core::f64::consts::E", Constant::E),
        ("f64::consts::PI", Constant::Pi),
        ("::std::f64::consts::PI", Constant::Pi),
    ] {
        assert!(
            matches!(value_of(text), Expr::Var { kind: VarKind::Constant(c), .. } if c == constant),
            "{text}"
        );
    }
}

#[test]
fn precedence_and_associativity_follow_rust() {
    let cases = [
        ("x - y - m", "x - y - m"),
        ("x - (y - m)", "x - (y - m)"),
        ("x / y / m", "x / y / m"),
        ("x / (y * m)", "x / (y * m)"),
        ("x + y * m", "x + y * m"),
        ("(x + y) * m", "(x + y) * m"),
        ("-x.powi(2)", "-x.powi(2)"),
        ("(-x).powi(2)", "(-x).powi(2)"),
        ("-(x * y)", "-(x * y)"),
        ("2 * -x", "2 * -x"),
        ("((x))", "x"),
        ("0.5 * x", "1/2 * x"),
        ("x / 0.5", "x / (1/2)"),
    ];
    for (input, shown) in cases {
        assert_eq!(value_of(input).to_string(), shown, "{input}");
    }
    // Left associativity, checked on the tree itself.
    let Expr::Binary {
        op: BinaryOp::Sub,
        lhs,
        rhs,
        ..
    } = value_of("x - y - m")
    else {
        panic!("expected a subtraction");
    };
    assert!(matches!(
        *lhs,
        Expr::Binary {
            op: BinaryOp::Sub,
            ..
        }
    ));
    assert!(matches!(
        *rhs,
        Expr::Var {
            kind: VarKind::Parameter(0),
            ..
        }
    ));
}

#[test]
fn multiple_structs_in_one_file() {
    let file = ok("
        /// Minkowski space.
        pub struct Minkowski { coords: [t, x, y, z], g[t, t] = -1; g[x, x] = 1; g[y, y] = 1; g[z, z] = 1; }
        struct Sphere {
            coords: [theta, phi],
            params: [radius],
            g[0, 0] = radius.powi(2);
            g[1, 1] = (radius * theta.sin()).powi(2);
        }
    ");
    let names: Vec<String> = file.metrics.iter().map(|m| m.name.to_string()).collect();
    assert_eq!(names, ["Minkowski", "Sphere"]);
    assert_eq!(file.metric("Minkowski").map(|m| m.dim()), Some(4));
    let sphere = file.metric("Sphere").expect("Sphere is declared");
    assert!(matches!(sphere.vis, syn::Visibility::Inherited));
    assert!(sphere.docs.is_empty());
    let indices: Vec<(usize, usize)> = sphere
        .components(Tensor::Metric)
        .map(|(i, j, _)| (i, j))
        .collect();
    assert_eq!(indices, [(0, 0), (1, 1)]);
    assert!(file.metric("Kerr").is_none());
}

#[test]
fn docs_are_trimmed_and_other_attributes_pass_through() {
    let file = ok("
        ///   A test metric.
        ///
        /// With two paragraphs.
        #[derive(Clone)]
        /** Block doc
            on two lines. */
        pub(crate) struct M {
            coords: [x],
            /// Doc comments inside the body are allowed and ignored.
            g[x, x] = 1;
        }
    ");
    let metric = &file.metrics[0];
    assert_eq!(
        metric.docs,
        [
            "A test metric.",
            "",
            "With two paragraphs.",
            "Block doc",
            "on two lines."
        ]
    );
    assert_eq!(metric.attrs.len(), 1);
    assert!(metric.attrs[0].path().is_ident("derive"));
    assert!(matches!(metric.vis, syn::Visibility::Restricted(_)));
}

#[test]
fn invariants_use_velocity_or_momentum() {
    let file = ok("
        struct M {
            coords: [t, r, theta, phi],
            params: [m],
            g[t, t] = -(1 - 2 * m / r);
            g[r, r] = 1 / (1 - 2 * m / r);
            g[theta, theta] = r.powi(2);
            g[phi, phi] = (r * theta.sin()).powi(2);
            invariant energy = (1 - 2 * m / r) * u[t];
            invariant angular = p[3];
        }
    ");
    let invariants: Vec<(String, String)> = file.metrics[0]
        .invariants()
        .map(|(name, value)| (name.to_string(), value.to_string()))
        .collect();
    assert_eq!(
        invariants,
        [
            ("energy".to_string(), "(1 - 2 * m / r) * u[0]".to_string()),
            ("angular".to_string(), "p[3]".to_string()),
        ]
    );
}

#[test]
fn inverse_components_and_options() {
    let file = ok("
        struct M {
            coords: [t, x],
            options: [curvature],
            g[t, t] = -1;
            g[x, x] = 1;
            ginv[t, t] = -1;
            ginv[1, 1] = 1;
        }
    ");
    let metric = &file.metrics[0];
    assert!(metric.has_option("curvature"));
    let inverse: Vec<(usize, usize)> = metric
        .components(Tensor::InverseMetric)
        .map(|(i, j, _)| (i, j))
        .collect();
    assert_eq!(inverse, [(0, 0), (1, 1)]);
}

#[test]
fn an_identical_repeated_component_is_kept_once() {
    let file = ok("
        struct M {
            coords: [t, phi],
            g[t, t] = -1;
            g[t, phi] = 0.5 * phi.sin();
            g[phi, t] = 0.5 * phi.sin();
            g[phi, phi] = 1;
        }
    ");
    let components: Vec<(usize, usize)> = file.metrics[0]
        .components(Tensor::Metric)
        .map(|(i, j, _)| (i, j))
        .collect();
    assert_eq!(components, [(0, 0), (0, 1), (1, 1)]);
}

#[test]
fn all_errors_are_collected_in_source_order() {
    let errors = err("
        struct A {
            coords: [t, r],
            g[t, t] = q;
            g[r, r] = r.floor();
            g[t, x] = 1;
        }
        struct B {
            coords: [x],
            g[x, x] = 1 +;
            g[x, x] = *;
        }
        struct C { coords: [y], g[y, y] = dy; }
    ");
    let found: Vec<(usize, String)> = errors
        .iter()
        .map(|d| (d.line_col().0, d.message.clone()))
        .collect();
    let lines: Vec<usize> = found.iter().map(|(line, _)| *line).collect();
    assert_eq!(lines, [4, 5, 6, 10, 11, 13], "{found:?}");
    assert!(found[0].1.contains("unknown identifier `q`"));
    assert!(found[1].1.contains("unsupported function `floor`"));
    assert!(found[2].1.contains("unknown coordinate `x`"));
    assert!(found[3].1.contains("expected an expression"));
    assert!(found[4].1.contains("for powers"));
    assert!(found[5].1.contains("differential `dy`"));
}

#[test]
fn a_broken_component_line_does_not_hide_other_errors() {
    let errors = err("struct M {\n coords: [t, r],\n g[t, t] = 1 +;\n g[r, r] = q;\n}");
    let found: Vec<((usize, usize), &str)> = errors
        .iter()
        .map(|d| (d.line_col(), d.message.as_str()))
        .collect();
    assert_eq!(found.len(), 2, "{found:?}");
    assert_eq!(found[0].0, (3, 15));
    assert!(found[0].1.contains("expected an expression"));
    assert_eq!(found[1].0, (4, 12));
    assert!(found[1].1.contains("unknown identifier `q`"));
}

#[test]
fn a_broken_declaration_does_not_cause_follow_on_errors() {
    // `k` is never declared because its line is unreadable; uses of it are not reported.
    let errors = err("struct M {\n coords: [t],\n let k = 1 +;\n g[t, t] = k;\n}");
    let found: Vec<((usize, usize), &str)> = errors
        .iter()
        .map(|d| (d.line_col(), d.message.as_str()))
        .collect();
    assert_eq!(found.len(), 1, "{found:?}");
    assert_eq!(found[0].0, (3, 13));
}

#[test]
fn every_mistake_in_one_expression_is_reported() {
    let errors = err("struct M { coords: [x], g[x, x] = a + b.floor() * c; }");
    let messages: Vec<&str> = errors.iter().map(|d| d.message.as_str()).collect();
    assert_eq!(messages.len(), 4, "{messages:?}");
    assert!(messages[0].contains("unknown identifier `a`"));
    assert!(messages[1].contains("unknown identifier `b`"));
    assert!(messages[2].contains("unsupported function `floor`"));
    assert!(messages[3].contains("unknown identifier `c`"));
}

#[test]
fn diagnostics_render_and_convert() {
    let errors = err("struct M {\n  coords: [x],\n  g[x, x] = y + z;\n}");
    assert_eq!(errors.len(), 2);
    assert_eq!(
        errors.render("metric.gk"),
        "metric.gk:3:13: unknown identifier `y`; coordinates are x\n\
         metric.gk:3:17: unknown identifier `z`; coordinates are x"
    );
    assert_eq!(errors.first().line_col(), (3, 13));
    let tokens = errors.to_compile_error().to_string();
    assert_eq!(tokens.matches("compile_error").count(), 2, "{tokens}");
    assert!(tokens.contains("unknown identifier `z`"));
    let single = super::Diagnostic::new(proc_macro2::Span::call_site(), "custom check failed");
    assert_eq!(single.render("x.gk"), "x.gk:1:1: custom check failed");
    assert_eq!(Diagnostics::from(single).len(), 1);
}

#[test]
fn nesting_up_to_the_limit_parses_and_beyond_it_fails() {
    let depth = MAX_NESTING - 2;
    let parens = format!("{}x{}", "(".repeat(depth), ")".repeat(depth));
    assert_eq!(value_of(&parens).to_string(), "x");
    let minus = format!("{}x", "-".repeat(depth));
    assert_eq!(value_of(&minus).height(), depth + 1);
    let sum = vec!["x"; MAX_EXPR_HEIGHT - 1].join(" + ");
    assert_eq!(value_of(&sum).height(), MAX_EXPR_HEIGHT - 1);

    let deep = 10_000;
    for (expr, message) in [
        (
            format!("{}x{}", "(".repeat(deep), ")".repeat(deep)),
            "brackets nested too deeply",
        ),
        (format!("{}x", "-".repeat(deep)), "expression too large"),
        (
            format!("{}x", "- (".repeat(MAX_NESTING) + &")".repeat(MAX_NESTING)),
            "nested too deeply",
        ),
        (
            vec!["x"; MAX_EXPR_HEIGHT + 5].join(" * "),
            "expression too large",
        ),
        (
            format!("x{}", ".sin()".repeat(deep)),
            "expression too large",
        ),
    ] {
        let source = format!("struct M {{ coords: [x], g[x, x] = {expr}; }}");
        let errors = err(&source);
        assert!(
            errors.iter().any(|d| d.message.contains(message)),
            "wanted `{message}`, got {}",
            errors.render("deep.gk")
        );
    }
    // Deep brackets outside any expression are caught before syn sees them.
    let errors = err(&format!("{}{}", "[".repeat(deep), "]".repeat(deep)));
    assert!(errors
        .first()
        .message
        .contains("brackets nested too deeply"));
}

#[test]
fn exact_decimal_reads_every_form() {
    use super::syntax::exact_decimal;
    assert_eq!(exact_decimal("0.1"), Ok(ratio(1, 10)));
    assert_eq!(exact_decimal("-2.50"), Ok(ratio(-5, 2)));
    assert_eq!(exact_decimal("3e2"), Ok(ratio(300, 1)));
    assert_eq!(exact_decimal("3E-2"), Ok(ratio(3, 100)));
    assert_eq!(exact_decimal("7."), Ok(ratio(7, 1)));
    assert!(exact_decimal("").is_err());
    assert!(exact_decimal("1e").is_err());
    assert!(exact_decimal("1e+").is_err());
    assert!(exact_decimal("1.2.3").is_err());
    assert!(exact_decimal("1e99999999999999999999").is_err());
    assert!(exact_decimal(&"9".repeat(5000)).is_err());
}

/// Pieces of declarations, valid and not, for the token-soup property test.
const SOUP: &[&str] = &[
    "struct",
    "pub",
    "M",
    "coords",
    "params",
    "options",
    "curvature",
    "let",
    "g",
    "ginv",
    "line_element",
    "invariant",
    "t",
    "r",
    "x",
    "dt",
    "dr",
    "u",
    "p",
    "PI",
    "E",
    "m",
    "sin",
    "powi",
    "powf",
    "sqrt",
    "floor",
    "std",
    "f64",
    "consts",
    "as",
    "fn",
    ":",
    "::",
    ";",
    ",",
    "=",
    "+",
    "-",
    "*",
    "/",
    "%",
    "^",
    ".",
    "..",
    "!",
    "#",
    "(",
    ")",
    "[",
    "]",
    "{",
    "}",
    "0",
    "1",
    "2.0",
    "0.1",
    "1e-3",
    "1e5000",
    "2f64",
    "2u8",
    "0x1F",
    "-1",
    "\"s\"",
    "'c'",
    "///",
    "//",
    "\n",
    " ",
    "`",
    "\\",
    "é",
    "\u{0}",
];

fn soup() -> impl Strategy<Value = String> {
    let piece = prop::sample::select(SOUP).prop_map(str::to_string);
    let nest = (
        1usize..400,
        prop::sample::select(&["(", "[", "{", "-", "- (", "x.sin()."][..]),
    )
        .prop_map(|(n, open)| open.repeat(n));
    prop::collection::vec(prop_oneof![8 => piece, 1 => nest], 0..60)
        .prop_map(|pieces| pieces.join(" "))
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn arbitrary_text_never_panics(text in any::<String>()) {
        let _ = parse_str(&text);
    }

    #[test]
    fn token_soup_never_panics(text in soup()) {
        let _ = parse_str(&text);
    }

    #[test]
    fn soup_inside_a_struct_never_panics(text in soup()) {
        let _ = parse_str(&format!("struct M {{ coords: [t, r], params: [m], {text} }}"));
        let _ = parse_str(&format!("struct M {{ coords: [t, r], g[t, t] = {text}; }}"));
    }

    #[test]
    fn errors_always_have_a_message_and_a_position(text in soup()) {
        if let Err(errors) = parse_str(&format!("struct M {{ coords: [t, r], {text} }}")) {
            prop_assert!(!errors.is_empty());
            for d in &errors {
                prop_assert!(!d.message.is_empty());
                prop_assert!(d.line_col().0 >= 1 && d.line_col().1 >= 1);
            }
        }
    }
}
