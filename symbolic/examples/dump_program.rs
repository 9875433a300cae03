//! Prints one kernel program of a metric file: `cargo run -p geokern-symbolic --example
//! dump_program -- FILE KERNEL` (a development aid for reading what the scheduler emits).
use geokern_symbolic::{model::compile, parse::parse_str, program::KernelKind};

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if args.len() != 3 {
        eprintln!("usage: dump_program FILE KERNEL");
        std::process::exit(2);
    }
    let text = std::fs::read_to_string(&args[1]).expect("readable file");
    let parsed = parse_str(&text).expect("file parses");
    let kernels = compile(&parsed.metrics[0]).expect("metric compiles");
    let kind = KernelKind::ALL
        .iter()
        .find(|k| k.name() == args[2])
        .expect("known kernel name");
    let program = kernels.program(*kind);
    println!("{program}");
    eprintln!("{}", program.op_counts());
}
