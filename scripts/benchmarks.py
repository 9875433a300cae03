#!/usr/bin/env python3
"""Runs geokern's route benchmarks and writes BENCHMARKS.md.

Steps: `cargo bench -p geokern-bench` (criterion, bench/benches/routes.rs), then
`cargo run --release -p geokern-bench --example facts` (operation counts and accuracy), then
reads criterion's estimates (<target>/criterion/<group>/<function>/new/estimates.json, the
median of the samples), the computer-algebra script's record (bench/cas/timings.json, written
by scripts/cas_route.py, which this script never runs), and writes BENCHMARKS.md at the
repository root.

Usage, from anywhere (honours CARGO_TARGET_DIR):

    python3 scripts/benchmarks.py            # run the benchmarks, then write the report
    python3 scripts/benchmarks.py --no-run   # write the report from the last run's estimates

Every ratio in the report comes from one run of the benchmarks, side by side, so a busy machine
slows all routes alike rather than some of them.
"""

import json
import os
import platform
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
TARGET = os.environ.get("CARGO_TARGET_DIR", os.path.join(ROOT, "target"))
METRICS = [
    ("kerr_bl", "Kerr, Boyer-Lindquist (`examples/metrics/kerr_bl.gk`)"),
    ("kerr_schild", "Kerr, Cartesian Kerr-Schild, no declared inverse (`examples/metrics/kerr_schild.gk`)"),
]
ROUTES = [
    ("macro", "geokern `include_metric!`, f64"),
    ("macro_simd_x4", "geokern `include_metric!`, f64x4, per geodesic"),
    ("cas_c", "SymPy cse + ccode, C at -O3"),
    ("dual", "hand g(x), dual numbers, LU inverse"),
    ("finite_difference", "hand g(x), central differences, LU inverse"),
    ("tape", "geokern CLI tape evaluator"),
    ("native", "geokern CLI native evaluator (Cranelift)"),
]
KERNELS = [("geodesic_accel", "geodesic_accel"), ("christoffel", "christoffel")]
# One call of the f64x4 kernel serves four geodesics.
PER_CALL = {"macro_simd_x4": 4}


def sh(args, **kw):
    return subprocess.run(args, cwd=ROOT, check=True, text=True, **kw)


def output(args):
    try:
        return subprocess.run(args, cwd=ROOT, text=True, capture_output=True).stdout.strip()
    except OSError:
        return ""


def estimate(group, function):
    """Median nanoseconds per iteration of one benchmark."""
    path = os.path.join(TARGET, "criterion", group, function, "new", "estimates.json")
    with open(path) as fh:
        data = json.load(fh)
    return data["median"]["point_estimate"]


def machine():
    lscpu = {}
    for line in output(["lscpu"]).splitlines():
        key, _, value = line.partition(":")
        lscpu[key.strip()] = value.strip()
    model = lscpu.get("Model name", platform.processor() or "unknown")
    cpus = lscpu.get("CPU(s)", str(os.cpu_count()))
    threads = lscpu.get("Thread(s) per core", "?")
    rustc = output(["rustc", "--version"])
    cc = output(["cc", "--version"]).splitlines()
    return model, cpus, threads, rustc, cc[0] if cc else "unknown"


def fmt_ns(ns):
    return "%.0f" % ns if ns >= 100 else "%.1f" % ns


def fmt_ratio(r):
    return "%.2fx" % r if r < 10 else "%.0fx" % r


def fmt_ops(o):
    return "%d (%d add, %d mul, %d div, %d call)" % (o["total"], o["add"], o["mul"], o["div"], o["call"])


def fmt_cas_ops(total, by):
    adds = by.get("ADD", 0) + by.get("SUB", 0) + by.get("NEG", 0)
    rest = {k: v for k, v in by.items() if k not in ("ADD", "SUB", "NEG", "MUL", "DIV")}
    calls = ", ".join("%d %s" % (v, k.lower()) for k, v in sorted(rest.items()))
    return "%d (%d add, %d mul, %d div, %s)" % (total, adds, by.get("MUL", 0), by.get("DIV", 0), calls)


