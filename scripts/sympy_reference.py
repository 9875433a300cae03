#!/usr/bin/env python3
"""Independent reference values for the geokern test suite.

SymPy (core only: symbols, diff, lambdify) together with mpmath is the independent source of
every number in tests/data/sympy_reference.json. Each metric is written here a second time, by
hand, in SymPy; this script never reads the .gk declarations, so a mistake in geokern's parser,
differentiator or simplifier cannot leak into the reference.

Method: the metric components are differentiated exactly with sympy.diff, then the components
and their first derivatives are evaluated with mpmath at 50 significant digits. The inverse
metric, the Christoffel symbols, the geodesic acceleration, Hamilton's equations and the norm are
assembled from those numbers by plain high-precision linear algebra (a symbolic inverse of the
Kerr-Schild metric would take far too long). The whole computation is repeated at 70 digits and
the two runs must agree to better than 1e-35 relative, so every stored f64 is correctly rounded.

Parameters and sample points are chosen exactly representable in binary floating point, so the
f64 inputs of the Rust tests are the very numbers used here.

Rerun from the repository root (needs Python 3 with sympy and mpmath; takes a few seconds):

    python3 scripts/sympy_reference.py

It rewrites tests/data/sympy_reference.json deterministically.
"""

import json
import os
import sys

import mpmath
import sympy as sp
from mpmath.libmp import round_nearest, to_float

DPS = 50
DPS_CHECK = 70
R = sp.Rational


# ---------------------------------------------------------------------------------------------
# Metric definitions, written independently of the .gk files. Each builder takes the coordinate
# and parameter symbols and returns the covariant metric as a SymPy Matrix.
# ---------------------------------------------------------------------------------------------


def schwarzschild(c, p):
    t, r, th, ph = c
    (m,) = p
    f = 1 - 2 * m / r
    return sp.diag(-f, 1 / f, r**2, r**2 * sp.sin(th) ** 2)


def kerr_bl(c, p):
    t, r, th, ph = c
    m, a = p
    sigma = r**2 + a**2 * sp.cos(th) ** 2
    delta = r**2 - 2 * m * r + a**2
    s2 = sp.sin(th) ** 2
    g = sp.zeros(4, 4)
    g[0, 0] = -(1 - 2 * m * r / sigma)
    g[0, 3] = g[3, 0] = -2 * m * a * r * s2 / sigma
    g[1, 1] = sigma / delta
    g[2, 2] = sigma
    g[3, 3] = (r**2 + a**2 + 2 * m * r * a**2 * s2 / sigma) * s2
    return g


def kerr_schild_parts(c, p):
    """Scalar f and covector l of the Kerr-Schild form g = eta + f l l (Kerr, Cartesian)."""
    t, x, y, z = c
    m, a = p
    rho2 = x**2 + y**2 + z**2
    # r solves (x^2 + y^2)/(r^2 + a^2) + z^2/r^2 = 1, i.e. r^4 - (rho2 - a^2) r^2 - a^2 z^2 = 0.
    r2 = (rho2 - a**2 + sp.sqrt((rho2 - a**2) ** 2 + 4 * a**2 * z**2)) / 2
    r = sp.sqrt(r2)
    f = 2 * m * r**3 / (r**4 + a**2 * z**2)
    l = [sp.Integer(1), (r * x + a * y) / (r**2 + a**2), (r * y - a * x) / (r**2 + a**2), z / r]
    return f, l


ETA4 = sp.diag(-1, 1, 1, 1)


def kerr_schild(c, p):
    f, l = kerr_schild_parts(c, p)
    return sp.Matrix(4, 4, lambda i, j: ETA4[i, j] + f * l[i] * l[j])


def kerr_schild_ginv(c, p):
    """Closed-form inverse eta^ab - f l^a l^b with l^a = eta^ab l_b."""
    f, l = kerr_schild_parts(c, p)
    lu = [ETA4[i, i] * l[i] for i in range(4)]
    return sp.Matrix(4, 4, lambda i, j: ETA4[i, j] - f * lu[i] * lu[j])


def flrw(c, p):
    t, x, y, z = c
    (q,) = p
    a2 = t ** (2 * q)
    return sp.diag(-1, a2, a2, a2)


def sphere(c, p):
    th, ph = c
    (rho,) = p
    return sp.diag(rho**2, rho**2 * sp.sin(th) ** 2)


def tangherlini(c, p):
    t, r, chi, th, ph = c
    (mu,) = p
    f = 1 - mu / r**2
    s2chi = sp.sin(chi) ** 2
    return sp.diag(-f, 1 / f, r**2, r**2 * s2chi, r**2 * s2chi * sp.sin(th) ** 2)


