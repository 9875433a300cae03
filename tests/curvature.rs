//! Curvature kernels (`options: [curvature]`) against published closed forms.

use geokern::{integrate, Method, Options};

geokern::metric! {
    /// Schwarzschild black hole with curvature kernels.
    pub struct SchwarzschildC {
        coords: [t, r, theta, phi],
        params: [m],
        options: [curvature],
        let f = 1.0 - 2.0 * m / r;
        g[t, t] = -f;
        g[r, r] = 1.0 / f;
        g[theta, theta] = r.powi(2);
        g[phi, phi] = (r * theta.sin()).powi(2);
    }

    /// Kerr black hole with curvature kernels.
    pub struct KerrC {
        coords: [t, r, theta, phi],
        params: [m, a],
        options: [curvature],
        let sigma = r.powi(2) + (a * theta.cos()).powi(2);
        let delta = r.powi(2) - 2.0 * m * r + a.powi(2);
        g[t, t] = -(1.0 - 2.0 * m * r / sigma);
        g[t, phi] = -2.0 * m * a * r * theta.sin().powi(2) / sigma;
        g[r, r] = sigma / delta;
        g[theta, theta] = sigma;
        g[phi, phi] = (r.powi(2) + a.powi(2)
            + 2.0 * m * r * (a * theta.sin()).powi(2) / sigma) * theta.sin().powi(2);
    }

    /// Round 2-sphere with curvature kernels.
    pub struct SphereC {
        coords: [theta, phi],
        params: [rho],
        options: [curvature],
        line_element = rho.powi(2) * (dtheta.powi(2) + theta.sin().powi(2) * dphi.powi(2));
    }

    /// de Sitter space, static patch, Hubble rate h.
    pub struct DeSitterC {
        coords: [t, r, theta, phi],
        params: [h],
        options: [curvature],
        let f = 1.0 - (h * r).powi(2);
        g[t, t] = -f;
        g[r, r] = 1.0 / f;
        g[theta, theta] = r.powi(2);
        g[phi, phi] = (r * theta.sin()).powi(2);
    }

    /// Flat FLRW with scale factor t^q.
    pub struct FlrwC {
        coords: [t, x, y, z],
        params: [q],
        options: [curvature],
        let a = t.powf(q);
        g[t, t] = -1;
        g[x, x] = a.powi(2);
        g[y, y] = a.powi(2);
        g[z, z] = a.powi(2);
    }

    /// Reissner-Nordström: mass m, charge e.
    pub struct ReissnerNordstromC {
        coords: [t, r, theta, phi],
        params: [m, e],
        options: [curvature],
        let f = 1.0 - 2.0 * m / r + (e / r).powi(2);
        g[t, t] = -f;
        g[r, r] = 1.0 / f;
        g[theta, theta] = r.powi(2);
        g[phi, phi] = (r * theta.sin()).powi(2);
    }
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

fn max_abs<const N: usize>(m: &[[f64; N]; N]) -> f64 {
    m.iter().flatten().fold(0.0, |acc, v| acc.max(v.abs()))
}

#[test]
fn schwarzschild_kretschmann_and_vacuum() {
    // K = 48 M² / r⁶ (Kretschmann's scalar of Schwarzschild; e.g. Misner, Thorne & Wheeler;
    // from memory). Ricci vanishes: a vacuum solution.
    let m = 1.25;
    let bh: SchwarzschildC = SchwarzschildC::new(m);
    for (r, th) in [(3.0_f64, 0.7), (9.0, 1.4), (40.0, 2.2)] {
        let x = [0.0, r, th, 0.3];
        assert!(rel(bh.kretschmann(&x), 48.0 * m * m / r.powi(6)) < 1e-12);
        let scale = bh
            .riemann(&x)
            .iter()
            .flatten()
            .flatten()
            .flatten()
            .fold(0.0_f64, |a, v| a.max(v.abs()));
        assert!(max_abs(&bh.ricci(&x)) < 1e-13 * scale);
    }
}

#[test]
fn kerr_kretschmann_closed_form() {
    // K = 48 M² (r² − χ²)((r² + χ²)² − 16 r² χ²) / (r² + χ²)⁶, χ = a cos θ
    // (Henry 2000, "Kretschmann scalar for a Kerr-Newman black hole"; from memory).
    let (m, a) = (1.0, 0.9);
    let bh: KerrC = KerrC::new(m, a);
    for (r, th) in [(2.5_f64, 0.6), (6.0, 1.3), (15.0, 2.5)] {
        let x = [0.0, r, th, 0.0];
        let c2 = (a * th.cos()).powi(2);
        let s2 = r * r + c2;
        let want = 48.0 * m * m * (r * r - c2) * (s2 * s2 - 16.0 * r * r * c2) / s2.powi(6);
        assert!(
            rel(bh.kretschmann(&x), want) < 1e-10,
            "r={r}: {} vs {want}",
            bh.kretschmann(&x)
        );
        let scale = bh
            .riemann(&x)
            .iter()
            .flatten()
            .flatten()
            .flatten()
            .fold(0.0_f64, |a, v| a.max(v.abs()));
        assert!(max_abs(&bh.ricci(&x)) < 1e-12 * scale);
    }
}

#[test]
fn sphere_de_sitter_and_flrw_scalars() {
    // Round sphere of radius ρ: R = 2/ρ² (common practice).
    let s: SphereC = SphereC::new(2.5);
    assert!(rel(s.ricci_scalar(&[1.1, 0.2]), 2.0 / 6.25) < 1e-13);
    // de Sitter: R = 12 H² (e.g. Carroll, Spacetime and Geometry, ch. 8; from memory).
    let ds: DeSitterC = DeSitterC::new(0.3);
    assert!(rel(ds.ricci_scalar(&[0.0, 1.7, 1.0, 0.5]), 12.0 * 0.09) < 1e-12);
    // Flat FLRW: R = 6 (a''/a + (a'/a)²); for a = t^q that is 6 q (2q − 1) / t²
    // (e.g. Carroll, ch. 8; from memory).
    let q = 0.625;
    let fr: FlrwC = FlrwC::new(q);
    let t = 1.75_f64;
    assert!(
        rel(
            fr.ricci_scalar(&[t, 0.1, 0.2, 0.3]),
            6.0 * q * (2.0 * q - 1.0) / (t * t)
        ) < 1e-12
    );
    // Einstein tensor trace: G^a_a = −R in four dimensions (common practice).
    let x = [t, 0.1, 0.2, 0.3];
    let (gi, ge) = (fr.inverse_metric(&x), fr.einstein(&x));
    let trace: f64 = (0..4)
        .flat_map(|a| (0..4).map(move |b| (a, b)))
        .map(|(a, b)| gi[a][b] * ge[a][b])
        .sum();
    assert!(rel(trace, -fr.ricci_scalar(&x)) < 1e-12);
}

#[test]
fn reissner_nordstrom_is_trace_free_but_not_ricci_flat() {
    // An electromagnetic field's stress tensor is trace-free, so R = 0 while R_ab ≠ 0
    // (common practice).
    let rn: ReissnerNordstromC = ReissnerNordstromC::new(1.0, 0.6);
    let x = [0.0, 4.0, 1.0, 0.0];
    let ric = rn.ricci(&x);
    assert!(rn.ricci_scalar(&x).abs() < 1e-14 * max_abs(&ric));
    // R_θθ = e²/r² for Reissner-Nordström (from memory).
    assert!(rel(ric[2][2], 0.36 / 16.0) < 1e-12);
}

#[test]
fn engine_proves_schwarzschild_and_kerr_ricci_flat() {
    // Both are vacuum solutions of Einstein's equations (Schwarzschild 1916, Kerr 1963): every
    // Ricci component must come out as proved zero, not merely zero at sample points.
    use geokern_symbolic::geometry::ZeroStatus;
    use geokern_symbolic::model::{compile_with, CompileOptions};
    use geokern_symbolic::parse::parse_str;
    let status = |file: &str| {
        let path = format!("{}/examples/metrics/{file}", env!("CARGO_MANIFEST_DIR"));
        let text = std::fs::read_to_string(path).expect("example file");
        let parsed = parse_str(&text).expect("parses");
        let options = CompileOptions {
            curvature: true,
            prove_zeros: true,
        };
        let ks = compile_with(&parsed.metrics[0], &options).expect("compiles");
        (ks.ricci_zeros, ks.ricci_scalar_zero)
    };
    for file in ["schwarzschild.gk", "kerr_bl.gk"] {
        let (ricci, scalar) = status(file);
        assert_eq!(ricci.len(), 10);
        assert!(
            ricci.iter().all(|(_, s)| *s == ZeroStatus::Proved),
            "{file}: {ricci:?}"
        );
        assert_eq!(scalar, Some(ZeroStatus::Proved));
    }
}

#[test]
fn tidal_stretching_matches_two_nearby_geodesics() {
    // Two particles released from rest at r and r + δ fall radially; their proper separation
    // L obeys d²L/dτ² = (2M/r³) L (radial tidal stretching; Misner, Thorne & Wheeler §31.2;
    // from memory). The deviation kernel gives the same coefficient, and direct integration of
    // both geodesics agrees with it.
    let m = 1.0;
    let bh: SchwarzschildC = SchwarzschildC::new(m);
    // Far from the hole (r = 100M) so that the relativistic simultaneity correction, of
    // relative size M/(2r), stays below the tolerance.
    let r0 = 100.0_f64;
    let f = |r: f64| 1.0 - 2.0 * m / r;
    let at_rest = |r: f64| [1.0 / f(r).sqrt(), 0.0, 0.0, 0.0];
    let x = [0.0, r0, 1.2, 0.0];
    let xi = [0.0, 1.0, 0.0, 0.0];
    let dev = bh.geodesic_deviation(&x, &at_rest(r0), &xi);
    assert!(
        rel(dev[1], 2.0 * m / r0.powi(3)) < 1e-12,
        "radial: {}",
        dev[1]
    );
    let xi_th = [0.0, 0.0, 1.0, 0.0];
    let dev_th = bh.geodesic_deviation(&x, &at_rest(r0), &xi_th);
    assert!(
        rel(dev_th[2], -m / r0.powi(3)) < 1e-12,
        "transverse: {}",
        dev_th[2]
    );

    let delta = 1e-3;
    let tau = 10.0;
    let opts = Options {
        method: Method::DormandPrince853,
        rtol: 1e-13,
        atol: 1e-14,
        ..Options::default()
    };
    let a = integrate(&bh, x, at_rest(r0), tau, &opts).expect("integrates");
    let b = integrate(
        &bh,
        [0.0, r0 + delta, 1.2, 0.0],
        at_rest(r0 + delta),
        tau,
        &opts,
    )
    .expect("integrates");
    let proper = |r1: f64, r2: f64| (r2 - r1) / f(0.5 * (r1 + r2)).sqrt();
    let l0 = proper(r0, r0 + delta);
    let l1 = proper(a.x[1], b.x[1]);
    let k = 2.0 * m / r0.powi(3);
    let predicted = l0 * (k.sqrt() * tau).cosh();
    assert!(
        rel(l1 - l0, predicted - l0) < 0.02,
        "measured {}, predicted {}",
        l1 - l0,
        predicted - l0
    );
}
