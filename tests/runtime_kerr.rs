//! The runtime's integrators driving macro-generated Kerr metrics against published results.
//! Boyer-Lindquist coordinates (t, r, θ, φ), geometric units, M = 1.
//!
//! Circular equatorial orbits, upper sign prograde, lower retrograde (J. Bardeen, W. Press &
//! S. Teukolsky, ApJ 178 (1972) 347, eqs. (2.16), (2.12), (2.13) and (2.21); from memory):
//!   Ω = ±M^½ / (r^{3/2} ± a M^½),
//!   E = (r^{3/2} - 2M r^½ ± a M^½) / (r^{3/4} (r^{3/2} - 3M r^½ ± 2a M^½)^½),
//!   L = ±M^½ (r² ∓ 2a M^½ r^½ + a²) / (r^{3/4} (r^{3/2} - 3M r^½ ± 2a M^½)^½),
//!   r_isco = M (3 + Z₂ ∓ ((3 - Z₁)(3 + Z₁ + 2Z₂))^½),
//!   Z₁ = 1 + (1 - a²/M²)^⅓ ((1 + a/M)^⅓ + (1 - a/M)^⅓), Z₂ = (3a²/M² + Z₁²)^½.

use geokern::{
    integrate, integrate_with_events, on_shell, CoordinateCrossing, Event, Method, Options,
    StopReason,
};
use std::f64::consts::{FRAC_PI_2, PI};

geokern::include_metric!("examples/metrics/kerr_bl.gk");
geokern::include_metric!("examples/metrics/vesper.gk");

geokern::metric! {
    /// Kerr in Boyer-Lindquist coordinates, with Carter's constant declared as an invariant:
    /// Q = p_θ² + cos²θ (a² (μ² - E²) + L² / sin²θ), E = -p_t, L = p_φ, μ² = -g(u, u)
    /// (B. Carter, Phys. Rev. 174 (1968) 1559; from memory).
    pub struct KerrWithCarter {
        coords: [t, r, theta, phi],
        params: [m, a],
        let sigma = r.powi(2) + (a * theta.cos()).powi(2);
        let delta = r.powi(2) - 2.0 * m * r + a.powi(2);
        let s2 = theta.sin().powi(2);
        g[t, t] = -(1.0 - 2.0 * m * r / sigma);
        g[t, phi] = -2.0 * m * a * r * s2 / sigma;
        g[r, r] = sigma / delta;
        g[theta, theta] = sigma;
        g[phi, phi] = (r.powi(2) + a.powi(2) + 2.0 * m * r * a.powi(2) * s2 / sigma) * s2;
        invariant carter = p[theta].powi(2) + theta.cos().powi(2) * (a.powi(2)
            * (-(p[t] * u[t] + p[r] * u[r] + p[theta] * u[theta] + p[phi] * u[phi])
                - p[t].powi(2))
            + p[phi].powi(2) / s2);
    }
}

const M: f64 = 1.0;

/// Start (x, u) of the circular equatorial orbit at radius `r` built from the published
/// angular velocity alone (u ∝ ∂_t + Ω ∂_φ, normalised), with Ω and the proper-time period.
fn circular(k: &Kerr, r: f64, prograde: bool) -> ([f64; 4], [f64; 4], f64, f64) {
    let s = if prograde { 1.0 } else { -1.0 };
    let omega = s * M.sqrt() / (r.powf(1.5) + s * k.a * M.sqrt());
    let x = [0.0, r, FRAC_PI_2, 0.0];
    let g = k.metric(&x);
    let ut = 1.0 / (-(g[0][0] + 2.0 * g[0][3] * omega + g[3][3] * omega * omega)).sqrt();
    let period = 2.0 * PI / (omega.abs() * ut);
    (x, [ut, 0.0, 0.0, omega * ut], omega, period)
}

/// The published energy and angular momentum of the same orbit.
fn published_energy_and_momentum(a: f64, r: f64, prograde: bool) -> (f64, f64) {
    let s = if prograde { 1.0 } else { -1.0 };
    let (sm, sr) = (M.sqrt(), r.sqrt());
    let den = r.powf(0.75) * (r * sr - 3.0 * M * sr + s * 2.0 * a * sm).sqrt();
    let e = (r * sr - 2.0 * M * sr + s * a * sm) / den;
    let l = s * sm * (r * r - s * 2.0 * a * sm * sr + a * a) / den;
    (e, l)
}