def twisted_shear(c, p):
    # ds^2 = dx^2 + dy^2 + s cos z dx dy + 2 k x dy dz - 2 k y dx dz + (1 + 2 k^2 (x^2+y^2)) dz^2;
    # a cross term C dA dB puts C/2 in g[A, B] and in g[B, A].
    x, y, z = c
    k, s = p
    return sp.Matrix(
        [
            [1, s * sp.cos(z) / 2, -k * y],
            [s * sp.cos(z) / 2, 1, k * x],
            [-k * y, k * x, 1 + 2 * k**2 * (x**2 + y**2)],
        ]
    )


def ellis_wormhole(c, p):
    t, l, th, ph = c
    (b0,) = p
    w = l**2 + b0**2
    return sp.diag(-1, 1, w, w * sp.sin(th) ** 2)


# stem -> (struct, coords, param names, param values, builder, closed-form inverse or None,
#          samples as (x, u, p)). Every number is a dyadic rational, exact in f64.
SPECS = {
    "schwarzschild": (
        "Schwarzschild", ["t", "r", "theta", "phi"], ["m"], [1.25], schwarzschild, None,
        [
            ([0.5, 7.5, 1.25, 0.75], [1.375, -0.25, 0.0625, 0.03125], [-0.875, 0.125, 2.5, 3.75]),
            ([3.0, 4.25, 0.875, 2.5], [1.75, 0.5, -0.125, 0.09375], [-1.125, -0.375, 1.5, -2.25]),
            ([-2.0, 12.0, 2.25, 5.5], [1.0625, -0.1875, 0.046875, -0.0234375],
             [-1.03125, 0.625, -4.5, 6.0]),
        ],
    ),
    "kerr_bl": (
        "Kerr", ["t", "r", "theta", "phi"], ["m", "a"], [1.0, 0.9375], kerr_bl, None,
        [
            ([0.25, 6.5, 1.125, 0.5], [1.25, -0.3125, 0.0390625, 0.0546875],
             [-0.96875, 0.25, 1.75, 2.625]),
            ([4.0, 10.5, 0.625, 3.0], [1.0625, 0.15625, -0.0078125, 0.01171875],
             [-1.1875, -0.5, 3.25, -4.125]),
            ([-1.5, 3.25, 2.0, 1.75], [2.125, -0.4375, 0.109375, 0.203125],
             [-0.8125, 0.375, -0.75, 1.375]),
        ],
    ),
    "kerr_schild": (
        "KerrSchild", ["t", "x", "y", "z"], ["m", "a"], [1.0, 0.9375], kerr_schild, None,
        [
            ([0.5, 3.5, -2.25, 1.75], [1.375, -0.125, 0.1875, -0.0625],
             [-1.0625, 0.25, -0.375, 0.5]),
            ([2.0, -6.0, 4.5, -3.25], [1.125, 0.09375, -0.15625, 0.21875],
             [-0.9375, -0.4375, 0.3125, 0.6875]),
            ([-1.0, 1.5, 2.75, 0.625], [1.75, -0.3125, -0.28125, 0.40625],
             [-1.25, 0.8125, -0.5625, -0.15625]),
        ],
    ),
    "flrw": (
        "Flrw", ["t", "x", "y", "z"], ["q"], [0.625], flrw, None,
        [
            ([1.5, 0.25, -3.0, 2.0], [1.125, 0.375, -0.25, 0.1875], [-1.0625, 0.5, 0.75, -1.25]),
            ([0.75, 5.5, 1.25, -0.5], [2.0, -0.625, 0.4375, 0.8125], [-2.25, -0.125, 1.5, 0.3125]),
            ([4.25, -2.0, 0.125, 7.0], [1.3125, 0.0625, 0.21875, -0.34375],
             [-0.90625, 2.5, -1.75, 0.875]),
        ],
    ),
    "sphere": (
        "Sphere", ["theta", "phi"], ["rho"], [2.5], sphere, None,
        [
            ([0.75, 1.5], [0.375, -1.25], [2.0, 0.625]),
            ([1.25, -2.75], [-0.8125, 0.4375], [-1.5, 3.25]),
            ([2.5, 4.0], [1.0625, 2.125], [0.5625, -0.875]),
        ],
    ),
    "tangherlini": (
        "Tangherlini5", ["t", "r", "chi", "theta", "phi"], ["mu"], [1.5], tangherlini, None,
        [
            ([0.5, 3.5, 1.25, 0.875, 2.0], [1.25, -0.375, 0.0625, -0.09375, 0.15625],
             [-1.125, 0.25, 1.5, -2.75, 3.0]),
            ([2.25, 2.25, 0.625, 2.125, -1.0], [1.875, 0.5625, -0.1875, 0.21875, 0.046875],
             [-0.9375, -0.625, -0.875, 1.25, -0.5]),
            ([-3.0, 7.75, 2.5, 1.5, 4.5], [1.0625, 0.125, 0.0234375, -0.03125, 0.0703125],
             [-1.5, 0.375, 4.25, 2.125, -6.5]),
        ],
    ),
    "twisted_shear": (
        "TwistedShear", ["x", "y", "z"], ["k", "s"], [0.375, 0.625], twisted_shear, None,
        [
            ([1.25, -0.75, 0.5], [0.625, 1.125, -0.375], [1.5, -0.25, 0.875]),
            ([-2.5, 1.75, 2.25], [-0.4375, 0.8125, 1.0625], [-0.625, 1.375, -0.1875]),
            ([0.375, 3.0, -1.5], [1.75, -0.0625, 0.28125], [0.3125, 0.5625, -1.125]),
        ],
    ),
    "ellis_wormhole": (
        "EllisWormhole", ["t", "l", "theta", "phi"], ["b0"], [1.25], ellis_wormhole, None,
        [
            ([0.5, -2.5, 1.125, 0.25], [1.5, 0.625, -0.125, 0.1875], [-1.25, 0.375, 0.75, -2.0]),
            ([1.75, 0.75, 2.25, 3.5], [1.125, -0.875, 0.3125, -0.0625],
             [-0.8125, -0.5, -1.625, 1.25]),
            ([-4.0, 4.0, 0.625, -1.0], [2.25, 0.4375, 0.0859375, 0.109375],
             [-1.0625, 1.125, 2.5, -3.75]),
        ],
    ),
}
# The closed-form-inverse variant shares the Kerr-Schild metric and samples.
SPECS["kerr_schild_ginv"] = (
    ("KerrSchildInv",) + SPECS["kerr_schild"][1:5] + (kerr_schild_ginv,) + SPECS["kerr_schild"][6:]
)


