//! The runtime's integrators driving the macro-generated Schwarzschild metric
//! (`examples/metrics/schwarzschild.gk`) against published results. Geometric units, M = 1,
//! Schwarzschild coordinates (t, r, θ, φ), orbits in the equatorial plane θ = π/2.
//!
//! Circular orbits (S. Chandrasekhar, *The Mathematical Theory of Black Holes*, 1983, §19,
//! eqs. (94)-(95); from memory): E = (1 - 2M/r) / √(1 - 3M/r), L = √(M r) / √(1 - 3M/r),
//! stable for r > 6M; at the innermost stable one, r = 6M, E = √(8/9) and L = 2√3 M. Photons:
//! the critical impact parameter is 3√3 M (same source, §20; from memory).

use geokern::{
    integrate, integrate_with_events, CoordinateCrossing, Crossing, Direction, Event, Method,
    Options, Outcome, StopReason,
};
use std::f64::consts::{FRAC_PI_2, PI};

geokern::include_metric!("examples/metrics/schwarzschild.gk");

const M: f64 = 1.0;

fn black_hole() -> Schwarzschild {
    Schwarzschild::new(M)
}

/// Start (x, u) and proper-time period of the circular equatorial orbit at radius `r`.
fn circular(r: f64) -> ([f64; 4], [f64; 4], f64) {
    let f = 1.0 - 2.0 * M / r;
    let e = f / (1.0 - 3.0 * M / r).sqrt();
    let l = (M * r).sqrt() / (1.0 - 3.0 * M / r).sqrt();
    let uphi = l / (r * r);
    (
        [0.0, r, FRAC_PI_2, 0.0],
        [e / f, 0.0, 0.0, uphi],
        2.0 * PI / uphi,
    )
}

/// Integrates in `chunks` equal pieces; returns the largest |r - r₀| at the chunk ends and the
/// last outcome.
fn radius_excursion(
    x0: [f64; 4],
    u0: [f64; 4],
    lambda: f64,
    chunks: usize,
    options: &Options,
) -> (f64, Outcome<4>) {
    let bh = black_hole();
    let (mut x, mut u) = (x0, u0);
    let mut worst: f64 = 0.0;
    let mut last = None;
    for _ in 0..chunks {
        let out = integrate(&bh, x, u, lambda / chunks as f64, options).expect("integrates");
        assert_eq!(out.stop, StopReason::End);
        worst = worst.max((out.x[1] - x0[1]).abs());
        (x, u) = (out.x, out.u);
        last = Some(out);
    }
    (worst, last.expect("at least one chunk"))
}

#[test]
fn circular_orbit_at_the_isco_stays_at_six_m() {
    let (x0, u0, period) = circular(6.0);
    let bh = black_hole();
    // The generated kernels see the published constants of the ISCO orbit.
    let [p_t, p_phi] = bh.conserved(&x0, &u0);
    assert!((-p_t - (8.0f64 / 9.0).sqrt()).abs() < 1e-15, "E = {}", -p_t);
    assert!((p_phi - 2.0 * 3f64.sqrt() * M).abs() < 1e-14, "L = {p_phi}");
    assert!((bh.norm(&x0, &u0) + 1.0).abs() < 1e-14);
    // The ISCO is only marginally stable, so an integration error would grow there; an
    // accurate run keeps r = 6M through three revolutions.
    let accurate = Options {
        rtol: 1e-12,
        atol: 1e-12,
        ..Options::with_method(Method::DormandPrince853)
    };
    let symplectic = Options {
        fixed_step: Some(0.5),
        ..Options::with_method(Method::GaussLegendre6)
    };
    for options in [accurate, symplectic] {
        let (excursion, out) = radius_excursion(x0, u0, 3.0 * period, 30, &options);
        assert!(
            excursion < 1e-6,
            "{:?}: r strayed by {excursion:e}",
            options.method
        );
        assert!(
            (out.x[3] - 6.0 * PI).abs() < 1e-6,
            "{:?}: three revolutions, φ = {}",
            options.method,
            out.x[3]
        );
        assert!(out.drift.norm < 1e-9, "{:?}", options.method);
    }
}

