//! The NumPy backend: every module runs under python3 with NumPy on arrays of points, the
//! shapes follow the documented broadcasting, and the values match the Rust kernels to 1e-13.

use geokern_symbolic::backend::cfamily::{kernel_kinds, KernelIo};
use geokern_symbolic::backend::python;
use serde_json::{json, Value};

use crate::common::{assert_success, cases, check_results, run_tool, scratch};

/// Reads `cases.json`, calls every kernel on all samples at once (an (S, N) array), checks
/// shapes, broadcasting over a further axis and a single point against that call, and prints
/// the values as `KEY SAMPLE KERNEL values...`.
const SCRIPT: &str = r#"
import importlib.util
import json
import sys

try:
    import numpy as np
except ImportError:
    print("numpy cannot be imported", file=sys.stderr)
    sys.exit(3)

with open("cases.json") as f:
    cases = json.load(f)
for case in cases:
    spec = importlib.util.spec_from_file_location(case["key"], case["key"] + ".py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    arrays = {name: np.array(case[name], dtype=np.float64) for name in ("x", "u", "p", "v")}
    arrays["params"] = np.array(case["params"], dtype=np.float64)
    count = len(case["x"])
    for kernel in case["kernels"]:
        f = getattr(module, case["prefix"] + "_" + kernel["name"])
        args = [arrays[a] for a in kernel["inputs"]]
        out = f(*args)
        outs = out if isinstance(out, tuple) else (out,)
        assert len(outs) == len(kernel["shapes"]), kernel["name"]
        for o, shape in zip(outs, kernel["shapes"]):
            assert o.shape == (count, *shape), (kernel["name"], o.shape, shape)
        # A leading axis of two copies, with parameters shared: both halves agree.
        stacked = [a if name == "params" else np.stack([a, a]) for name, a in zip(kernel["inputs"], args)]
        again = f(*stacked)
        again = again if isinstance(again, tuple) else (again,)
        for o, a in zip(outs, again):
            assert a.shape == (2, *o.shape), (kernel["name"], a.shape)
            assert np.array_equal(a[0], o, equal_nan=True), kernel["name"]
            assert np.array_equal(a[1], o, equal_nan=True), kernel["name"]
        # One point, as a plain vector.
        single = f(*[a if name == "params" else a[0] for name, a in zip(kernel["inputs"], args)])
        single = single if isinstance(single, tuple) else (single,)
        for o, s in zip(outs, single):
            assert s.shape == o.shape[1:], (kernel["name"], s.shape)
            assert np.array_equal(s, o[0], equal_nan=True), kernel["name"]
        flat = np.concatenate([o.reshape(count, -1) for o in outs], axis=1)
        for k in range(count):
            values = " ".join(repr(float(v)) for v in flat[k])
            print(case["key"], k, kernel["name"], values)
"#;

#[test]
fn numpy_modules_run_vectorised_and_agree_with_the_rust_kernels() {
    let cases = cases();
    let dir = scratch("python");
    let mut described = Vec::new();
    for case in cases {
        std::fs::write(
            dir.join(format!("{}.py", case.key)),
            python::emit(&case.kernels),
        )
        .expect("write module");
        let kernels: Vec<Value> = kernel_kinds(&case.kernels)
            .into_iter()
            .map(|kind| {
                let io = KernelIo::new(&case.kernels, kind);
                let shape = case.kernels.program(kind).shape.clone();
                // Hamilton's equations come back as two vectors.
                let shapes: Vec<Vec<usize>> = if io.outputs.len() > 1 {
                    io.outputs.iter().map(|o| vec![o.len]).collect()
                } else {
                    vec![shape]
                };
                let inputs: Vec<&str> = io.inputs.iter().map(|(a, _)| a.name()).collect();
                json!({ "name": kind.name(), "inputs": inputs, "shapes": shapes })
            })
            .collect();
        let column = |f: fn(&crate::common::Sample) -> &Vec<f64>| -> Vec<Vec<f64>> {
            case.samples.iter().map(|s| f(s).clone()).collect()
        };
        described.push(json!({
            "key": case.key,
            "prefix": case.prefix(),
            "params": case.params,
            "x": column(|s| &s.x),
            "u": column(|s| &s.u),
            "p": column(|s| &s.p),
            "v": column(|s| &s.v),
            "kernels": kernels,
        }));
    }
    std::fs::write(
        dir.join("cases.json"),
        serde_json::to_string(&described).expect("json"),
    )
    .expect("write cases");
    std::fs::write(dir.join("check.py"), SCRIPT).expect("write script");
    let ran = run_tool(
        "python3",
        &["check.py"],
        &dir,
        "the NumPy backend tests need python3 (scripts/setup.sh installs it)",
    );
    assert_ne!(
        ran.status.code(),
        Some(3),
        "python3 cannot import numpy; run scripts/setup.sh, which installs it"
    );
    assert_success("the NumPy modules", &ran);
    check_results(cases, &String::from_utf8_lossy(&ran.stdout), 1e-13, "NumPy");
}