fn isco(a: f64, prograde: bool) -> f64 {
    let chi = a / M;
    let z1 = 1.0 + (1.0 - chi * chi).cbrt() * ((1.0 + chi).cbrt() + (1.0 - chi).cbrt());
    let z2 = (3.0 * chi * chi + z1 * z1).sqrt();
    let s = if prograde { 1.0 } else { -1.0 };
    M * (3.0 + z2 - s * ((3.0 - z1) * (3.0 + z1 + 2.0 * z2)).sqrt())
}

#[test]
fn circular_equatorial_orbits_keep_the_published_angular_velocity() {
    let accurate = Options {
        rtol: 1e-12,
        atol: 1e-12,
        ..Options::with_method(Method::DormandPrince853)
    };
    for (a, r) in [(0.9, 8.0), (0.5, 6.5), (0.99, 12.0)] {
        let k = Kerr::new(M, a);
        for prograde in [true, false] {
            let (x0, u0, omega, period) = circular(&k, r, prograde);
            let case = format!("a = {a}, r = {r}, prograde = {prograde}");
            assert!((k.norm(&x0, &u0) + 1.0).abs() < 1e-13, "{case}");
            // The published E and L are those of this orbit.
            let (e, l) = published_energy_and_momentum(a, r, prograde);
            let [p_t, p_phi] = k.conserved(&x0, &u0);
            assert!((-p_t - e).abs() < 1e-13, "{case}: E {} vs {e}", -p_t);
            assert!((p_phi - l).abs() < 1e-12, "{case}: L {p_phi} vs {l}");
            // The orbit stays at r, in the plane, and turns at Ω in coordinate time.
            let (mut x, mut u) = (x0, u0);
            for _ in 0..12 {
                let out = integrate(&k, x, u, period / 4.0, &accurate).expect("integrates");
                assert!((out.x[1] - r).abs() < 1e-8, "{case}: r = {}", out.x[1]);
                assert!((out.x[2] - FRAC_PI_2).abs() < 1e-12, "{case}");
                (x, u) = (out.x, out.u);
            }
            assert!(
                (x[3] / x[0] - omega).abs() < 1e-10 * omega.abs(),
                "{case}: measured Ω = {}, published {omega}",
                x[3] / x[0]
            );
            assert!((x[3].abs() - 6.0 * PI).abs() < 1e-7, "{case}: three turns");
        }
    }
}

#[test]
fn isco_formula_reduces_to_schwarzschild_and_orders_by_spin() {
    assert!((isco(0.0, true) - 6.0 * M).abs() < 1e-14);
    assert!((isco(0.0, false) - 6.0 * M).abs() < 1e-14);
    // Extreme spin: M prograde and 9M retrograde (same source).
    assert!((isco(1.0, true) - M).abs() < 1e-12);
    assert!((isco(1.0, false) - 9.0 * M).abs() < 1e-12);
    assert!(isco(0.9, true) < isco(0.5, true) && isco(0.5, false) < isco(0.9, false));
}

/// Whether a circular orbit at `r`, kicked outward by δu^r = 10⁻³, stays within 8% of `r`
/// for 30 revolutions (`true`), or leaves that band (`false`).
fn stays_near(k: &Kerr, r: f64, prograde: bool) -> bool {
    let (x0, u0, _, period) = circular(k, r, prograde);
    let kicked = on_shell(k, &x0, [u0[0], 1e-3, 0.0, u0[3]], -1.0).expect("timelike kick");
    let mut inner = CoordinateCrossing::falling_below(1, 0.92 * r);
    let mut outer = CoordinateCrossing::rising_above(1, 1.08 * r);
    let mut events: [&mut dyn Event<4>; 2] = [&mut inner, &mut outer];
    let options = Options {
        rtol: 1e-10,
        atol: 1e-12,
        ..Options::with_method(Method::DormandPrince853)
    };
    let out = integrate_with_events(k, x0, kicked, 30.0 * period, &options, &mut events)
        .expect("integrates");
    match out.stop {
        StopReason::End => true,
        StopReason::Event { .. } => false,
        other => panic!("unexpected stop {other:?}"),
    }
}