#[test]
fn circular_orbit_at_ten_m_stays_circular_with_every_method() {
    let (x0, u0, period) = circular(10.0);
    for method in Method::ALL {
        let options = Options {
            rtol: 1e-11,
            atol: 1e-12,
            fixed_step: (!method.is_adaptive()).then_some(1.0),
            ..Options::with_method(method)
        };
        let (excursion, out) = radius_excursion(x0, u0, 5.0 * period, 10, &options);
        assert!(excursion < 1e-6, "{method:?}: r strayed by {excursion:e}");
        assert!(
            (out.x[3] - 10.0 * PI).abs() < 1e-5,
            "{method:?}: five revolutions, φ = {}",
            out.x[3]
        );
    }
}

/// A photon at radius `r0` in the equatorial plane, moving inward with impact parameter `b`
/// (E = 1, L = b).
fn incoming_photon(r0: f64, b: f64) -> ([f64; 4], [f64; 4]) {
    let f = 1.0 - 2.0 * M / r0;
    let ur = -(1.0 - f * b * b / (r0 * r0)).sqrt();
    ([0.0, r0, FRAC_PI_2, 0.0], [1.0 / f, ur, 0.0, b / (r0 * r0)])
}

/// 0 if the photon falls below 1.01 × the horizon radius, 1 if it gets back out to r = 40M.
fn photon_fate(method: Method, b: f64) -> usize {
    let bh = black_hole();
    let (x0, u0) = incoming_photon(30.0, b);
    assert!(bh.norm(&x0, &u0).abs() < 1e-14, "null start");
    let mut capture = CoordinateCrossing::falling_below(1, 2.0 * M * 1.01);
    let mut escape = CoordinateCrossing::rising_above(1, 40.0);
    let mut events: [&mut dyn Event<4>; 2] = [&mut capture, &mut escape];
    let options = Options {
        rtol: 1e-10,
        atol: 1e-12,
        fixed_step: (!method.is_adaptive()).then_some(0.05),
        ..Options::with_method(method)
    };
    let out = integrate_with_events(&bh, x0, u0, 1e4, &options, &mut events).expect("integrates");
    match out.stop {
        StopReason::Event { index, .. } => index,
        other => panic!("{method:?}, b = {b}: neither captured nor escaped ({other:?})"),
    }
}

#[test]
fn photons_on_either_side_of_the_critical_impact_parameter() {
    let critical = 3.0 * 3f64.sqrt() * M;
    for method in [
        Method::DormandPrince54,
        Method::DormandPrince853,
        Method::GaussLegendre6,
    ] {
        assert_eq!(
            photon_fate(method, critical * (1.0 + 1e-4)),
            1,
            "{method:?}: b just above 3√3 M escapes"
        );
        assert_eq!(
            photon_fate(method, critical * (1.0 - 1e-4)),
            0,
            "{method:?}: b just below 3√3 M is captured"
        );
    }
}

/// The complete elliptic integral of the first kind K(m) = ∫₀^{π/2} dθ / √(1 - m sin²θ), by
/// the arithmetic-geometric mean: K(m) = π / (2 AGM(1, √(1 - m))) (M. Abramowitz &
/// I. Stegun, *Handbook of Mathematical Functions*, 1964, 17.6.1; from memory).
fn elliptic_k(m: f64) -> f64 {
    let (mut a, mut g) = (1.0_f64, (1.0 - m).sqrt());
    // Convergence is quadratic: a few steps reach round-off, where |a - g| stalls at an ulp.
    for _ in 0..64 {
        if (a - g).abs() <= 4.0 * f64::EPSILON * a {
            break;
        }
        (a, g) = (0.5 * (a + g), (a * g).sqrt());
    }
    PI / (2.0 * a)
}

