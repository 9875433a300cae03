//! The C backend: every header compiles with gcc as strict C99 with every warning an error,
//! and a driver's results match the Rust kernels to 1e-13.

use geokern_symbolic::backend::c;
use geokern_symbolic::backend::cfamily::{kernel_kinds, KernelIo};

use crate::common::{assert_success, cases, check_results, run_tool, scratch, Case};

/// Numbers as a C initializer; `{:?}` reads back exactly. An empty array gets one unread
/// entry, as C has no empty initializers.
pub fn c_array(values: &[f64]) -> String {
    if values.is_empty() {
        return "{0.0}".to_string();
    }
    let items: Vec<String> = values.iter().map(|v| format!("{v:?}")).collect();
    format!("{{{}}}", items.join(", "))
}

/// A program that calls every kernel of every case at every sample and prints the results
/// as `KEY SAMPLE KERNEL values...`.
fn driver(cases: &[Case]) -> String {
    let mut src = String::new();
    for case in cases {
        // Twice: the include guard must hold.
        src.push_str(&format!(
            "#include \"{0}.h\"\n#include \"{0}.h\"\n",
            case.key
        ));
    }
    src.push_str(
        "#include <stdio.h>\n\n\
         static void put(const char *key, int sample, const char *kernel, const double *a, int n)\n\
         {\n    int i;\n    printf(\"%s %d %s\", key, sample, kernel);\n    \
         for (i = 0; i < n; i++) {\n        printf(\" %.17g\", a[i]);\n    }\n    printf(\"\\n\");\n}\n\n\
         int main(void)\n{\n    static double out[4096];\n    double s;\n",
    );
    for case in cases {
        let prefix = case.prefix();
        for (k, sample) in case.samples.iter().enumerate() {
            src.push_str("    {\n");
            src.push_str(&format!(
                "        static const double params[] = {};\n",
                c_array(&case.params)
            ));
            for (name, vals) in [
                ("x", &sample.x),
                ("u", &sample.u),
                ("p", &sample.p),
                ("v", &sample.v),
            ] {
                src.push_str(&format!(
                    "        static const double {name}[] = {};\n",
                    c_array(vals)
                ));
            }
            for kind in kernel_kinds(&case.kernels) {
                let io = KernelIo::new(&case.kernels, kind);
                let mut args: Vec<String> = io
                    .inputs
                    .iter()
                    .map(|(a, _)| a.name().to_string())
                    .collect();
                let f = format!("{prefix}_{}", kind.name());
                let put = |target: &str, n: usize| {
                    format!(
                        "        put(\"{}\", {k}, \"{}\", {target}, {n});\n",
                        case.key,
                        kind.name()
                    )
                };
                if io.scalar {
                    src.push_str(&format!("        s = {f}({});\n", args.join(", ")));
                    src.push_str(&put("&s", 1));
                } else {
                    let mut at = 0;
                    for o in &io.outputs {
                        args.push(format!("out + {at}"));
                        at += o.len;
                    }
                    src.push_str(&format!("        {f}({});\n", args.join(", ")));
                    src.push_str(&put("out", at));
                }
            }
            src.push_str("    }\n");
        }
    }
    src.push_str("    return 0;\n}\n");
    src
}

#[test]
fn c_headers_compile_as_strict_c99_and_agree_with_the_rust_kernels() {
    let cases = cases();
    let dir = scratch("c");
    for case in cases {
        std::fs::write(dir.join(format!("{}.h", case.key)), c::emit(&case.kernels))
            .expect("write header");
    }
    std::fs::write(dir.join("driver.c"), driver(cases)).expect("write driver");
    let hint = "the C backend tests need gcc (scripts/setup.sh installs it)";
    let flags = [
        "-std=c99",
        "-Wall",
        "-Wextra",
        "-Werror",
        "-pedantic",
        "-O1",
        "-o",
        "driver",
        "driver.c",
        "-lm",
    ];
    let compiled = run_tool("gcc", &flags, &dir, hint);
    assert_success("gcc on the emitted headers", &compiled);
    let ran = run_tool(
        dir.join("driver").to_str().expect("path"),
        &[],
        &dir,
        "the driver runs",
    );
    assert_success("the C driver", &ran);
    check_results(cases, &String::from_utf8_lossy(&ran.stdout), 1e-13, "C");
}
