//! The curvature kernels against independent values: `tests/data/sympy_reference.json` is
//! written by `scripts/sympy_reference.py`, which derives every metric a second time with
//! SymPy (core only) and evaluates the Riemann tensor, the Ricci tensor, the Ricci scalar and
//! the Kretschmann scalar with mpmath at 50 digits. Each example declaration is compiled with
//! `options: [curvature]` added to its text, and its curvature programs, run in f64, must agree
//! with those values to 1e-10 relative to the size of each array.

use std::collections::BTreeMap;
use std::time::Instant;

use geokern_symbolic::model::compile;
use geokern_symbolic::parse::parse_str;
use geokern_symbolic::program::{InputArray, KernelKind, KernelProgram};

const TOL: f64 = 1e-10;

/// The example metrics the reference data covers, by file stem.
const STEMS: [&str; 9] = [
    "ellis_wormhole",
    "flrw",
    "kerr_bl",
    "kerr_schild",
    "kerr_schild_ginv",
    "schwarzschild",
    "sphere",
    "tangherlini",
    "twisted_shear",
];

/// Just enough JSON for the reference file: objects, arrays, strings without escapes other
/// than `\"` and `\\`, numbers, and the three literals.
#[derive(Debug)]
enum Json {
    Object(BTreeMap<String, Json>),
    Array(Vec<Json>),
    Number(f64),
    Text(String),
    Literal,
}

impl Json {
    fn parse(text: &str) -> Json {
        let mut reader = Reader {
            bytes: text.as_bytes(),
            pos: 0,
        };
        let value = reader.value();
        reader.skip_space();
        assert_eq!(reader.pos, text.len(), "trailing text after the JSON value");
        value
    }

    fn get(&self, key: &str) -> &Json {
        match self {
            Json::Object(map) => map
                .get(key)
                .unwrap_or_else(|| panic!("no key `{key}` in the reference data")),
            other => panic!("expected an object holding `{key}`, found {other:?}"),
        }
    }

    fn keys(&self) -> Vec<&str> {
        match self {
            Json::Object(map) => map.keys().map(String::as_str).collect(),
            other => panic!("expected an object, found {other:?}"),
        }
    }

    fn items(&self) -> &[Json] {
        match self {
            Json::Array(items) => items,
            other => panic!("expected an array, found {other:?}"),
        }
    }

    /// Every number in the value, flattened row-major.
    fn floats(&self) -> Vec<f64> {
        match self {
            Json::Number(v) => vec![*v],
            Json::Array(items) => items.iter().flat_map(Json::floats).collect(),
            other => panic!("expected numbers, found {other:?}"),
        }
    }
}

struct Reader<'a> {
    bytes: &'a [u8],
    pos: usize,
}

