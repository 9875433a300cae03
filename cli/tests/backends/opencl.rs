//! The OpenCL backend: the emitted sources of every case, built together as one program by
//! the PoCL CPU driver, run through their batch entry points over all samples of a case at
//! once; the results match the Rust kernels to 1e-12.
//!
//! PoCL compiles each kernel again when it is first enqueued, at about a tenth of a second
//! apiece, so the batch kernels of three cases run, chosen to cover between them every
//! shape of kernel: [`RUN`].

use geokern_symbolic::backend::cfamily::{kernel_kinds, KernelIo};
use geokern_symbolic::backend::opencl;
use geokern_symbolic::program::InputArray;

use crate::c::c_array;
use crate::common::{assert_success, cases, check_results, run_tool, scratch, Case};

const HINT: &str = "the OpenCL backend tests need gcc, the OpenCL headers and loader and the \
                    PoCL CPU driver (scripts/setup.sh installs opencl-headers, \
                    ocl-icd-opencl-dev and pocl-opencl-icd)";

/// The cases whose kernels run: the demo's metric (three parameters, an invariant, sine and
/// cosine pairs), one with every curvature kernel (two return a scalar), and one without
/// parameters. The C test runs every case through the same printer.
const RUN: [&str; 3] = ["vesper", "wormhole_curvature", "flat_polar"];

/// The host program's fixed part: set-up, and one helper that runs a batch kernel.
const HOST_PRELUDE: &str = r#"#define CL_TARGET_OPENCL_VERSION 120
#include <CL/cl.h>
#include <stdio.h>
#include <stdlib.h>

static cl_context context;
static cl_command_queue queue;
static cl_program program;

static void check(cl_int err, const char *what)
{
    if (err != CL_SUCCESS) {
        fprintf(stderr, "%s failed with OpenCL error %d\n", what, (int)err);
        exit(1);
    }
}

/* Runs kernel `name` over n states: `nin` inputs then `nout` outputs, lengths in doubles
   (at least 1: OpenCL has no empty buffers), then the count. */
static void run(const char *name, int n, int nin, const double *const *in, const size_t *in_len,
                int nout, double *const *out, const size_t *out_len)
{
    cl_int err;
    cl_mem mem[8];
    int a;
    size_t global = (size_t)n + 3; /* more work-items than states: the bounds check holds */
    cl_kernel kernel = clCreateKernel(program, name, &err);
    check(err, name);
    for (a = 0; a < nin; a++) {
        mem[a] = clCreateBuffer(context, CL_MEM_READ_ONLY | CL_MEM_COPY_HOST_PTR,
                                in_len[a] * sizeof(double), (void *)in[a], &err);
        check(err, "clCreateBuffer");
    }
    for (a = 0; a < nout; a++) {
        mem[nin + a] = clCreateBuffer(context, CL_MEM_WRITE_ONLY, out_len[a] * sizeof(double),
                                      NULL, &err);
        check(err, "clCreateBuffer");
    }
    for (a = 0; a < nin + nout; a++) {
        check(clSetKernelArg(kernel, a, sizeof(cl_mem), &mem[a]), "clSetKernelArg");
    }
    check(clSetKernelArg(kernel, nin + nout, sizeof(int), &n), "clSetKernelArg");
    check(clEnqueueNDRangeKernel(queue, kernel, 1, NULL, &global, NULL, 0, NULL, NULL), name);
    for (a = 0; a < nout; a++) {
        check(clEnqueueReadBuffer(queue, mem[nin + a], CL_TRUE, 0, out_len[a] * sizeof(double),
                                  out[a], 0, NULL, NULL), "clEnqueueReadBuffer");
    }
    for (a = 0; a < nin + nout; a++) {
        clReleaseMemObject(mem[a]);
    }
    clReleaseKernel(kernel);
}

static void put(const char *key, int sample, const char *kernel, const double *a, int n)
{
    int i;
    printf("%s %d %s", key, sample, kernel);
    for (i = 0; i < n; i++) {
        printf(" %.17g", a[i]);
    }
    printf("\n");
}