#[test]
fn elliptic_k_by_the_arithmetic_geometric_mean() {
    assert_eq!(elliptic_k(0.0), FRAC_PI_2);
    // K(1/2) = 1.854074677301372 (Abramowitz & Stegun, Table 17.1; from memory).
    assert!((elliptic_k(0.5) - 1.854_074_677_301_372).abs() < 1e-15);
    // Against a direct midpoint quadrature of the defining integral.
    let m = 0.8;
    let n = 20_000;
    let quadrature: f64 = (0..n)
        .map(|i| {
            let theta = (i as f64 + 0.5) * FRAC_PI_2 / n as f64;
            1.0 / (1.0 - m * theta.sin().powi(2)).sqrt()
        })
        .sum::<f64>()
        * FRAC_PI_2
        / n as f64;
    assert!((elliptic_k(m) - quadrature).abs() < 1e-9);
}

/// Stops at the first return to periastron: u^r rising through zero.
struct Periastron;

impl Event<4> for Periastron {
    fn value(&self, _lambda: f64, _x: &[f64; 4], u: &[f64; 4]) -> f64 {
        u[1]
    }
    fn direction(&self) -> Direction {
        Direction::Rising
    }
}

#[test]
fn periastron_advance_matches_the_elliptic_integral() {
    // A bound orbit of semi-latus rectum p M and eccentricity e, r between pM/(1+e) and
    // pM/(1-e). With u = 1/r, (du/dφ)² = 2M (u - u₁)(u - u₂)(u - u₃), so φ advances from one
    // periastron to the next by Δφ = 4 √(p / (p - 6 + 2e)) K(4e / (p - 6 + 2e)) (C. Cutler,
    // D. Kennefick & E. Poisson, Phys. Rev. D 50 (1994) 3816, eq. (2.11); Chandrasekhar 1983,
    // §19; from memory).
    let bh = black_hole();
    for (p, e) in [(10.0, 0.3), (7.5, 0.5), (20.0, 0.1)] {
        let (r_peri, r_apo) = (p * M / (1.0 + e), p * M / (1.0 - e));
        // E and L from the two turning points of E² = (1 - 2M/r)(1 + L²/r²), independently
        // of the closed forms above.
        let f = |r: f64| 1.0 - 2.0 * M / r;
        let l2 = (2.0 * M / r_peri - 2.0 * M / r_apo)
            / (f(r_peri) / (r_peri * r_peri) - f(r_apo) / (r_apo * r_apo));
        let energy = (f(r_peri) * (1.0 + l2 / (r_peri * r_peri))).sqrt();
        let x0 = [0.0, r_peri, FRAC_PI_2, 0.0];
        let u0 = [energy / f(r_peri), 0.0, 0.0, l2.sqrt() / (r_peri * r_peri)];
        assert!((bh.norm(&x0, &u0) + 1.0).abs() < 1e-14);

        let options = Options {
            rtol: 1e-12,
            atol: 1e-13,
            ..Options::with_method(Method::DormandPrince853)
        };
        let mut periastron = Periastron;
        let mut events: [&mut dyn Event<4>; 1] = [&mut periastron];
        let out = integrate_with_events(&bh, x0, u0, 1e5, &options, &mut events).unwrap();
        assert!(matches!(out.stop, StopReason::Event { index: 0, .. }));
        assert!((out.x[1] - r_peri).abs() < 1e-8, "back at periastron");

        let k = 4.0 * e / (p - 6.0 + 2.0 * e);
        let exact = 4.0 * (p / (p - 6.0 + 2.0 * e)).sqrt() * elliptic_k(k);
        let measured = out.x[3];
        assert!(
            (measured - exact).abs() < 1e-8,
            "p = {p}, e = {e}: Δφ = {measured}, exact {exact}"
        );
        // The advance exceeds its weak-field value 6πM/p (Einstein 1915): every higher order
        // adds to it.
        assert!(exact - 2.0 * PI > 6.0 * PI * M / p);
    }
}

