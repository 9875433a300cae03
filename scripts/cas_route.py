#!/usr/bin/env python3
"""The general computer-algebra route to geodesic kernels, for geokern's benchmarks.

What a user without geokern would do with a general-purpose computer-algebra system: write the
metric by hand in SymPy (core only: symbols, Matrix, diff, cse, ccode; no differential-geometry
or tensor modules), invert it, form the Christoffel symbols by the textbook formula

    Gamma^a_bc = 1/2 g^ad (d_b g_dc + d_c g_db - d_d g_bc)

(Carroll, *Spacetime and Geometry*, 2004, eq. 3.27, from memory), the geodesic acceleration
-Gamma^a_bc u^b u^c, eliminate common subexpressions over all outputs of each kernel with
`sympy.cse`, and print C with `sympy.ccode`. No `simplify` is applied anywhere: it is the
step that does not finish in reasonable time on these metrics, and the comparison is with the
route as it runs unattended.

The inverse: `Matrix.inv()` for Boyer-Lindquist Kerr. For Kerr-Schild Kerr neither the plain
inverse nor `Matrix.adjugate()` finishes in reasonable time (SymPy's Berkowitz determinant did
not finish one 3x3 minor of this metric in five minutes), so the inverse is the adjugate divided
by the determinant with the cofactors written out: each 3x3 minor by the rule of Sarrus, the
determinant expanded along the first row with the same cofactors.

The metrics are written here a second time, by hand; this script never reads the .gk files.

Outputs (committed; the benchmarks compile the C and never run this script):

    bench/cas/kerr_bl.c, bench/cas/kerr_schild.c
        void <metric>_christoffel(const double *params, const double *x, double *out)
            out[16 a + 4 b + c] = Gamma^a_bc
        void <metric>_geodesic_accel(const double *params, const double *x, const double *u,
                                     double *out)
            out[a] = -Gamma^a_bc u^b u^c
        params = (m, a); x and u in the coordinate order of the .gk file.
    bench/cas/timings.json
        per metric: wall time of each stage and in all, the processor time in all (less
        sensitive to other load on the machine), and sympy.count_ops of the cse'd
        output of each kernel (in all and by operation).

Rerun from the repository root (Python 3 with SymPy). Boyer-Lindquist takes seconds;
Kerr-Schild takes minutes, so each metric can be run alone and the JSON is updated in place:

    python3 scripts/cas_route.py               # both
    python3 scripts/cas_route.py kerr_schild   # one
"""

import json
import os
import platform
import sys
import time

import sympy as sp

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
OUT_DIR = os.path.join(ROOT, "bench", "cas")
TIMINGS = os.path.join(OUT_DIR, "timings.json")


def kerr_bl():
    """Kerr in Boyer-Lindquist coordinates (t, r, theta, phi)."""
    t, r, th, ph = coords = sp.symbols("c_t c_r c_theta c_phi", real=True)
    m, a = params = sp.symbols("m a", real=True)
    sigma = r**2 + a**2 * sp.cos(th) ** 2
    delta = r**2 - 2 * m * r + a**2
    s2 = sp.sin(th) ** 2
    g = sp.zeros(4, 4)
    g[0, 0] = -(1 - 2 * m * r / sigma)
    g[0, 3] = g[3, 0] = -2 * m * a * r * s2 / sigma
    g[1, 1] = sigma / delta
    g[2, 2] = sigma
    g[3, 3] = (r**2 + a**2 + 2 * m * r * a**2 * s2 / sigma) * s2
    return coords, params, g, "Matrix.inv()"