#[test]
fn circular_orbits_lose_stability_at_the_published_isco() {
    // The radial epicyclic frequency vanishes at the ISCO (Bardeen, Press & Teukolsky 1972),
    // so the same small kick leaves an orbit inside it and not one outside. With this kick
    // and band the switch lies between 1.01 and 1.02 r_isco for every case below (measured
    // while writing the test); 3% on either side leaves a margin.
    for a in [0.0, 0.5, 0.9] {
        let k = Kerr::new(M, a);
        for prograde in [true, false] {
            let r_isco = isco(a, prograde);
            assert!(
                stays_near(&k, 1.03 * r_isco, prograde),
                "a = {a}, prograde = {prograde}: 3% outside the ISCO ({r_isco:.4}) is stable"
            );
            assert!(
                !stays_near(&k, 0.97 * r_isco, prograde),
                "a = {a}, prograde = {prograde}: 3% inside the ISCO ({r_isco:.4}) is unstable"
            );
        }
    }
}

/// A bound, inclined, eccentric orbit (not a function of the cyclic momenta alone).
fn inclined_orbit<K: geokern::MetricKernels<f64, 4>>(k: &K) -> ([f64; 4], [f64; 4]) {
    let x0 = [0.0, 10.0, 1.0, 0.0];
    let u0 = on_shell(k, &x0, [1.0, 0.02, 0.035, 0.028], -1.0).expect("timelike");
    (x0, u0)
}

#[test]
fn declared_carter_invariant_is_the_published_constant() {
    let a = 0.8;
    let k = KerrWithCarter::new(M, a);
    let (x0, u0) = inclined_orbit(&k);
    let [p_t, p_phi] = k.conserved(&x0, &u0);
    let [q] = k.invariants(&x0, &u0);
    // Q from the conserved momenta and p_θ = Σ u^θ, evaluated here by hand.
    let theta = x0[2];
    let sigma = x0[1].powi(2) + (a * theta.cos()).powi(2);
    let p_theta = sigma * u0[2];
    let expected = p_theta.powi(2)
        + theta.cos().powi(2) * (a * a * (1.0 - p_t * p_t) + p_phi.powi(2) / theta.sin().powi(2));
    assert!((q - expected).abs() < 1e-12 * expected, "{q} vs {expected}");
    assert!(q > 1.0, "an inclined orbit has Q > 0: {q}");
    assert_eq!(KerrWithCarter::<f64>::INVARIANTS, ["carter"]);
}

#[test]
fn carter_constant_is_kept_by_the_integrators() {
    let k = KerrWithCarter::new(M, 0.8);
    let (x0, u0) = inclined_orbit(&k);
    let [q0] = k.invariants(&x0, &u0);
    // About ten radial periods.
    let lambda = 2500.0;
    let adaptive = Options {
        rtol: 1e-11,
        atol: 1e-13,
        ..Options::with_method(Method::DormandPrince853)
    };
    let symplectic = Options {
        fixed_step: Some(1.0),
        ..Options::with_method(Method::GaussLegendre6)
    };
    let mut best = f64::INFINITY;
    for options in [adaptive, symplectic] {
        let out = integrate(&k, x0, u0, lambda, &options).expect("integrates");
        assert_eq!(out.stop, StopReason::End);
        let drift = out.drift.invariants()[0];
        assert!(
            drift < 1e-8 * q0,
            "{:?}: Carter drift {drift:e} of Q = {q0}",
            options.method
        );
        assert!(out.drift.conserved().iter().all(|d| *d < 1e-9));
        best = best.min(drift);
    }
    // A coarse run shows a far larger drift: the monitor sees the integration error.
    let coarse = Options {
        fixed_step: Some(6.0),
        ..Options::with_method(Method::Rk4)
    };
    let rough = integrate(&k, x0, u0, lambda, &coarse).expect("integrates");
    assert!(rough.drift.invariants()[0] > 100.0 * best);
}

#[test]
fn carter_constant_of_the_charged_example_metric_is_kept() {
    // `examples/metrics/vesper.gk` declares the same constant for Kerr-Newman, where it holds
    // for an uncharged particle (Carter 1968).
    let v = Vesper::new(M, 0.6, 0.4);
    let (x0, u0) = inclined_orbit(&v);
    let [q0] = v.invariants(&x0, &u0);
    let options = Options {
        rtol: 1e-11,
        atol: 1e-13,
        ..Options::with_method(Method::DormandPrince853)
    };
    let out = integrate(&v, x0, u0, 2500.0, &options).expect("integrates");
    assert!(out.drift.invariants()[0] < 1e-8 * q0);
    // And Q is not a combination of E and L: changing u^θ alone changes it.
    let other = on_shell(&v, &x0, [1.0, 0.02, 0.02, 0.028], -1.0).expect("timelike");
    let [q1] = v.invariants(&x0, &other);
    assert!((q1 - q0).abs() > 1e-3 * q0);
}