int main(int argc, char **argv)
{
    cl_platform_id platform;
    cl_device_id device;
    cl_int err;
    FILE *file;
    static char source[1 << 24];
    const char *sources[1];
    size_t length;
    if (argc != 2) {
        return 2;
    }
    file = fopen(argv[1], "rb");
    if (!file) {
        return 2;
    }
    length = fread(source, 1, sizeof(source) - 1, file);
    fclose(file);
    source[length] = 0;
    sources[0] = source;
    check(clGetPlatformIDs(1, &platform, NULL), "clGetPlatformIDs (is an OpenCL driver installed?)");
    check(clGetDeviceIDs(platform, CL_DEVICE_TYPE_ALL, 1, &device, NULL), "clGetDeviceIDs");
    context = clCreateContext(NULL, 1, &device, NULL, NULL, &err);
    check(err, "clCreateContext");
    queue = clCreateCommandQueue(context, device, 0, &err);
    check(err, "clCreateCommandQueue");
    program = clCreateProgramWithSource(context, 1, sources, NULL, &err);
    check(err, "clCreateProgramWithSource");
    /* Optimisation buys nothing for a handful of states and doubles the build time. */
    err = clBuildProgram(program, 1, &device, "-cl-std=CL1.2 -cl-opt-disable", NULL, NULL);
    if (err != CL_SUCCESS) {
        static char log[1 << 16];
        clGetProgramBuildInfo(program, device, CL_PROGRAM_BUILD_LOG, sizeof(log), log, NULL);
        fprintf(stderr, "clBuildProgram failed (%d):\n%s\n", (int)err, log);
        return 1;
    }
"#;

/// The calls of every batch kernel of one case, over all its samples at once.
fn host_calls(case: &Case) -> String {
    let count = case.samples.len();
    let mut src = String::from("    {\n");
    let column = |f: fn(&crate::common::Sample) -> &Vec<f64>| -> Vec<f64> {
        case.samples.iter().flat_map(|s| f(s).clone()).collect()
    };
    src.push_str(&format!(
        "        static const double params[] = {};\n",
        c_array(&case.params)
    ));
    for (name, vals) in [
        ("x", column(|s| &s.x)),
        ("u", column(|s| &s.u)),
        ("p", column(|s| &s.p)),
        ("v", column(|s| &s.v)),
    ] {
        src.push_str(&format!(
            "        static const double {name}[] = {};\n",
            c_array(&vals)
        ));
    }
    src.push_str("        static double out0[8192], out1[8192];\n        int k;\n");
    for kind in kernel_kinds(&case.kernels) {
        let io = KernelIo::new(&case.kernels, kind);
        if io.output_len() == 0 {
            continue;
        }
        let names: Vec<&str> = io.inputs.iter().map(|(a, _)| a.name()).collect();
        let lens: Vec<String> = io
            .inputs
            .iter()
            .map(|&(a, len)| {
                let total = if a == InputArray::Params {
                    len
                } else {
                    len * count
                };
                total.max(1).to_string()
            })
            .collect();
        let out_lens: Vec<String> = io
            .outputs
            .iter()
            .map(|o| (o.len * count).to_string())
            .collect();
        let outs: Vec<&str> = ["out0", "out1"][..io.outputs.len()].to_vec();
        src.push_str(&format!(
            "        {{\n            const double *const in[] = {{{}}};\n            \
             const size_t in_len[] = {{{}}};\n            double *const out[] = {{{}}};\n            \
             const size_t out_len[] = {{{}}};\n            \
             run(\"{}_{}_batch\", {count}, {}, in, in_len, {}, out, out_len);\n",
            names.join(", "),
            lens.join(", "),
            outs.join(", "),
            out_lens.join(", "),
            case.prefix(),
            kind.name(),
            names.len(),
            outs.len(),
        ));
        // Each sample's outputs, joined in program order (dx then dp).
        src.push_str(&format!(
            "            for (k = 0; k < {count}; k++) {{\n                double row[8192];\n                int j = 0, i;\n"
        ));
        for (slot, o) in outs.iter().zip(&io.outputs) {
            src.push_str(&format!(
                "                for (i = 0; i < {len}; i++) row[j++] = {slot}[k * {len} + i];\n",
                len = o.len
            ));
        }
        src.push_str(&format!(
            "                put(\"{}\", k, \"{}\", row, j);\n            }}\n        }}\n",
            case.key,
            kind.name()
        ));
    }
    src.push_str("    }\n");
    src
}

#[test]
fn opencl_batch_kernels_run_on_pocl_and_agree_with_the_rust_kernels() {
    let cases = cases();
    let dir = scratch("opencl");
    let source: String = cases.iter().map(|c| opencl::emit(&c.kernels)).collect();
    std::fs::write(dir.join("kernels.cl"), source).expect("write kernels");
    let mut host = HOST_PRELUDE.to_string();
    let run: Vec<&Case> = cases
        .iter()
        .filter(|c| RUN.contains(&c.key.as_str()))
        .collect();
    assert_eq!(run.len(), RUN.len(), "every case named in RUN exists");
    for case in &run {
        host.push_str(&host_calls(case));
    }
    host.push_str("    return 0;\n}\n");
    std::fs::write(dir.join("host.c"), host).expect("write host");
    let compiled = run_tool(
        "gcc",
        &[
            "-std=c99", "-Wall", "-Werror", "-o", "host", "host.c", "-lOpenCL",
        ],
        &dir,
        HINT,
    );
    assert_success(&format!("gcc on the OpenCL host; {HINT}"), &compiled);
    let ran = run_tool(
        dir.join("host").to_str().expect("path"),
        &["kernels.cl"],
        &dir,
        HINT,
    );
    assert_success(&format!("the OpenCL run; {HINT}"), &ran);
    check_results(run, &String::from_utf8_lossy(&ran.stdout), 1e-12, "OpenCL");
}