impl Reader<'_> {
    fn skip_space(&mut self) {
        while self.pos < self.bytes.len() && self.bytes[self.pos].is_ascii_whitespace() {
            self.pos += 1;
        }
    }

    fn peek(&mut self) -> u8 {
        self.skip_space();
        *self
            .bytes
            .get(self.pos)
            .unwrap_or_else(|| panic!("JSON ends early at byte {}", self.pos))
    }

    fn expect(&mut self, byte: u8) {
        let got = self.peek();
        assert_eq!(
            got as char, byte as char,
            "unexpected JSON at byte {}",
            self.pos
        );
        self.pos += 1;
    }

    fn value(&mut self) -> Json {
        match self.peek() {
            b'{' => {
                self.pos += 1;
                let mut map = BTreeMap::new();
                if self.peek() == b'}' {
                    self.pos += 1;
                    return Json::Object(map);
                }
                loop {
                    let key = self.string();
                    self.expect(b':');
                    let value = self.value();
                    assert!(map.insert(key, value).is_none(), "duplicate JSON key");
                    match self.peek() {
                        b',' => self.pos += 1,
                        _ => break,
                    }
                }
                self.expect(b'}');
                Json::Object(map)
            }
            b'[' => {
                self.pos += 1;
                let mut items = Vec::new();
                if self.peek() == b']' {
                    self.pos += 1;
                    return Json::Array(items);
                }
                loop {
                    items.push(self.value());
                    match self.peek() {
                        b',' => self.pos += 1,
                        _ => break,
                    }
                }
                self.expect(b']');
                Json::Array(items)
            }
            b'"' => Json::Text(self.string()),
            b't' | b'f' | b'n' => {
                let rest = &self.bytes[self.pos..];
                let word = [&b"true"[..], b"false", b"null"]
                    .into_iter()
                    .find(|w| rest.starts_with(w))
                    .unwrap_or_else(|| panic!("bad JSON literal at byte {}", self.pos));
                self.pos += word.len();
                Json::Literal
            }
            _ => {
                let start = self.pos;
                while self.pos < self.bytes.len()
                    && matches!(
                        self.bytes[self.pos],
                        b'0'..=b'9' | b'-' | b'+' | b'.' | b'e' | b'E'
                    )
                {
                    self.pos += 1;
                }
                let token = std::str::from_utf8(&self.bytes[start..self.pos])
                    .expect("number tokens are ASCII");
                let v = token
                    .parse::<f64>()
                    .unwrap_or_else(|e| panic!("bad JSON number {token:?} at byte {start}: {e}"));
                Json::Number(v)
            }
        }
    }

    fn string(&mut self) -> String {
        self.expect(b'"');
        let mut out = Vec::new();
        loop {
            let b = *self.bytes.get(self.pos).expect("unterminated JSON string");
            self.pos += 1;
            match b {
                b'"' => break,
                b'\\' => {
                    let esc = *self.bytes.get(self.pos).expect("unterminated JSON escape");
                    self.pos += 1;
                    assert!(
                        matches!(esc, b'"' | b'\\' | b'/'),
                        "JSON escape \\{} is not needed by the reference file",
                        esc as char
                    );
                    out.push(esc);
                }
                _ => out.push(b),
            }
        }
        String::from_utf8(out).expect("JSON strings are UTF-8")
    }
}

fn reference() -> Json {
    let path = format!(
        "{}/../tests/data/sympy_reference.json",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).expect("reference data is readable");
    Json::parse(&text)
}

/// The example declaration with `options: [curvature],` added after its `params` line (or its
/// `coords` line when it has no parameters).
fn source_with_curvature(stem: &str) -> String {
    let path = format!(
        "{}/../examples/metrics/{stem}.gk",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).expect("example file is readable");
    let lines: Vec<&str> = text.lines().collect();
    let is_list = |line: &str, head: &str| {
        let t = line.trim();
        t.starts_with(head) && t.ends_with("],")
    };
    let at = lines
        .iter()
        .position(|l| is_list(l, "params:"))
        .or_else(|| lines.iter().position(|l| is_list(l, "coords:")))
        .unwrap_or_else(|| panic!("{stem}.gk has neither a params nor a coords line"));
    let indent: String = lines[at]
        .chars()
        .take_while(|c| c.is_whitespace())
        .collect();
    let mut out = String::new();
    for (i, line) in lines.iter().enumerate() {
        out.push_str(line);
        out.push('\n');
        if i == at {
            out.push_str(&indent);
            out.push_str("options: [curvature],\n");
        }
    }
    out
}

fn largest(v: &[f64]) -> f64 {
    v.iter().fold(0.0_f64, |m, x| m.max(x.abs()))
}

/// Compares flattened arrays relative to `scale`, so that exact zeros and tiny entries are
/// held to the size of the array.
fn assert_close(what: &str, got: &[f64], want: &[f64], scale: f64) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    assert!(
        scale.is_finite() && scale > 0.0,
        "{what}: no scale to compare against"
    );
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        let err = (g - w).abs() / scale;
        assert!(
            err <= TOL,
            "{what}[{i}]: got {g:e}, want {w:e} (relative error {err:e})"
        );
    }
}

