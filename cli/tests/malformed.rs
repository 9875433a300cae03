//! Malformed metric files: each gives exit status 1 and `FILE:LINE:COL: message` lines on
//! stderr, the first pointing at the offending token, and nothing on stdout.

mod common;

use common::{geokern_in, scratch_dir};

/// `(what, file text, expected line:col, a fragment of the message)`.
const CASES: &[(&str, &str, &str, &str)] = &[
    (
        "unknown identifier",
        "struct A {\n    coords: [x, y],\n    g[x, x] = z;\n}\n",
        "3:15",
        "unknown identifier `z`",
    ),
    (
        "index out of range",
        "struct A {\n    coords: [x, y],\n    g[x, w] = 1;\n}\n",
        "3:10",
        "unknown coordinate `w`",
    ),
    (
        "name used twice",
        "struct A {\n    coords: [x, x],\n    g[x, x] = 1;\n}\n",
        "2:17",
        "the name `x` is already used",
    ),
    (
        "parameter named like a coordinate",
        "struct A {\n    coords: [x],\n    params: [x],\n    g[x, x] = 1;\n}\n",
        "3:14",
        "the name `x` is already used",
    ),
    (
        "non-quadratic line element",
        "struct A {\n    coords: [t, r],\n    line_element = dt * dt * dr + dr.powi(2);\n}\n",
        "3:5",
        "not quadratic in the differentials",
    ),
    (
        "unsupported function",
        "struct A {\n    coords: [x],\n    g[x, x] = x.frobnicate();\n}\n",
        "3:17",
        "unsupported function `frobnicate`",
    ),
    (
        "identically zero determinant",
        "struct A {\n    coords: [x, y],\n    g[x, x] = 1;\n    g[x, y] = 1;\n    g[y, y] = 1;\n}\n",
        "1:8",
        "determinant is identically zero",
    ),
    (
        "component set twice with different values",
        "struct A {\n    coords: [x, y],\n    g[x, y] = x;\n    g[y, x] = y;\n    g[x, x] = 1;\n}\n",
        "4:6",
        "set twice with different expressions",
    ),
    (
        "division by an exact zero",
        "struct A {\n    coords: [x],\n    g[x, x] = 1 / 0;\n}\n",
        "3:15",
        "division by zero",
    ),
    (
        "missing comma",
        "struct A {\n    coords: [x, y]\n    g[x, x] = 1;\n}\n",
        "3:5",
        "expected `,`",
    ),
    (
        "stray operator",
        "struct A {\n    coords: [x],\n    g[x, x] = 1 $ 2;\n}\n",
        "3:17",
        "unsupported operator `$`",
    ),
    (
        "unbalanced bracket",
        "struct A {\n    coords: [x, y],\n    g[x, x] = (1 + x;\n}\n",
        "4:1",
        "delimiter",
    ),
    (
        "declared inverse that is not one",
        "struct A {\n    coords: [x, y],\n    ginv[x, x] = 2;\n    ginv[y, y] = 1;\n    g[x, x] = 1;\n    g[y, y] = 1;\n}\n",
        "3:9",
        "is not the inverse of g",
    ),
    (
        "metric declared twice",
        "struct A { coords: [x], g[x, x] = 1; }\nstruct A { coords: [y], g[y, y] = 1; }\n",
        "2:8",
        "declared twice",
    ),
    ("empty file", "", "1:1", "expected at least one `struct"),
];

#[test]
fn each_malformed_file_blames_its_token() {
    let dir = scratch_dir("malformed");
    for (k, (what, text, at, fragment)) in CASES.iter().enumerate() {
        let name = format!("bad{k}.gk");
        std::fs::write(dir.join(&name), text).expect("write");
        let run = geokern_in(&dir, &["check", &name]);
        assert_eq!(
            run.code,
            Some(1),
            "{what}: exit status; stderr {}",
            run.stderr
        );
        assert!(run.stdout.is_empty(), "{what}: stdout {}", run.stdout);
        assert!(!run.stderr.contains("panicked"), "{what}: {}", run.stderr);
        let first = run.stderr.lines().next().unwrap_or_default();
        let prefix = format!("{name}:{at}");
        assert!(
            first.starts_with(&prefix),
            "{what}: expected {prefix}.., got {first:?}"
        );
        assert!(
            first.contains(fragment),
            "{what}: expected {fragment:?} in {first:?}"
        );
        for line in run.stderr.lines() {
            assert!(
                is_located(line, &name),
                "{what}: every line is FILE:LINE:COL: message, got {line:?}"
            );
        }
    }
}

/// Absurd nesting is an error at the bracket that goes too deep, not a stack overflow.
#[test]
fn deep_nesting_is_refused() {
    let dir = scratch_dir("deep");
    let depth = 5000;
    let text = format!(
        "struct A {{ coords: [x], g[x, x] = {}x{}; }}",
        "(".repeat(depth),
        ")".repeat(depth)
    );
    std::fs::write(dir.join("deep.gk"), text).expect("write");
    let line = geokern_in(&dir, &["check", "deep.gk"]).one_error_line();
    assert!(line.starts_with("deep.gk:1:"), "{line}");
    assert!(line.contains("nested too deeply"), "{line}");
}

/// Several problems are all reported, one line each, in source order.
#[test]
fn every_problem_is_reported() {
    let dir = scratch_dir("several");
    let text = "struct A {\n    coords: [x],\n    g[x, x] = y;\n    g[x, x] = z;\n}\n";
    std::fs::write(dir.join("two.gk"), text).expect("write");
    let run = geokern_in(&dir, &["eval", "two.gk", "--x", "1"]);
    assert_eq!(run.code, Some(1));
    let lines: Vec<&str> = run.stderr.lines().collect();
    assert!(lines.len() >= 2, "{}", run.stderr);
    assert!(
        lines[0].starts_with("two.gk:3:15: unknown identifier `y`"),
        "{}",
        lines[0]
    );
    assert!(
        lines
            .iter()
            .any(|l| l.starts_with("two.gk:4:15: unknown identifier `z`")),
        "{}",
        run.stderr
    );
}

/// Every command reads files the same way.
#[test]
fn every_command_reports_declaration_errors() {
    let dir = scratch_dir("commands");
    std::fs::write(dir.join("bad.gk"), "struct A { coords: [x], g[x, x] = q; }").expect("write");
    let commands: &[&[&str]] = &[
        &["check", "bad.gk"],
        &["stats", "bad.gk", "--json"],
        &["eval", "bad.gk", "--x", "1"],
        &["trace", "bad.gk", "--x", "1", "--u", "1", "--lambda", "1"],
        &["emit", "bad.gk", "--lang", "rust"],
    ];
    for args in commands {
        let line = geokern_in(&dir, args).one_error_line();
        assert!(
            line.starts_with("bad.gk:1:35: unknown identifier `q`"),
            "{args:?}: {line}"
        );
    }
}

/// `NAME:LINE:COL: message` with positive numbers and a message.
fn is_located(line: &str, name: &str) -> bool {
    let Some(rest) = line.strip_prefix(name).and_then(|r| r.strip_prefix(':')) else {
        return false;
    };
    let mut parts = rest.splitn(3, ':');
    let number = |p: Option<&str>| {
        p.and_then(|s| s.parse::<usize>().ok())
            .is_some_and(|n| n > 0)
    };
    number(parts.next()) && number(parts.next()) && parts.next().is_some_and(|m| m.len() > 1)
}
