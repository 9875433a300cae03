//! Kerr geodesics (Boyer-Lindquist coordinates, M = 1) against published facts.
//!
//! Circular equatorial prograde orbits (J. Bardeen, W. Press & S. Teukolsky, ApJ 178 (1972)
//! 347, eqs. (2.12)-(2.16), from memory):
//!   Ω = M^½ / (r^{3/2} + a M^½),
//!   E = (r^{3/2} - 2M r^½ + a M^½) / (r^{3/4} (r^{3/2} - 3M r^½ + 2a M^½)^½),
//!   L = M^½ (r² - 2a M^½ r^½ + a²) / (r^{3/4} (r^{3/2} - 3M r^½ + 2a M^½)^½).
//! Carter's constant is conserved along every geodesic (B. Carter, Phys. Rev. 174 (1968) 1559).

mod common;

use common::kerr;
use geokern_runtime::{integrate, Method, MetricKernels, Options, StopReason};
use std::f64::consts::{FRAC_PI_2, PI};

const M: f64 = 1.0;

/// (x, u, proper-time period) of the prograde circular equatorial orbit at radius r.
fn prograde_circular(a: f64, r: f64) -> ([f64; 4], [f64; 4], f64) {
    let sr = r.sqrt();
    let den = r.powf(0.75) * (r * sr - 3.0 * M * sr + 2.0 * a * M.sqrt()).sqrt();
    let e = (r * sr - 2.0 * M * sr + a * M.sqrt()) / den;
    let l = M.sqrt() * (r * r - 2.0 * a * M.sqrt() * sr + a * a) / den;
    let x = [0.0, r, FRAC_PI_2, 0.0];
    let gi = kerr(M, a).inverse_metric(&x);
    let p = [-e, 0.0, 0.0, l];
    let u: [f64; 4] = core::array::from_fn(|i| (0..4).map(|j| gi[i][j] * p[j]).sum());
    let omega = M.sqrt() / (r * sr + a * M.sqrt());
    // dφ/dτ = Ω dt/dτ; one revolution takes Δτ = 2π / (Ω u^t).
    (x, u, 2.0 * PI / (omega * u[0]))
}

#[test]
fn bardeen_press_teukolsky_orbit_is_consistent() {
    // E, L from the published formulas must give a unit timelike vector whose angular
    // velocity u^φ/u^t is the published Ω: checks the fixture's metric against the paper.
    let (a, r) = (0.9, 8.0);
    let (x, u, _) = prograde_circular(a, r);
    let k = kerr(M, a);
    assert!(
        (k.norm(&x, &u) + 1.0).abs() < 1e-13,
        "norm {}",
        k.norm(&x, &u)
    );
    let omega = M.sqrt() / (r * r.sqrt() + a * M.sqrt());
    assert!((u[3] / u[0] - omega).abs() < 1e-14);
    // And the radial acceleration vanishes: it is a circular orbit of this metric.
    let acc = k.geodesic_accel(&x, &u);
    assert!(acc[1].abs() < 1e-14, "radial acceleration {}", acc[1]);
}

#[test]
fn prograde_circular_orbit_stays_circular() {
    let (a, r) = (0.9, 8.0);
    let (x0, u0, period) = prograde_circular(a, r);
    let k = kerr(M, a);
    for method in [Method::DormandPrince853, Method::GaussLegendre6] {
        let opts = Options {
            rtol: 1e-11,
            atol: 1e-12,
            ..Options::with_method(method)
        };
        let opts = if method.is_adaptive() {
            opts
        } else {
            Options {
                fixed_step: Some(1.0),
                ..opts
            }
        };
        let (mut x, mut u) = (x0, u0);
        for _ in 0..8 {
            let out = integrate(&k, x, u, period / 4.0, &opts).expect("integrates");
            assert_eq!(out.stop, StopReason::End);
            assert!((out.x[1] - r).abs() < 1e-7, "{method:?}: r = {}", out.x[1]);
            assert!((out.x[2] - FRAC_PI_2).abs() < 1e-12);
            (x, u) = (out.x, out.u);
        }
        assert!(
            (x[3] - 4.0 * PI).abs() < 1e-6,
            "{method:?}: two revolutions, φ = {}",
            x[3]
        );
    }
}

#[test]
fn carter_constant_is_monitored_and_conserved() {
    // A generic bound orbit off the equator; Carter's constant Q is not a function of the
    // cyclic momenta, so its drift is an independent check of the integration.
    let k = kerr(M, 0.7);
    let x0 = [0.0, 9.0, 1.2, 0.0];
    let raw = [1.0, 0.05, 0.03, 0.035];
    // Scale u^t so that g(u,u) = -1 exactly (solve the quadratic in u^t).
    let g = k.metric(&x0);
    let (aa, bb) = (g[0][0], 2.0 * g[0][3] * raw[3]);
    let cc =
        g[1][1] * raw[1] * raw[1] + g[2][2] * raw[2] * raw[2] + g[3][3] * raw[3] * raw[3] + 1.0;
    let ut = (-bb - (bb * bb - 4.0 * aa * cc).sqrt()) / (2.0 * aa);
    let u0 = [ut, raw[1], raw[2], raw[3]];
    assert!((k.norm(&x0, &u0) + 1.0).abs() < 1e-12);
    let mut q0 = [0.0];
    k.invariants(&x0, &u0, &mut q0);
    assert!(q0[0] > 1.0, "an inclined orbit has Q > 0: {}", q0[0]);

    let fine = Options {
        rtol: 1e-11,
        atol: 1e-13,
        ..Options::with_method(Method::DormandPrince853)
    };
    let out = integrate(&k, x0, u0, 600.0, &fine).unwrap();
    let carter = out.drift.invariants()[0];
    assert!(
        carter < 1e-7 * q0[0],
        "Carter drift {carter:e} of Q = {}",
        q0[0]
    );
    assert!(out.drift.conserved().iter().all(|d| *d < 1e-8));
    assert!(out.drift.norm < 1e-8);

    // A coarse run must show a much larger drift: the monitor sees integration error.
    let coarse = Options {
        fixed_step: Some(6.0),
        ..Options::with_method(Method::Rk4)
    };
    let rough = integrate(&k, x0, u0, 600.0, &coarse).unwrap();
    assert!(
        rough.drift.invariants()[0] > 100.0 * carter,
        "{:e} vs {carter:e}",
        rough.drift.invariants()[0]
    );
}