def main(argv):
    if "--no-run" not in argv:
        sh(["cargo", "bench", "-p", "geokern-bench", "--bench", "routes"])
    facts = json.loads(
        sh(
            ["cargo", "run", "--quiet", "--release", "-p", "geokern-bench", "--example", "facts"],
            capture_output=True,
        ).stdout
    )
    with open(os.path.join(ROOT, "bench", "cas", "timings.json")) as fh:
        cas = json.load(fh)

    times = {}
    for metric, _ in METRICS:
        for kernel, _ in KERNELS:
            for route, _ in ROUTES:
                ns = estimate("%s_%s" % (metric, kernel), route)
                times[metric, kernel, route] = ns / PER_CALL.get(route, 1)
        times[metric, "derivation"] = estimate("derivation", metric)

    model, cpus, threads, rustc, cc = machine()
    out = []
    w = out.append
    w("# Benchmarks")
    w("")
    w("geokern's generated kernels against the other routes to the same numbers. Written by")
    w("`scripts/benchmarks.py` from one run of `cargo bench -p geokern-bench` (criterion, median")
    w("of 20 samples); rerun it to refresh. All ratios come from that one run, side by side.")
    w("")
    w("- Machine: %s, %s logical CPUs, threads per core: %s; shared with other work: single" % (model, cpus, threads))
    w("  timings move by tens of percent between runs; ratios within one run are steadier.")
    w("- Rust: %s; C: %s, `-O3`, no fast-math, no `-march=native`." % (rustc, cc))
    w("- Computer algebra: SymPy %s (Python %s)." % (cas["kerr_bl"]["sympy"], cas["kerr_bl"]["python"]))
    w("- Parameters m = %g, a = %g. Scalar routes are timed at the first sample point of" % tuple(facts["params"]))
    w("  `bench/src/points.rs`; the f64x4 call takes all four points, one per lane, and its time")
    w("  is divided by four.")
    w("")
    w("The routes:")
    w("")
    w("1. **macro**: the kernels `geokern::include_metric!` derives at compile time, f64; and")
    w("   **macro f64x4**, the same generic kernel on `geokern::f64x4`.")
    w("2. **CAS C**: `scripts/cas_route.py` writes the metric in SymPy (core only), inverts it")
    w("   (`Matrix.inv()` for Boyer-Lindquist; adjugate over determinant, cofactors written out,")
    w("   for Kerr-Schild), forms")
    w("   Γ^a_bc by the textbook formula and −Γ^a_bc u^b u^c, runs `sympy.cse` over all outputs")
    w("   of each kernel and prints C with `sympy.ccode` (`bench/cas/*.c`). No `simplify`.")
    w("3. **dual**: only g_ab(x) written by hand in Rust (`bench/src/hand.rs`); ∂g by forward-mode")
    w("   dual numbers (`geokern::Dual<4>`), g⁻¹ by LU with partial pivoting, Γ by the formula")
    w("   (b ≤ c, mirrored), then the contraction.")
    w("4. **finite differences**: the same with central differences (nine evaluations of g).")
    w("5. **tape**: the `geokern` CLI's tape evaluator on the engine's kernel programs.")
    w("6. **native**: the `geokern` CLI's native evaluator, the same programs compiled to machine")
    w("   code with Cranelift when the tool starts (the tool's default where Cranelift supports")
    w("   the processor; bit for bit the tape's results).")
    w("")
    for metric, title in METRICS:
        w("## %s" % title)
        w("")
        w("| route | geodesic_accel ns | vs macro | christoffel ns | vs macro |")
        w("|---|---:|---:|---:|---:|")
        for route, label in ROUTES:
            row = [label]
            for kernel, _ in KERNELS:
                ns = times[metric, kernel, route]
                row += [fmt_ns(ns), fmt_ratio(ns / times[metric, kernel, "macro"])]
            w("| " + " | ".join(row) + " |")
        w("")
        f = facts[metric]
        c = cas[metric]
        w("Operation counts after common-subexpression elimination:")
        w("")
        w("| kernel | geokern (`%s::<f64>::*_OPS`) | SymPy cse (`count_ops`) | tape instructions |"
          % ("Kerr" if metric == "kerr_bl" else "KerrSchild"))
        w("|---|---|---|---:|")
        w("| geodesic_accel | %s | %s | %d |" % (
            fmt_ops(f["accel_ops"]), fmt_cas_ops(c["accel_ops"], c["accel_ops_by_kind"]), f["tape_ops"]["accel"]))
        w("| christoffel | %s | %s | %d |" % (
            fmt_ops(f["christoffel_ops"]), fmt_cas_ops(c["christoffel_ops"], c["christoffel_ops_by_kind"]),
            f["tape_ops"]["christoffel"]))
        w("")
        a = f["accuracy"]
        w("Accuracy against the macro kernels, worst norm-wise relative error over the four sample")
        w("points (max |route − macro| / max |macro|):")
        w("")
        w("| route | geodesic_accel | christoffel |")
        w("|---|---:|---:|")
        for key, label in [("cas_c", "CAS C"), ("dual", "dual"), ("finite_difference", "finite differences")]:
            w("| %s | %.1e | %.1e |" % (label, a[key]["accel"], a[key]["christoffel"]))
        w("| macro f64x4 (lanes vs f64 calls) | %.1e | |" % a["simd_accel"])
        w("")

    w("## Derivation time")
    w("")
    w("The engine (`geokern_symbolic::model::compile` on the parsed file, release build) derives and")
    w("schedules all nine kernels of a metric; the SymPy script derives only the two timed here")
    w("(Christoffel symbols and acceleration) plus the inverse, then cse and C printing.")
    w("")
    w("| metric | engine | SymPy wall (processor) | SymPy / engine |")
    w("|---|---:|---:|---:|")
    for metric, _ in METRICS:
        engine_s = times[metric, "derivation"] * 1e-9
        c = cas[metric]
        cpu = c.get("total_cpu_s")
        w("| %s | %.1f ms | %.1f s (%s) | %s |" % (
            metric, engine_s * 1e3, c["total_s"], "%.1f s" % cpu if cpu is not None else "n/a",
            fmt_ratio(c["total_s"] / engine_s)))
    w("")

    # Targets of the benchmarks' issue, each judged on this run, with the facts that explain it.
    w("## Targets")
    w("")
    w("| target | measured | met | why |")
    w("|---|---|---|---|")

    def target(text, measured, ok, ratio, bound, why):
        verdict = "met" if ok else "**not met**"
        # Single timings on this shared machine move by tens of percent between runs.
        if abs(ratio / bound - 1) < 0.15:
            verdict += " (borderline: within 15% of the bound, may flip between runs)"
        w("| %s | %s | %s | %s |" % (text, measured, verdict, why))

    def t(metric, route, kernel="geodesic_accel"):
        return times[metric, kernel, route]

    for metric, _ in METRICS:
        r = t(metric, "macro") / t(metric, "cas_c")
        ops = facts[metric]["accel_ops"]["total"]
        pows = library_pows(metric)
        target(
            "macro ≤ 0.25 × CAS C, geodesic_accel, %s" % metric,
            "%.2fx (%s vs %s ns)" % (r, fmt_ns(t(metric, "macro")), fmt_ns(t(metric, "cas_c"))),
            r <= 0.25,
            r,
            0.25,
            "geokern %d operations, SymPy %d (%.1fx) of which %d `pow` calls GCC leaves to the"
            " library; geokern's accel contracts ∂g with u before raising the index, the CAS"
            " route forms Γ first" % (ops, cas[metric]["accel_ops"], cas[metric]["accel_ops"] / ops, pows),
        )
    for metric, _ in METRICS:
        r = t(metric, "dual") / t(metric, "macro")
        target(
            "macro ≥ 4x faster than dual, geodesic_accel, %s" % metric,
            "%.1fx faster (%s vs %s ns)" % (r, fmt_ns(t(metric, "macro")), fmt_ns(t(metric, "dual"))),
            r >= 4,
            r,
            4,
            "the dual route differentiates the hand-written g (a few dozen operations in both"
            " metrics, each carrying a 4-gradient), then pays an LU inverse and the assembly of Γ;"
            " so it costs about the same on both metrics (%s and %s ns), while the exact kernel"
            " grows with the size of ∂g (%d operations here)"
            % (fmt_ns(t("kerr_bl", "dual")), fmt_ns(t("kerr_schild", "dual")), facts[metric]["accel_ops"]["total"]),
        )
    for metric, _ in METRICS:
        r = t(metric, "macro_simd_x4") / t(metric, "macro")
        target(
            "f64x4 per geodesic ≤ 0.5 × f64, geodesic_accel, %s" % metric,
            "%.2fx (%s vs %s ns)" % (r, fmt_ns(t(metric, "macro_simd_x4")), fmt_ns(t(metric, "macro"))),
            r <= 0.5,
            r,
            0.5,
            "built for the x86-64 baseline (SSE2, no `-C target-cpu`), `f64x4` is two 128-bit"
            " halves, so arithmetic gains at most 2x (0.5x per geodesic); a sine-cosine pair is"
            " one vector polynomial in `wide` against a library call per lane in f64. This kernel:"
            " %s" % ("one sine-cosine pair, %d divisions" % facts[metric]["accel_ops"]["div"]
                     if metric == "kerr_bl"
                     else "%d square roots (vector instructions, no polynomial), %d divisions, no"
                     " sine%s"
                     % (facts[metric]["accel_ops"]["call"], facts[metric]["accel_ops"]["div"],
                        "; why it stays above the 0.5x bound was not profiled" if r > 0.5 else "")),
        )
    for metric, _ in METRICS:
        engine = times[metric, "derivation"] * 1e-9
        r = cas[metric]["total_s"] / engine
        target(
            "derivation ≥ 100x faster than CAS, %s" % metric,
            "%s faster (%.1f ms vs %.1f s)" % (fmt_ratio(r), engine * 1e3, cas[metric]["total_s"]),
            r >= 100,
            r,
            100,
            "SymPy: %.1f s deriving (inverse by %s), %.1f s in cse, %.1f s printing; the engine"
            " derives all nine kernels with exact rationals and schedules them"
            % (cas[metric]["derive_s"], cas[metric]["inverse"], cas[metric]["cse_s"], cas[metric]["print_s"]),
        )
    for metric, _ in METRICS:
        r = t(metric, "tape") / t(metric, "macro")
        n = facts[metric]["tape_ops"]["accel"]
        ops = facts[metric]["accel_ops"]["total"]
        target(
            "tape within 3x of compiled, geodesic_accel, %s" % metric,
            "%.2fx (%s vs %s ns)" % (r, fmt_ns(t(metric, "tape")), fmt_ns(t(metric, "macro"))),
            r <= 3,
            r,
            3,
            "the tape runs %d fused instructions for the kernel's %d operations, at %.2f ns"
            " each against %.2f ns per operation compiled: every instruction reads and writes"
            " its registers in memory, where compiled code keeps values in machine registers"
            % (n, ops, t(metric, "tape") / n, t(metric, "macro") / ops),
        )
    for metric, _ in METRICS:
        r = t(metric, "native") / t(metric, "macro")
        target(
            "CLI within 3x of compiled with its native evaluator, geodesic_accel, %s" % metric,
            "%.2fx (%s vs %s ns)" % (r, fmt_ns(t(metric, "native")), fmt_ns(t(metric, "macro"))),
            r <= 3,
            r,
            3,
            "the tape's programs compiled by Cranelift (one IR value per program value, no"
            " reassociation, no fused multiply-add): values stay in machine registers; what"
            " remains against the macro is Cranelift's code quality against LLVM's",
        )
    w("")

    w("## Notes")
    w("")
    for line in NOTES:
        w(line)
    fd = max(facts[m]["accuracy"]["finite_difference"][k] for m, _ in METRICS for k in ("accel", "christoffel"))
    w("- Central differences (steps ε^(1/3) max(1, |x|)) reach %.0e at worst here, far inside the"
      " 1e-6 the issue allows; in time they cost %s and %s ns against %s and %s ns for dual"
      " numbers, which suggests (not profiled) that both generic routes spend their time in the LU"
      " inverse and the assembly of Γ rather than in the derivatives of a cheap g." % (
          fd, fmt_ns(t("kerr_bl", "finite_difference")), fmt_ns(t("kerr_schild", "finite_difference")),
          fmt_ns(t("kerr_bl", "dual")), fmt_ns(t("kerr_schild", "dual"))))
    w("")

    with open(os.path.join(ROOT, "BENCHMARKS.md"), "w") as fh:
        fh.write("\n".join(out))
    print("wrote BENCHMARKS.md")