def kerr_schild():
    """Kerr in Cartesian Kerr-Schild coordinates (t, x, y, z): g = eta + f l l, l null."""
    t, x, y, z = coords = sp.symbols("c_t c_x c_y c_z", real=True)
    m, a = params = sp.symbols("m a", real=True)
    rho2 = x**2 + y**2 + z**2
    # r is the positive root of r^4 - (rho2 - a^2) r^2 - a^2 z^2 = 0.
    r2 = (rho2 - a**2 + sp.sqrt((rho2 - a**2) ** 2 + 4 * a**2 * z**2)) / 2
    r = sp.sqrt(r2)
    f = 2 * m * r**3 / (r**4 + a**2 * z**2)
    l = [sp.Integer(1), (r * x + a * y) / (r**2 + a**2), (r * y - a * x) / (r**2 + a**2), z / r]
    eta = sp.diag(-1, 1, 1, 1)
    g = sp.Matrix(4, 4, lambda i, j: eta[i, j] + f * l[i] * l[j])
    return coords, params, g, "adjugate, cofactors written out"


METRICS = {"kerr_bl": kerr_bl, "kerr_schild": kerr_schild}


def det3(m):
    """Determinant of a 3x3 matrix by the rule of Sarrus."""
    return (
        m[0, 0] * (m[1, 1] * m[2, 2] - m[1, 2] * m[2, 1])
        - m[0, 1] * (m[1, 0] * m[2, 2] - m[1, 2] * m[2, 0])
        + m[0, 2] * (m[1, 0] * m[2, 1] - m[1, 1] * m[2, 0])
    )


def inverse(g, method):
    if method == "Matrix.inv()":
        return g.inv()
    n = g.shape[0]
    # adj[j, i] = (-1)^(i+j) det(g without row i and column j).
    cofactor = [[(-1) ** (i + j) * det3(g.minor_submatrix(i, j)) for j in range(n)] for i in range(n)]
    det = sum(g[0, j] * cofactor[0][j] for j in range(n))
    return sp.Matrix(n, n, lambda i, j: cofactor[j][i] / det)


def derive(coords, g, method):
    """Inverse, Christoffel symbols (b <= c) and acceleration, as SymPy expressions."""
    n = len(coords)
    ginv = inverse(g, method)
    # dg[d][a][b] = d_d g_ab
    dg = [[[sp.diff(g[a, b], coords[d]) for b in range(n)] for a in range(n)] for d in range(n)]
    gamma = {}
    for a in range(n):
        for b in range(n):
            for c in range(b, n):
                gamma[a, b, c] = sp.Rational(1, 2) * sum(
                    ginv[a, d] * (dg[b][d][c] + dg[c][d][b] - dg[d][b][c]) for d in range(n)
                )
    u = sp.symbols("u_0:%d" % n, real=True)
    accel = [
        -sum(gamma[a, min(b, c), max(b, c)] * u[b] * u[c] for b in range(n) for c in range(n))
        for a in range(n)
    ]
    return gamma, u, accel


def ops(replacements, reduced):
    """sympy.count_ops of a cse'd kernel: in all, and by operation."""
    total = 0
    by_op = {}
    for expr in [rhs for _, rhs in replacements] + list(reduced):
        visual = sp.count_ops(expr, visual=True)
        for term in sp.Add.make_args(visual):
            if term == 0:
                continue
            coeff, sym = term.as_coeff_Mul()
            by_op[str(sym)] = by_op.get(str(sym), 0) + int(coeff)
            total += int(coeff)
    return total, dict(sorted(by_op.items()))


def c_function(signature, replacements, assignments, locals_):
    lines = [signature + " {"]
    lines += ["    const double %s = %s;" % (name, value) for name, value in locals_]
    for sym, rhs in replacements:
        lines.append("    const double %s = %s;" % (sym, sp.ccode(rhs)))
    for targets, expr in assignments:
        code = sp.ccode(expr)
        for target in targets:
            lines.append("    %s = %s;" % (target, code))
    lines.append("}")
    return "\n".join(lines)


def progress(name, stage, seconds):
    print("%s: %s after %.1f s" % (name, stage, seconds), file=sys.stderr, flush=True)