def compile_metric(builder, ginv_builder, n_coords, n_params):
    """Exact first derivatives of g, then mpmath callables for g, dg (and the ginv form)."""
    xs = sp.symbols(f"x0:{n_coords}", real=True)
    ps = sp.symbols(f"p0:{n_params}", real=True)
    g = builder(xs, ps)
    assert g.shape == (n_coords, n_coords)
    assert g == g.T, "metric builder must be symmetric"
    # dg[k][i][j] = d g_ij / d x^k, differentiated exactly.
    dg = [[[sp.diff(g[i, j], xs[k]) for j in range(n_coords)] for i in range(n_coords)]
          for k in range(n_coords)]
    args = list(xs) + list(ps)
    g_fn = sp.lambdify(args, [list(g.row(i)) for i in range(n_coords)], modules="mpmath", cse=True)
    dg_fn = sp.lambdify(args, dg, modules="mpmath", cse=True)
    ginv_fn = None
    if ginv_builder is not None:
        gi = ginv_builder(xs, ps)
        ginv_fn = sp.lambdify(args, [list(gi.row(i)) for i in range(n_coords)],
                              modules="mpmath", cse=True)
    return g_fn, dg_fn, ginv_fn


def evaluate(fns, params, x, u, p, dps):
    """All reference quantities at one point, as mpf numbers at `dps` digits."""
    g_fn, dg_fn, ginv_fn = fns
    with mpmath.workdps(dps):
        n = len(x)
        args = [mpmath.mpf(v) for v in list(x) + list(params)]
        g = mpmath.matrix(g_fn(*args))
        dg = dg_fn(*args)
        gi = mpmath.inverse(g)
        if ginv_fn is not None:
            gi_closed = mpmath.matrix(ginv_fn(*args))
            err = mpmath.mnorm(gi_closed - gi, 1) / mpmath.mnorm(gi, 1)
            assert err < mpmath.mpf(10) ** (-(dps - 10)), f"closed-form ginv mismatch {err}"
            gi = gi_closed
        # Check g . g^-1 = I to (nearly) working precision.
        ident = g * gi
        for i in range(n):
            for j in range(n):
                want = 1 if i == j else 0
                assert abs(ident[i, j] - want) < mpmath.mpf(10) ** (-(dps - 10)), "g g^-1 != I"
        # Gamma^a_bc = 1/2 g^ad (d_b g_dc + d_c g_db - d_d g_bc)
        lower = [[[(dg[b][d][c] + dg[c][d][b] - dg[d][b][c]) / 2 for c in range(n)]
                  for b in range(n)] for d in range(n)]
        gam = [[[mpmath.fsum(gi[a, d] * lower[d][b][c] for d in range(n)) for c in range(n)]
                for b in range(n)] for a in range(n)]
        for a in range(n):
            for b in range(n):
                for c in range(n):
                    assert gam[a][b][c] == gam[a][c][b], "Gamma not symmetric in b, c"
        uu = [mpmath.mpf(v) for v in u]
        pp = [mpmath.mpf(v) for v in p]
        accel = [-mpmath.fsum(gam[a][b][c] * uu[b] * uu[c] for b in range(n) for c in range(n))
                 for a in range(n)]
        hdx = [mpmath.fsum(gi[a, b] * pp[b] for b in range(n)) for a in range(n)]
        # dp_a = -1/2 (d_a g^bc) p_b p_c = +1/2 (d_a g_bc) v^b v^c with v = g^-1 p, since
        # d_a g^bc = -g^bd (d_a g_de) g^ec.
        hdp = [mpmath.fsum(dg[a][b][c] * hdx[b] * hdx[c] for b in range(n) for c in range(n)) / 2
               for a in range(n)]
        norm = mpmath.fsum(g[a, b] * uu[a] * uu[b] for a in range(n) for b in range(n))
        return {
            "metric": [[g[i, j] for j in range(n)] for i in range(n)],
            "inverse": [[gi[i, j] for j in range(n)] for i in range(n)],
            "christoffel": gam,
            "accel": accel,
            "hamilton_dx": hdx,
            "hamilton_dp": hdp,
            "norm": norm,
        }