# Facts about the routes that hold whatever the numbers; the numbers above are this run's.
NOTES = [
    "- `christoffel` compares like with like (every route writes all 64 symbols). For"
    " `geodesic_accel` the macro kernel contracts ∂g with u before raising the index and never"
    " forms Γ, while the CAS and generic routes follow the textbook order the issue asks of them"
    " (Γ, then −Γ^a_bc u^b u^c): part of the macro's lead there is that algorithm.",
    "- SymPy prints every power as `pow(x, n)`. GCC at -O3 without fast-math turns `pow(x, 2)`"
    " into a multiplication and leaves every other power (3, 4, −2, 3/2, ...) to the C library;"
    " geokern's lowering emits multiplications and one reciprocal per denominator.",
    "- No `simplify` runs in the CAS route. The Kerr-Schild inverse stays an unsimplified adjugate"
    " over a determinant that equals −1 (g = η + f l l with l null: matrix determinant lemma),"
    " because SymPy does not find that on its own.",
    "- The dual and finite-difference routes compute all four coordinate derivatives; they cannot"
    " know that t and φ (Boyer-Lindquist) or t (Kerr-Schild) are cyclic.",
]


def library_pows(metric):
    """`pow` calls with an exponent other than 2 in the CAS route's acceleration function."""
    with open(os.path.join(ROOT, "bench", "cas", metric + ".c")) as fh:
        text = fh.read()
    text = text[text.index("_geodesic_accel("):]
    count = 0
    start = text.find("pow(")
    while start >= 0:
        depth, i, comma = 0, start + 3, None
        while True:
            ch = text[i]
            if ch == "(":
                depth += 1
            elif ch == ")":
                depth -= 1
                if depth == 0:
                    break
            elif ch == "," and depth == 1:
                comma = i
            i += 1
        if text[comma + 1 : i].strip() != "2":
            count += 1
        start = text.find("pow(", start + 4)
    return count


if __name__ == "__main__":
    main(sys.argv[1:])
