//! Christoffel symbols against closed forms from the textbooks.
#![allow(clippy::needless_range_loop)]

geokern::metric! {
    /// Round 2-sphere of radius rho.
    pub struct Sphere2 {
        coords: [theta, phi],
        params: [rho],
        g[theta, theta] = rho.powi(2);
        g[phi, phi] = (rho * theta.sin()).powi(2);
    }

    /// Schwarzschild black hole of mass m.
    pub struct Schw {
        coords: [t, r, theta, phi],
        params: [m],
        let f = 1.0 - 2.0 * m / r;
        g[t, t] = -f;
        g[r, r] = 1.0 / f;
        g[theta, theta] = r.powi(2);
        g[phi, phi] = (r * theta.sin()).powi(2);
    }
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-14 * (1.0 + b.abs())
}

#[test]
fn sphere_symbols() {
    // Γ^θ_φφ = −sin θ cos θ and Γ^φ_θφ = cot θ for the round sphere, independent of its
    // radius (standard textbook result, e.g. Carroll, Spacetime and Geometry, ch. 3; from
    // memory).
    let s = Sphere2::new(2.5);
    for theta in [0.3_f64, 1.0, 2.0, 2.9] {
        let g = s.christoffel(&[theta, 0.7]);
        assert!(close(g[0][1][1], -theta.sin() * theta.cos()));
        assert!(close(g[1][0][1], 1.0 / theta.tan()));
        assert!(close(g[1][1][0], 1.0 / theta.tan()));
        assert_eq!(g[0][0][0], 0.0);
        assert_eq!(g[0][0][1], 0.0);
        assert_eq!(g[1][0][0], 0.0);
        assert_eq!(g[1][1][1], 0.0);
    }
}

#[test]
fn schwarzschild_symbols() {
    // The nine independent nonzero symbols of Schwarzschild in Schwarzschild coordinates
    // (e.g. Carroll, Spacetime and Geometry, eq. 5.53; from memory); every other symbol is an
    // exact zero.
    let m = 1.25;
    let bh = Schw::new(m);
    let (t, r, th, ph) = (0, 1, 2, 3);
    for (rr, theta) in [(3.0_f64, 0.4_f64), (7.5, 1.2), (40.0, 2.6)] {
        let gam = bh.christoffel(&[0.0, rr, theta, 0.3]);
        let d = rr - 2.0 * m;
        let (s, c) = theta.sin_cos();
        let expected = [
            (t, t, r, m / (rr * d)),
            (r, t, t, m * d / rr.powi(3)),
            (r, r, r, -m / (rr * d)),
            (r, th, th, -d),
            (r, ph, ph, -d * s * s),
            (th, r, th, 1.0 / rr),
            (th, ph, ph, -s * c),
            (ph, r, ph, 1.0 / rr),
            (ph, th, ph, c / s),
        ];
        let mut nonzero = 0;
        for a in 0..4 {
            for b in 0..4 {
                for cc in 0..4 {
                    let want = expected
                        .iter()
                        .find(|e| e.0 == a && ((e.1, e.2) == (b, cc) || (e.2, e.1) == (b, cc)))
                        .map(|e| e.3);
                    match want {
                        Some(w) => {
                            nonzero += 1;
                            assert!(close(gam[a][b][cc], w), "Γ[{a}][{b}][{cc}]");
                        }
                        None => assert_eq!(gam[a][b][cc], 0.0, "Γ[{a}][{b}][{cc}]"),
                    }
                }
            }
        }
        assert_eq!(nonzero, 13); // 9 independent, 4 of them with b ≠ c counted twice
    }
}

#[test]
fn single_precision_kernels_track_double() {
    let bh32 = Schw::new(1.25_f32);
    let bh64 = Schw::new(1.25_f64);
    let (x32, u32_) = ([0.0_f32, 9.0, 1.1, 0.2], [1.1_f32, -0.2, 0.01, 0.03]);
    let (x64, u64_) = (x32.map(f64::from), u32_.map(f64::from));
    let a32 = bh32.geodesic_accel(&x32, &u32_);
    let a64 = bh64.geodesic_accel(&x64, &u64_);
    let scale = a64.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
    for (a, b) in a32.iter().zip(&a64) {
        // A few ulps of f32 (2^-24 ≈ 6e-8) per operation.
        assert!((f64::from(*a) - b).abs() <= 1e-5 * scale, "{a} vs {b}");
    }
}

#[test]
fn conserved_momenta_follow_the_cyclic_coordinates() {
    let bh = Schw::new(1.0);
    let x = [0.0, 10.0, 1.0, 0.0];
    let u = [1.2, 0.1, 0.02, 0.04];
    let f = 1.0 - 2.0 / 10.0;
    // p_t = g_tt u^t, p_φ = g_φφ u^φ.
    assert!(close(bh.momentum_t(&x, &u), -f * 1.2));
    assert!(close(
        bh.momentum_phi(&x, &u),
        (10.0 * 1.0_f64.sin()).powi(2) * 0.04
    ));
    assert_eq!(Schw::<f64>::CONSERVED, ["p_t", "p_phi"]);
}