def flatten(v):
    if isinstance(v, list):
        for item in v:
            yield from flatten(item)
    else:
        yield v


def to_f64(v):
    """Round an mpf to the nearest f64 (float(mpf) may truncate instead)."""
    if isinstance(v, list):
        return [to_f64(item) for item in v]
    return to_float(mpmath.mpf(v)._mpf_, rnd=round_nearest)


def check_agreement(lo, hi, stem):
    """The 50- and 70-digit runs must agree far beyond f64 precision."""
    with mpmath.workdps(DPS_CHECK):
        for key in lo:
            for a, b in zip(flatten(lo[key]), flatten(hi[key])):
                scale = max(abs(b), mpmath.mpf(1))
                assert abs(a - b) <= mpmath.mpf(10) ** -35 * scale, f"{stem}.{key}: {a} vs {b}"


def textbook_checks(stem, params, x, vals):
    """Closed forms quoted from memory, compared at 50 digits."""
    tol = mpmath.mpf(10) ** -40
    with mpmath.workdps(DPS):
        gam = vals["christoffel"]
        if stem == "sphere":
            th = mpmath.mpf(x[0])
            # Round 2-sphere: Gamma^theta_phiphi = -sin(theta) cos(theta),
            # Gamma^phi_thetaphi = cot(theta) (textbook closed form, from memory).
            assert abs(gam[0][1][1] + mpmath.sin(th) * mpmath.cos(th)) < tol
            assert abs(gam[1][0][1] - mpmath.cot(th)) < tol
            assert abs(gam[1][1][0] - mpmath.cot(th)) < tol
        if stem == "schwarzschild":
            m = mpmath.mpf(params[0])
            r = mpmath.mpf(x[1])
            # Schwarzschild: Gamma^r_tt = m (r - 2m) / r^3, Gamma^t_tr = m / (r (r - 2m))
            # (textbook closed forms, from memory).
            assert abs(gam[1][0][0] - m * (r - 2 * m) / r**3) < tol
            assert abs(gam[0][0][1] - m / (r * (r - 2 * m))) < tol


def main():
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    out_path = os.path.join(root, "tests", "data", "sympy_reference.json")
    metrics = {}
    for stem in sorted(SPECS):
        struct, coords, pnames, params, builder, ginv_builder, samples = SPECS[stem]
        assert len(params) == len(pnames)
        fns = compile_metric(builder, ginv_builder, len(coords), len(params))
        out_samples = []
        for x, u, p in samples:
            assert len(x) == len(u) == len(p) == len(coords)
            assert all(v != 0 for v in list(u) + list(p)), "u and p must be generic"
            vals = evaluate(fns, params, x, u, p, DPS)
            vals_hi = evaluate(fns, params, x, u, p, DPS_CHECK)
            check_agreement(vals, vals_hi, stem)
            textbook_checks(stem, params, x, vals)
            entry = {key: to_f64(val) for key, val in vals.items()}
            entry.update({"x": list(x), "u": list(u), "p": list(p)})
            out_samples.append(entry)
        metrics[stem] = {
            "struct": struct,
            "coords": coords,
            "params": params,
            "param_names": pnames,
            "samples": out_samples,
        }
    doc = {
        "source": f"SymPy {sp.__version__} exact derivatives, mpmath {mpmath.__version__} at "
        f"{DPS} digits (checked at {DPS_CHECK}); scripts/sympy_reference.py",
        "metrics": metrics,
    }
    os.makedirs(os.path.dirname(out_path), exist_ok=True)
    with open(out_path, "w") as fh:
        json.dump(doc, fh, sort_keys=True, indent=1)
        fh.write("\n")
    print(f"wrote {len(metrics)} metrics to {os.path.relpath(out_path, root)}", file=sys.stderr)


if __name__ == "__main__":
    main()
