//! Helpers shared by the end-to-end tests: running the built `geokern` binary.

#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::sync::atomic::{AtomicUsize, Ordering};

use serde_json::Value;

/// The workspace root, where `examples/` lives.
pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

/// The path of an example metric file, relative to the workspace root.
pub fn example(stem: &str) -> String {
    format!("examples/metrics/{stem}.gk")
}

/// What one run of the binary did.
pub struct Run {
    /// Exit status (None if killed by a signal).
    pub code: Option<i32>,
    /// Everything printed on stdout.
    pub stdout: String,
    /// Everything printed on stderr.
    pub stderr: String,
}

impl Run {
    /// Stdout parsed as one JSON value; fails the test if it is not exactly that.
    pub fn json(&self) -> Value {
        assert_eq!(self.code, Some(0), "stderr: {}", self.stderr);
        assert!(
            self.stderr.is_empty(),
            "--json must keep stderr empty: {}",
            self.stderr
        );
        serde_json::from_str(&self.stdout)
            .unwrap_or_else(|e| panic!("stdout is not JSON ({e}): {}", self.stdout))
    }

    /// Asserts a failure with exactly one line on stderr, returning that line.
    pub fn one_error_line(&self) -> String {
        assert_ne!(
            self.code,
            Some(0),
            "expected failure; stdout: {}",
            self.stdout
        );
        assert!(self.code.is_some(), "killed by a signal: {}", self.stderr);
        assert!(
            self.stdout.is_empty(),
            "nothing on stdout on failure: {}",
            self.stdout
        );
        let lines: Vec<&str> = self.stderr.lines().collect();
        assert_eq!(lines.len(), 1, "one line on stderr, got: {:?}", self.stderr);
        assert!(!self.stderr.contains("panicked"), "{}", self.stderr);
        lines[0].to_string()
    }
}

fn finish(output: Output) -> Run {
    Run {
        code: output.status.code(),
        stdout: String::from_utf8_lossy(&output.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&output.stderr).into_owned(),
    }
}

/// Runs `geokern ARGS` in `dir` with no standard input.
pub fn geokern_in(dir: &Path, args: &[&str]) -> Run {
    let output = Command::new(env!("CARGO_BIN_EXE_geokern"))
        .args(args)
        .current_dir(dir)
        .stdin(Stdio::null())
        .output()
        .expect("the geokern binary runs");
    finish(output)
}

/// Runs `geokern ARGS` in the workspace root.
pub fn geokern(args: &[&str]) -> Run {
    geokern_in(&root(), args)
}

/// Runs `geokern ARGS` with `input` on standard input.
pub fn geokern_stdin(args: &[&str], input: &[u8]) -> Run {
    use std::io::Write;
    let mut child = Command::new(env!("CARGO_BIN_EXE_geokern"))
        .args(args)
        .current_dir(root())
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the geokern binary starts");
    if let Some(mut stdin) = child.stdin.take() {
        // The tool may stop reading early (it exits on the first error); that is fine.
        let _ = stdin.write_all(input);
    }
    finish(
        child
            .wait_with_output()
            .expect("the geokern binary finishes"),
    )
}

/// A fresh empty directory for one test's files.
pub fn scratch_dir(tag: &str) -> PathBuf {
    static COUNTER: AtomicUsize = AtomicUsize::new(0);
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    let dir = std::env::temp_dir().join(format!("geokern-cli-{tag}-{}-{n}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temporary directory");
    dir
}

/// The numbers of a JSON value, flattened in order.
pub fn floats(v: &Value) -> Vec<f64> {
    match v {
        Value::Array(items) => items.iter().flat_map(floats).collect(),
        Value::Number(n) => vec![n.as_f64().expect("number")],
        other => panic!("expected numbers, found {other}"),
    }
}

/// A vector as the command line takes it, every digit kept (`{:?}` round-trips an f64).
pub fn arg_vector(values: &[f64]) -> String {
    values
        .iter()
        .map(|v| format!("{v:?}"))
        .collect::<Vec<_>>()
        .join(",")
}