/// The asymptotic deflection of a photon with impact parameter `b` sent in from (and
/// returning to) r = R: Δφ - π, plus 2 arcsin(b/R) for the two legs beyond R (the flat-space
/// part of φ(∞) - φ(R); what is left out is O(M b³ / R⁴)).
fn measured_deflection(b: f64) -> f64 {
    let radius = 1e5 * M;
    let (x0, u0) = incoming_photon(radius, b);
    let mut back_out = CoordinateCrossing::rising_above(1, radius);
    let mut events: [&mut dyn Event<4>; 1] = [&mut back_out];
    let options = Options {
        rtol: 1e-13,
        atol: 1e-13,
        ..Options::with_method(Method::DormandPrince853)
    };
    let out = integrate_with_events(&black_hole(), x0, u0, 1e7, &options, &mut events)
        .expect("integrates");
    assert!(matches!(out.stop, StopReason::Event { index: 0, .. }));
    out.x[3] - PI + 2.0 * (b / radius).asin()
}

#[test]
fn weak_field_deflection_approaches_four_m_over_b() {
    // α = 4M/b + (15π/4) M²/b² + (128/3) M³/b³ + O(M⁴/b⁴) (C. Keeton & A. Petters,
    // Phys. Rev. D 72 (2005) 104006; the first term Einstein 1915; from memory).
    let mut previous_relative = f64::INFINITY;
    for b in [100.0, 200.0, 400.0, 800.0] {
        let alpha = measured_deflection(b);
        let first = 4.0 * M / b;
        let second = 15.0 * PI / 4.0 * (M / b).powi(2);
        let third = 128.0 / 3.0 * (M / b).powi(3);
        let relative = (alpha - first).abs() / first;
        assert!(
            relative < previous_relative,
            "4M/b is approached as b grows: {relative:e} at b = {b}"
        );
        previous_relative = relative;
        // The second-order term accounts for the difference from 4M/b ...
        assert!(
            ((alpha - first) - second).abs() < 0.05 * second,
            "b = {b}: α - 4M/b = {:e}, second-order term {second:e}",
            alpha - first
        );
        // ... and what remains is the third-order term.
        let rest = alpha - first - second;
        assert!(
            (rest - third).abs() < 0.2 * third,
            "b = {b}: remainder {rest:e}, third-order term {third:e}"
        );
    }
}

/// Bound orbit between `r1` and `r2` (E, L from the turning points, as above).
fn bound_orbit(r1: f64, r2: f64) -> ([f64; 4], [f64; 4], f64) {
    let f = |r: f64| 1.0 - 2.0 * M / r;
    let l2 = (2.0 * M / r1 - 2.0 * M / r2) / (f(r1) / (r1 * r1) - f(r2) / (r2 * r2));
    let e = (f(r1) * (1.0 + l2 / (r1 * r1))).sqrt();
    // Radial period in proper time, Newtonian estimate 2π a^{3/2} (enough to count orbits).
    let a = 0.5 * (r1 + r2);
    (
        [0.0, r1, FRAC_PI_2, 0.0],
        [e / f(r1), 0.0, 0.0, l2.sqrt() / (r1 * r1)],
        2.0 * PI * (a * a * a / M).sqrt(),
    )
}

/// Energy errors (largest |H - H₀| with H = g(u,u)/2, and largest |E - E₀| with E = -p_t) of
/// GL4 and RK4 after `orbits` / 10 and `orbits` orbits of a wide bound orbit, with the same
/// large fixed step of about 1/56 of an orbit.
fn energy_errors(orbits: f64) -> [[(f64, f64); 2]; 2] {
    let bh = black_hole();
    let (x0, u0, period) = bound_orbit(15.0, 25.0);
    let run = |method, orbits: f64| {
        let options = Options {
            fixed_step: Some(10.0),
            max_steps: usize::MAX,
            ..Options::with_method(method)
        };
        let d = integrate(&bh, x0, u0, orbits * period, &options)
            .expect("integrates")
            .drift;
        (0.5 * d.norm, d.conserved()[0])
    };
    [Method::GaussLegendre4, Method::Rk4].map(|m| [run(m, orbits / 10.0), run(m, orbits)])
}