fn run(program: &KernelProgram, params: &[f64], x: &[f64]) -> Vec<f64> {
    let mut out = Vec::new();
    program.eval_f64(
        &|arr| match arr {
            InputArray::Params => params.to_vec(),
            InputArray::X => x.to_vec(),
            _ => vec![],
        },
        &mut out,
    );
    out
}

fn check(stem: &str) {
    let data = reference();
    let entry = data.get("metrics").get(stem);
    let params = entry.get("params").floats();
    let source = source_with_curvature(stem);
    let file = parse_str(&source)
        .unwrap_or_else(|e| panic!("{stem} with curvature does not parse: {e:?}"));
    let decl = &file.metrics[0];
    let struct_name = match entry.get("struct") {
        Json::Text(s) => s.as_str(),
        other => panic!("{stem}: struct name is {other:?}"),
    };
    assert_eq!(
        decl.name, struct_name,
        "{stem}: the example declares another metric"
    );
    let start = Instant::now();
    let ks = compile(decl).unwrap_or_else(|e| panic!("{stem} does not compile: {e:?}"));
    eprintln!("{stem}: derived with curvature in {:?}", start.elapsed());
    let program = |kind: KernelKind| {
        ks.try_program(kind)
            .unwrap_or_else(|| panic!("{stem}: no {} kernel", kind.name()))
    };
    let (riemann, ricci, ricci_scalar, kretschmann) = (
        program(KernelKind::Riemann),
        program(KernelKind::Ricci),
        program(KernelKind::RicciScalar),
        program(KernelKind::Kretschmann),
    );
    let samples = entry.get("samples").items();
    assert!(!samples.is_empty(), "{stem}: no samples");
    for (k, s) in samples.iter().enumerate() {
        let x = s.get("x").floats();
        let tag = |what: &str| format!("{stem} sample {k} {what}");
        let want_riemann = s.get("riemann").floats();
        let want_ricci = s.get("ricci").floats();
        let want_scalar = s.get("ricci_scalar").floats();
        let want_k = s.get("kretschmann").floats();
        let s_riemann = largest(&want_riemann);
        assert_close(
            &tag("riemann"),
            &run(riemann, &params, &x),
            &want_riemann,
            s_riemann,
        );
        // Ricci entries are sums of Riemann entries, so their rounding is on the Riemann
        // scale; for vacuum metrics the reference Ricci tensor is exactly zero.
        assert_close(
            &tag("ricci"),
            &run(ricci, &params, &x),
            &want_ricci,
            largest(&want_ricci).max(s_riemann),
        );
        // The Ricci scalar contracts the Ricci tensor with g^ab.
        let s_inverse = largest(&s.get("inverse").floats());
        assert_close(
            &tag("ricci_scalar"),
            &run(ricci_scalar, &params, &x),
            &want_scalar,
            largest(&want_scalar).max(s_riemann * s_inverse),
        );
        assert_close(
            &tag("kretschmann"),
            &run(kretschmann, &params, &x),
            &want_k,
            largest(&want_k),
        );
    }
}

#[test]
fn every_reference_metric_is_checked() {
    let data = reference();
    let mut stems: Vec<&str> = data.get("metrics").keys();
    stems.sort_unstable();
    assert_eq!(
        stems, STEMS,
        "the reference metrics and the tests below differ"
    );
}

#[test]
fn ellis_wormhole() {
    check("ellis_wormhole");
}

#[test]
fn flrw_power_law() {
    check("flrw");
}

#[test]
fn kerr_boyer_lindquist() {
    check("kerr_bl");
}

#[test]
fn kerr_schild_dense() {
    check("kerr_schild");
}

#[test]
fn kerr_schild_with_declared_inverse() {
    check("kerr_schild_ginv");
}

#[test]
fn schwarzschild() {
    check("schwarzschild");
}

#[test]
fn round_sphere() {
    check("sphere");
}

#[test]
fn tangherlini_five_dimensions() {
    check("tangherlini");
}

#[test]
fn twisted_shear_riemannian() {
    check("twisted_shear");
}
