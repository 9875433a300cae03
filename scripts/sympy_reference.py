#!/usr/bin/env python3
"""Independent reference values for the geokern test suite.

SymPy (core only: symbols, diff, lambdify) together with mpmath is the independent source of
every number in tests/data/sympy_reference.json. Each metric is written here a second time, by
hand, in SymPy; this script never reads the .gk declarations, so a mistake in geokern's parser,
differentiator or simplifier cannot leak into the reference.

Method: the metric components are differentiated exactly (twice) with sympy.diff, then the
components and their first and second derivatives are evaluated with mpmath at 50 significant
digits. The inverse metric, the Christoffel symbols, the geodesic acceleration, Hamilton's
equations, the norm and the curvature (Riemann, Ricci, Ricci scalar, Kretschmann) are assembled
from those numbers by plain high-precision linear algebra (a symbolic inverse of the Kerr-Schild
metric would take far too long). The whole computation is repeated at 70 digits and the two runs
must agree to better than 1e-35 relative, so every stored f64 is correctly rounded. Curvature
entries that cancel to zero (the Ricci tensor of a vacuum metric) are left by the 50-digit run as
residues far below f64 resolution; they are stored as exact zeros (see `snap_zero`).

Curvature convention: R^a_bcd = d_c Gamma^a_db - d_d Gamma^a_cb + Gamma^a_ce Gamma^e_db
- Gamma^a_de Gamma^e_cb, stored as riemann[a][b][c][d]; R_bd = R^a_bad; R = g^bd R_bd;
K = R_abcd R^abcd.

Parameters and sample points are chosen exactly representable in binary floating point, so the
f64 inputs of the Rust tests are the very numbers used here.

Rerun from the repository root (needs Python 3 with sympy and mpmath; takes well under a minute):

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


_COMPILED = {}


def compile_metric(builder, ginv_builder, n_coords, n_params):
    """Exact first and second derivatives of g, then mpmath callables for g, dg, d2g (and the
    ginv form)."""
    xs = sp.symbols(f"x0:{n_coords}", real=True)
    ps = sp.symbols(f"p0:{n_params}", real=True)
    args = list(xs) + list(ps)
    ginv_fn = None
    if ginv_builder is not None:
        gi = ginv_builder(xs, ps)
        ginv_fn = sp.lambdify(args, [list(gi.row(i)) for i in range(n_coords)],
                              modules="mpmath", cse=True)
    # Two stems share the Kerr-Schild metric; derive it once.
    key = (builder, n_coords, n_params)
    if key not in _COMPILED:
        _COMPILED[key] = derive_metric(builder, xs, ps)
    return _COMPILED[key] + (ginv_fn,)


def derive_metric(builder, xs, ps):
    """mpmath callables for g, dg and (dg, d2g)."""
    n_coords = len(xs)
    g = builder(xs, ps)
    assert g.shape == (n_coords, n_coords)
    assert g == g.T, "metric builder must be symmetric"
    # dg[k][i][j] = d g_ij / d x^k, differentiated exactly.
    dg = [[[sp.diff(g[i, j], xs[k]) for j in range(n_coords)] for i in range(n_coords)]
          for k in range(n_coords)]
    args = list(xs) + list(ps)
    g_fn = sp.lambdify(args, [list(g.row(i)) for i in range(n_coords)], modules="mpmath", cse=True)
    dg_fn = sp.lambdify(args, dg, modules="mpmath", cse=True)
    d2g_fn = second_derivatives(g, xs, args)
    return g_fn, dg_fn, d2g_fn


def second_derivatives(g, xs, args):
    """An mpmath callable for (dg, d2g), d2g[k][l][i][j] = d^2 g_ij / dx^k dx^l, exactly.

    Differentiating the components twice as whole expressions is hopeless for Kerr-Schild (the
    nested square roots swell until SymPy needs minutes just to print them). Instead the
    components are split by sympy.cse into a chain of links w = e(x, earlier links), and the
    chain rule is applied link by link: every link is differentiated exactly with sympy.diff as
    a small expression, and its first and second derivatives become links of their own that
    later links refer to. The result is exact; only the evaluation order differs from expanding
    everything. The chain's first derivatives come out too, and evaluate() checks them against
    the plain sympy.diff ones.
    """
    n = len(xs)
    base = set(args)
    chain = []  # (symbol, expression), each expression using base symbols and earlier links
    d1 = {}  # link symbol -> [d link / dx^k for each k], a link symbol or 0
    d2 = {}  # link symbol -> {(k, l): d^2 link / dx^k dx^l, k <= l}
    of_d1 = {}  # first-derivative link symbol -> (the link it differentiates, k)

    def second(w, k, l):
        return d2[w][(min(k, l), max(k, l))]

    def total(e, l):
        """d e / dx^l for e in base symbols, links and their first derivatives."""
        terms = [sp.diff(e, xs[l])]
        for sym in sorted(e.free_symbols - base, key=lambda v: v.name):
            if sym in of_d1:
                w, k = of_d1[sym]
                dv = second(w, k, l)
            else:
                dv = d1[sym][l]
            if dv != 0:
                terms.append(sp.diff(e, sym) * dv)
        return sp.Add(*terms)

    def bind(name, e):
        if e == 0:
            return sp.Integer(0)
        sym = sp.Symbol(name, real=True)
        chain.append((sym, e))
        return sym

    def add_link(name, e):
        sym = bind(name, e)
        if sym == 0:
            d1[sym] = [0] * n
            d2[sym] = {(k, l): 0 for k in range(n) for l in range(k, n)}
            return sym
        first_exprs = [total(e, k) for k in range(n)]
        firsts = [bind(f"d{name}_{k}", first_exprs[k]) for k in range(n)]
        d1[sym] = firsts
        d2[sym] = {}
        for k in range(n):
            if firsts[k] != 0:
                of_d1[firsts[k]] = (sym, k)
        for k in range(n):
            for l in range(k, n):
                dd = total(first_exprs[k], l) if firsts[k] != 0 else 0
                d2[sym][(k, l)] = bind(f"dd{name}_{k}_{l}", dd)
        return sym

    comps = [(i, j) for i in range(n) for j in range(i, n)]
    links, reduced = sp.cse([g[i, j] for i, j in comps],
                            symbols=sp.numbered_symbols("cse", real=True))
    rename = {}
    for idx, (w, e) in enumerate(links):
        rename[w] = add_link(f"w{idx}", e.xreplace(rename))
    outs = {}
    for (i, j), e in zip(comps, reduced):
        outs[(i, j)] = outs[(j, i)] = add_link(f"g{i}_{j}_", e.xreplace(rename))
    dg = [[[d1[outs[(i, j)]][k] for j in range(n)] for i in range(n)] for k in range(n)]
    d2g = [[[[second(outs[(i, j)], k, l) for j in range(n)] for i in range(n)] for l in range(n)]
           for k in range(n)]
    return sp.lambdify(args, [dg, d2g], modules="mpmath", cse=lambda _: (chain, [dg, d2g]))


def evaluate(fns, params, x, u, p, dps):
    """All reference quantities at one point, as mpf numbers at `dps` digits."""
    g_fn, dg_fn, d2g_fn, ginv_fn = fns
    with mpmath.workdps(dps):
        n = len(x)
        args = [mpmath.mpf(v) for v in list(x) + list(params)]
        g = mpmath.matrix(g_fn(*args))
        dg = dg_fn(*args)
        dg_chain, d2g = d2g_fn(*args)
        for k in range(n):
            for i in range(n):
                for j in range(n):
                    err = abs(dg_chain[k][i][j] - dg[k][i][j])
                    assert err <= mpmath.mpf(10) ** -(dps - 10) * max(1, abs(dg[k][i][j])), \
                        "chain-rule first derivative disagrees with sympy.diff"
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
        vals = {
            "metric": [[g[i, j] for j in range(n)] for i in range(n)],
            "inverse": [[gi[i, j] for j in range(n)] for i in range(n)],
            "christoffel": gam,
            "accel": accel,
            "hamilton_dx": hdx,
            "hamilton_dp": hdp,
            "norm": norm,
        }
        vals.update(curvature(g, gi, dg, d2g, lower, gam))
        return vals


def curvature(g, gi, dg, d2g, lower, gam):
    """Riemann, Ricci, Ricci scalar and Kretschmann from g, its derivatives and Gamma.

    Runs inside the caller's working precision. d_k Gamma^a_bc = (d_k g^ad) Gamma_dbc +
    g^ad d_k Gamma_dbc, with d_k g^ad = -g^ae (d_k g_ef) g^fd (from differentiating
    g^-1 g = I), so no symbolic inverse is ever formed.
    """
    n = len(gam)
    rn = range(n)
    dgi = [[[-mpmath.fsum(gi[a, e] * dg[k][e][f] * gi[f, d] for e in rn for f in rn)
             for d in rn] for a in rn] for k in rn]
    # dlower[k][d][b][c] = d_k Gamma_dbc = 1/2 (d_k d_b g_dc + d_k d_c g_db - d_k d_d g_bc)
    dlower = [[[[(d2g[k][b][d][c] + d2g[k][c][d][b] - d2g[k][d][b][c]) / 2 for c in rn]
                for b in rn] for d in rn] for k in rn]
    # dgam[k][a][b][c] = d_k Gamma^a_bc
    dgam = [[[[mpmath.fsum(dgi[k][a][d] * lower[d][b][c] + gi[a, d] * dlower[k][d][b][c]
                           for d in rn) for c in rn] for b in rn] for a in rn] for k in rn]
    riemann = [[[[dgam[c][a][d][b] - dgam[d][a][c][b]
                  + mpmath.fsum(gam[a][c][e] * gam[e][d][b] - gam[a][d][e] * gam[e][c][b]
                                for e in rn)
                  for d in rn] for c in rn] for b in rn] for a in rn]
    ricci = [[mpmath.fsum(riemann[a][b][a][d] for a in rn) for d in rn] for b in rn]
    ricci_scalar = mpmath.fsum(gi[b, d] * ricci[b][d] for b in rn for d in rn)
    # K = R_abcd R^abcd: lower the first index once, raise the last three one at a time.
    low = [[[[mpmath.fsum(g[a, e] * riemann[e][b][c][d] for e in rn) for d in rn] for c in rn]
            for b in rn] for a in rn]
    up = riemann
    up = [[[[mpmath.fsum(up[a][e][c][d] * gi[e, b] for e in rn) for d in rn] for c in rn]
           for b in rn] for a in rn]
    up = [[[[mpmath.fsum(up[a][b][e][d] * gi[e, c] for e in rn) for d in rn] for c in rn]
           for b in rn] for a in rn]
    up = [[[[mpmath.fsum(up[a][b][c][e] * gi[e, d] for e in rn) for d in rn] for c in rn]
           for b in rn] for a in rn]
    kretschmann = mpmath.fsum(low[a][b][c][d] * up[a][b][c][d]
                              for a in rn for b in rn for c in rn for d in rn)
    return {
        "riemann": riemann,
        "ricci": ricci,
        "ricci_scalar": ricci_scalar,
        "kretschmann": kretschmann,
        "riemann_lowered": low,
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


def snap_zero(lo, hi):
    """Riemann and Ricci entries that cancel to zero, as exact zeros.

    A vanishing curvature entry (the Ricci tensor of a vacuum metric, a Riemann component that
    is zero by symmetry of the metric) is computed as a difference of terms of the size of
    the curvature, so the 50-digit run leaves a residue near 1e-50 of that size instead of 0.
    An entry below 1e-30 of its term scale in both the 50- and the 70-digit run is stored as
    0.0; any true value that small would round away against that scale in f64 anyway.
    """
    with mpmath.workdps(DPS_CHECK):
        s_riem = max_abs(hi["riemann"])
        s_gi = max(1, max_abs(hi["inverse"]))
        # Ricci entries are sums of Riemann entries; the Ricci scalar adds a factor g^bd.
        scales = {"riemann": s_riem, "ricci": s_riem, "ricci_scalar": s_riem * s_gi}
        out = {}
        for key, scale in scales.items():
            cut = mpmath.mpf(10) ** -30 * scale

            def snap(a, b):
                if isinstance(a, list):
                    return [snap(p, q) for p, q in zip(a, b)]
                return mpmath.mpf(0) if abs(a) < cut and abs(b) < cut else a

            out[key] = snap(lo[key], hi[key])
        return out


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
        curvature_checks(stem, params, x, vals)


def max_abs(v):
    """The largest magnitude in a nested list of numbers."""
    return max(abs(item) for item in flatten(v))


def curvature_checks(stem, params, x, vals):
    """Identities of the Riemann tensor and closed-form curvature invariants, at 50 digits."""
    with mpmath.workdps(DPS):
        riem = vals["riemann"]
        low = vals["riemann_lowered"]
        ric = vals["ricci"]
        n = len(riem)
        rn = range(n)
        scale = max_abs(riem) * max(1, max_abs(vals["metric"])) * max(1, max_abs(vals["inverse"]))
        tol = mpmath.mpf(10) ** -35 * scale
        for a in rn:
            for b in rn:
                for c in rn:
                    for d in rn:
                        # Antisymmetry in the last pair (common practice). The formula is
                        # antisymmetric term by term, so this guards the index bookkeeping.
                        assert abs(riem[a][b][c][d] + riem[a][b][d][c]) < tol, "R^a_bcd != -R^a_bdc"
                        # R_abcd = -R_bacd and R_abcd = R_cdab hold only if Gamma and its
                        # derivatives are right: a real test of the numbers (common practice).
                        assert abs(low[a][b][c][d] + low[b][a][c][d]) < tol, "R_abcd != -R_bacd"
                        assert abs(low[a][b][c][d] - low[c][d][a][b]) < tol, "R_abcd != R_cdab"
                        # First Bianchi identity R^a_bcd + R^a_cdb + R^a_dbc = 0 (common practice).
                        cyc = riem[a][b][c][d] + riem[a][c][d][b] + riem[a][d][b][c]
                        assert abs(cyc) < tol, "first Bianchi identity"
        for b in rn:
            for d in rn:
                assert abs(ric[b][d] - ric[d][b]) < tol, "Ricci not symmetric"
        k = vals["kretschmann"]
        rs = vals["ricci_scalar"]
        if stem in ("schwarzschild", "kerr_bl", "kerr_schild", "kerr_schild_ginv", "tangherlini"):
            # Vacuum solutions: the Ricci tensor vanishes (common practice).
            assert max_abs(ric) < tol, f"{stem}: Ricci not zero"
            assert abs(rs) < tol, f"{stem}: Ricci scalar not zero"
        if stem == "schwarzschild":
            m = mpmath.mpf(params[0])
            r = mpmath.mpf(x[1])
            # Schwarzschild Kretschmann scalar K = 48 m^2 / r^6 (from memory).
            want = 48 * m**2 / r**6
            assert abs(k - want) < mpmath.mpf(10) ** -40 * want, f"K = {k}, want {want}"
        if stem in ("kerr_bl", "kerr_schild", "kerr_schild_ginv"):
            m, a = (mpmath.mpf(v) for v in params)
            if stem == "kerr_bl":
                r = mpmath.mpf(x[1])
                cth = mpmath.cos(mpmath.mpf(x[2]))
            else:
                # Boyer-Lindquist r and cos(theta) of a Kerr-Schild point, from the same quartic
                # as the metric builder.
                px, py, pz = (mpmath.mpf(v) for v in x[1:])
                b = px**2 + py**2 + pz**2 - a**2
                r = mpmath.sqrt((b + mpmath.sqrt(b**2 + 4 * a**2 * pz**2)) / 2)
                cth = pz / r
            ac2 = (a * cth) ** 2
            # Kerr Kretschmann scalar K = 48 m^2 (r^2 - a^2 cos^2)(r^4 - 14 a^2 r^2 cos^2
            # + a^4 cos^4) / (r^2 + a^2 cos^2)^6 (from memory).
            want = (48 * m**2 * (r**2 - ac2) * (r**4 - 14 * r**2 * ac2 + ac2**2)
                    / (r**2 + ac2) ** 6)
            assert abs(k - want) < mpmath.mpf(10) ** -35 * abs(want), f"{stem}: K = {k}"
        if stem == "tangherlini":
            mu = mpmath.mpf(params[0])
            r = mpmath.mpf(x[1])
            # Five-dimensional Tangherlini with f = 1 - mu/r^2: K = 72 mu^2 / r^8 (from memory).
            want = 72 * mu**2 / r**8
            assert abs(k - want) < mpmath.mpf(10) ** -40 * want, f"K = {k}, want {want}"
        if stem == "ellis_wormhole":
            b0 = mpmath.mpf(params[0])
            ll = mpmath.mpf(x[1])
            # Ellis wormhole ds^2 = -dt^2 + dl^2 + (l^2 + b0^2) dOmega^2:
            # R = -2 b0^2 / (l^2 + b0^2)^2 (from memory).
            want = -2 * b0**2 / (ll**2 + b0**2) ** 2
            assert abs(rs - want) < mpmath.mpf(10) ** -40, f"R = {rs}, want {want}"
        if stem == "sphere":
            rho = mpmath.mpf(params[0])
            # Round 2-sphere of radius rho: R = 2 / rho^2 (common practice).
            assert abs(rs - 2 / rho**2) < mpmath.mpf(10) ** -40, f"R = {rs}"
        if stem == "flrw":
            q = mpmath.mpf(params[0])
            t = mpmath.mpf(x[0])
            # Flat FLRW: R = 6 (a''/a + (a'/a)^2); with a = t^q that is 6 q (2q - 1) / t^2
            # (common practice).
            want = 6 * q * (2 * q - 1) / t**2
            assert abs(rs - want) < mpmath.mpf(10) ** -40, f"R = {rs}, want {want}"


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
            vals.update(snap_zero(vals, vals_hi))
            del vals["riemann_lowered"]
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