/// Symplectic methods keep a modified Hamiltonian close to H for exponentially long times,
/// so the error of H oscillates without trend, and every Runge-Kutta method keeps the
/// linear invariant p_t of the (x, p) system exactly; a non-symplectic method's energy error
/// grows linearly in time (E. Hairer, C. Lubich & G. Wanner, *Geometric Numerical
/// Integration*, 2nd ed., 2006, Thm. IV.1.5, Thm. IX.8.1 and Sec. I.1; from memory).
fn check_energy_errors(orbits: f64) {
    let [[gl_short, gl_long], [rk_short, rk_long]] = energy_errors(orbits);
    println!(
        "{orbits} orbits: GL4 |ΔH| {:.3e} -> {:.3e}, |ΔE| {:.1e}; RK4 |ΔH| {:.3e} -> {:.3e}, |ΔE| {:.3e} -> {:.3e}",
        gl_short.0, gl_long.0, gl_long.1, rk_short.0, rk_long.0, rk_short.1, rk_long.1
    );
    assert!(
        gl_long.0 < 1.5 * gl_short.0,
        "GL4's error of H must stay bounded: {gl_short:?} -> {gl_long:?}"
    );
    assert!(gl_long.1 < 1e-12, "GL4 keeps p_t: {gl_long:?}");
    // RK4's error of E grows in proportion to the time (tenfold here); its error of H, which
    // starts with an oscillating part, grows more slowly at first.
    assert!(
        rk_long.1 > 5.0 * rk_short.1 && rk_long.0 > 1.5 * rk_short.0,
        "RK4's energy error must grow: {rk_short:?} -> {rk_long:?}"
    );
    assert!(gl_long.0 < rk_long.0);
}

#[test]
fn symplectic_energy_error_stays_bounded_over_many_orbits() {
    // The debug-build version: 300 orbits; the full 10⁴ orbits run with `--ignored`.
    check_energy_errors(300.0);
}

#[test]
#[ignore = "ten thousand orbits: run with `cargo test --release -- --ignored`"]
fn symplectic_energy_error_stays_bounded_over_ten_thousand_orbits() {
    check_energy_errors(1e4);
}

#[test]
fn successive_periastron_advances_are_equal() {
    // A non-terminal event sees every periastron passage, in order of λ; the orbit is
    // periodic in r, so each passage advances φ by the same angle.
    struct Recorder(Vec<Crossing<4>>);
    impl Event<4> for Recorder {
        fn value(&self, _lambda: f64, _x: &[f64; 4], u: &[f64; 4]) -> f64 {
            u[1]
        }
        fn direction(&self) -> Direction {
            Direction::Rising
        }
        fn is_terminal(&self) -> bool {
            false
        }
        fn on_crossing(&mut self, crossing: &Crossing<4>) {
            self.0.push(*crossing);
        }
    }
    let (x0, u0, period) = bound_orbit(8.0, 16.0);
    let mut recorder = Recorder(Vec::new());
    let mut events: [&mut dyn Event<4>; 1] = [&mut recorder];
    let options = Options {
        rtol: 1e-11,
        atol: 1e-12,
        ..Options::default()
    };
    integrate_with_events(&black_hole(), x0, u0, 3.5 * period, &options, &mut events).unwrap();
    assert!(recorder.0.len() >= 2);
    let steps: Vec<f64> = recorder
        .0
        .windows(2)
        .map(|w| w[1].x[3] - w[0].x[3])
        .collect();
    for s in &steps {
        assert!((s - recorder.0[0].x[3]).abs() < 1e-7, "{steps:?}");
    }
}
