//! Compiles the C that the general computer-algebra route (`scripts/cas_route.py`) printed.
//!
//! Always at `-O3`, in test builds too, so the correctness test checks the code the benchmark
//! times; no fast-math and no `-march=native`: the same strict IEEE arithmetic and portable
//! instruction set the Rust kernels are built with.

fn main() {
    for file in ["cas/kerr_bl.c", "cas/kerr_schild.c"] {
        println!("cargo:rerun-if-changed={file}");
    }
    cc::Build::new()
        .file("cas/kerr_bl.c")
        .file("cas/kerr_schild.c")
        .opt_level(3)
        .flag("-fno-fast-math")
        .warnings(false)
        .compile("geokern_bench_cas");
}
