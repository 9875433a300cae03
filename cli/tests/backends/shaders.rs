//! The WGSL and GLSL backends: every emitted unit parses and validates with naga, with one
//! function per kernel that has outputs; naga's reading of each function, interpreted in f32
//! ([`shader_ir`](crate::shader_ir)), computes what the f32 Rust kernels compute; and that
//! single precision keeps the accuracy the headers promise. No GPU runs in the tests.

use geokern_symbolic::backend::cfamily::{kernel_kinds, KernelIo};
use geokern_symbolic::backend::{glsl, wgsl};
use geokern_symbolic::program::InputArray;
use naga::valid::{Capabilities, ValidationFlags, Validator};

use crate::common::{assert_close, cases, rust_values, Case};
use crate::shader_ir;

/// Names of the functions a shader unit of `case` must define.
fn expected_functions(case: &Case) -> Vec<String> {
    kernel_kinds(&case.kernels)
        .into_iter()
        .filter(|&k| KernelIo::new(&case.kernels, k).output_len() > 0)
        .map(|k| format!("{}_{}", case.prefix(), k.name()))
        .collect()
}

fn defined_functions(module: &naga::Module) -> Vec<String> {
    module
        .functions
        .iter()
        .filter_map(|(_, f)| f.name.clone())
        .collect()
}

fn validate(module: &naga::Module, what: &str) {
    if let Err(e) = Validator::new(ValidationFlags::all(), Capabilities::all()).validate(module) {
        panic!("{what} does not validate: {e:?}");
    }
}

fn wgsl_module(case: &Case) -> naga::Module {
    let source = wgsl::emit(&case.kernels);
    let module = naga::front::wgsl::parse_str(&source)
        .unwrap_or_else(|e| panic!("{} WGSL: {}", case.key, e.emit_to_string(&source)));
    validate(&module, &format!("{} WGSL", case.key));
    module
}

fn glsl_module(case: &Case) -> naga::Module {
    // The unit is functions only; a shader around it supplies version and entry point.
    let source = format!(
        "#version 450\nlayout(local_size_x = 1) in;\n{}\nvoid main() {{}}\n",
        glsl::emit(&case.kernels)
    );
    let mut frontend = naga::front::glsl::Frontend::default();
    let options = naga::front::glsl::Options::from(naga::ShaderStage::Compute);
    let module = frontend
        .parse(&options, &source)
        .unwrap_or_else(|e| panic!("{} GLSL: {}", case.key, e.emit_to_string(&source)));
    validate(&module, &format!("{} GLSL", case.key));
    module
}

#[test]
fn wgsl_units_parse_and_validate_with_naga() {
    for case in cases() {
        let module = wgsl_module(case);
        assert_eq!(
            defined_functions(&module),
            expected_functions(case),
            "{}",
            case.key
        );
    }
}

#[test]
fn glsl_units_parse_and_validate_with_naga() {
    for case in cases() {
        let module = glsl_module(case);
        let mut defined = defined_functions(&module);
        defined.retain(|f| f != "main");
        assert_eq!(defined, expected_functions(case), "{}", case.key);
    }
}

/// Runs every function of both units at every sample through naga's IR, against the f32
/// Rust kernels: the same operations in the same order, so they agree to rounding.
#[test]
fn wgsl_and_glsl_functions_compute_the_single_precision_kernels() {
    for case in cases() {
        let modules = [("WGSL", wgsl_module(case)), ("GLSL", glsl_module(case))];
        for (k, s) in case.samples.iter().enumerate() {
            for (kind, want) in rust_values::<f32>(case, s) {
                let io = KernelIo::new(&case.kernels, kind);
                if io.output_len() == 0 {
                    continue;
                }
                let inputs: Vec<Vec<f32>> = io
                    .inputs
                    .iter()
                    .filter_map(|&(a, len)| {
                        let vals = match a {
                            InputArray::Params if len == 0 => return None,
                            InputArray::Params => &case.params,
                            InputArray::X => &s.x,
                            InputArray::U => &s.u,
                            InputArray::P => &s.p,
                            InputArray::V => &s.v,
                        };
                        Some(vals.iter().map(|&v| v as f32).collect())
                    })
                    .collect();
                let name = format!("{}_{}", case.prefix(), kind.name());
                for (lang, module) in &modules {
                    let got: Vec<f64> = shader_ir::call(module, &name, &inputs)
                        .into_iter()
                        .map(f64::from)
                        .collect();
                    let what = format!("{lang} {} sample {k} {}", case.key, kind.name());
                    assert_close(&what, &got, &want, 1e-6);
                }
            }
        }
    }
}

/// The headers promise relative errors around 1e-6 times each kernel's conditioning. The
/// sample points lie well away from horizons and coordinate singularities, where the
/// conditioning is modest: the worst error seen there is just under 1e-6 relative to an
/// array's largest entry (the transport kernel of the dense Kerr-Schild metric). 5e-6 leaves
/// room for other libm implementations without letting a real loss of precision through.
const F32_BOUND: f64 = 5e-6;

#[test]
fn single_precision_stays_within_the_promised_error() {
    let mut worst = (0.0_f64, String::new());
    for case in cases() {
        for (k, s) in case.samples.iter().enumerate() {
            let exact = rust_values::<f64>(case, s);
            let single = rust_values::<f32>(case, s);
            for ((kind, want), (_, got)) in exact.iter().zip(&single) {
                let scale = want.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
                if scale == 0.0 {
                    continue;
                }
                for (g, w) in got.iter().zip(want) {
                    let err = (g - w).abs() / scale;
                    if err > worst.0 {
                        worst = (err, format!("{} sample {k} {}", case.key, kind.name()));
                    }
                }
            }
        }
    }
    assert!(
        worst.0 <= F32_BOUND,
        "f32 error {:e} at {} exceeds {F32_BOUND:e}",
        worst.0,
        worst.1
    );
    // f32 rounding must show at all: a bound met by exact agreement would test nothing.
    assert!(
        worst.0 > 1e-9,
        "f32 kernels agree with f64 to {:e}",
        worst.0
    );
}