def run(name):
    start = time.perf_counter()
    cpu_start = time.process_time()
    coords, params, g, method = METRICS[name]()
    gamma, u, accel = derive(coords, g, method)
    derived = time.perf_counter()
    progress(name, "derived", derived - start)

    keys = sorted(gamma)
    chris_rep, chris_red = sp.cse([gamma[k] for k in keys], symbols=sp.numbered_symbols("s"))
    progress(name, "cse of the Christoffel symbols", time.perf_counter() - start)
    accel_rep, accel_red = sp.cse(accel, symbols=sp.numbered_symbols("s"))
    cse_done = time.perf_counter()

    n = len(coords)
    param_locals = [(str(p), "params[%d]" % i) for i, p in enumerate(params)]
    x_locals = [(str(c), "x[%d]" % i) for i, c in enumerate(coords)]
    u_locals = [(str(s), "u[%d]" % i) for i, s in enumerate(u)]
    used = set().union(*(e.free_symbols for _, e in chris_rep), *(e.free_symbols for e in chris_red))
    chris_locals = [(v, c) for v, c in param_locals + x_locals if sp.Symbol(v, real=True) in used]
    used = set().union(*(e.free_symbols for _, e in accel_rep), *(e.free_symbols for e in accel_red))
    accel_locals = [
        (v, c) for v, c in param_locals + x_locals + u_locals if sp.Symbol(v, real=True) in used
    ]
    chris_assign = [
        (sorted({"out[%d]" % (16 * a + 4 * b + c), "out[%d]" % (16 * a + 4 * c + b)}), expr)
        for (a, b, c), expr in zip(keys, chris_red)
    ]
    accel_assign = [(["out[%d]" % a], expr) for a, expr in enumerate(accel_red)]
    text = "\n\n".join(
        [
            "/* Generated by scripts/cas_route.py (SymPy %s): the general computer-algebra\n"
            " * route for the %s metric, for geokern's benchmarks. Do not edit. */\n"
            "#include <math.h>" % (sp.__version__, name),
            c_function(
                "void %s_christoffel(const double *params, const double *x, double *out)" % name,
                chris_rep,
                chris_assign,
                chris_locals,
            ),
            c_function(
                "void %s_geodesic_accel(const double *params, const double *x, const double *u,"
                " double *out)" % name,
                accel_rep,
                accel_assign,
                accel_locals,
            ),
        ]
    )
    printed = time.perf_counter()
    cpu = time.process_time() - cpu_start
    with open(os.path.join(OUT_DIR, name + ".c"), "w") as fh:
        fh.write(text + "\n")

    chris_total, chris_by = ops(chris_rep, chris_red)
    accel_total, accel_by = ops(accel_rep, accel_red)
    assert n == 4
    return {
        "inverse": method,
        "simplify": False,
        "derive_s": round(derived - start, 3),
        "cse_s": round(cse_done - derived, 3),
        "print_s": round(printed - cse_done, 3),
        "total_s": round(printed - start, 3),
        "total_cpu_s": round(cpu, 3),
        "christoffel_ops": chris_total,
        "christoffel_ops_by_kind": chris_by,
        "christoffel_cse_temporaries": len(chris_rep),
        "accel_ops": accel_total,
        "accel_ops_by_kind": accel_by,
        "accel_cse_temporaries": len(accel_rep),
    }


def main(argv):
    names = argv[1:] or list(METRICS)
    unknown = [n for n in names if n not in METRICS]
    if unknown:
        sys.exit("cas_route.py: unknown metric %s (known: %s)" % (unknown, ", ".join(METRICS)))
    os.makedirs(OUT_DIR, exist_ok=True)
    for name in names:
        result = run(name)
        result["sympy"] = sp.__version__
        result["python"] = platform.python_version()
        # Re-read before writing: the two metrics may be derived by two processes at once.
        timings = {}
        if os.path.exists(TIMINGS):
            with open(TIMINGS) as fh:
                timings = json.load(fh)
        timings[name] = result
        with open(TIMINGS, "w") as fh:
            json.dump(timings, fh, indent=2, sort_keys=True)
            fh.write("\n")
        print("%s: %.1f s, accel %d ops" % (name, result["total_s"], result["accel_ops"]))


if __name__ == "__main__":
    main(sys.argv)
