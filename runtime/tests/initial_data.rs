//! Initial-data helpers: mass-shell velocities, static frames, pinhole rays.

mod common;

use common::{kerr, Schwarzschild};
use geokern_runtime::{
    integrate_with_events, on_shell, pinhole_ray, static_frame, CoordinateCrossing, Error, Event,
    MetricKernels, Options, StopReason,
};
use std::f64::consts::FRAC_PI_2;

fn inner(g: &[[f64; 4]; 4], a: &[f64; 4], b: &[f64; 4]) -> f64 {
    (0..4)
        .map(|i| (0..4).map(|j| g[i][j] * a[i] * b[j]).sum::<f64>())
        .sum()
}

#[test]
fn static_frame_is_orthonormal_in_kerr() {
    let k = kerr(1.0, 0.9);
    let x = [0.0, 6.0, 1.0, 0.5];
    let frame = static_frame(&k, &x).unwrap();
    let g = k.metric(&x);
    for a in 0..4 {
        for b in 0..4 {
            let eta = if a != b {
                0.0
            } else if a == 0 {
                -1.0
            } else {
                1.0
            };
            assert!(
                (inner(&g, &frame[a], &frame[b]) - eta).abs() < 1e-13,
                "g(e{a}, e{b})"
            );
        }
    }
    // The observer is static: its 4-velocity points along ∂_t only.
    assert!(frame[0][0] > 0.0 && frame[0][1..].iter().all(|c| *c == 0.0));
    // Inside the ergoregion (r < 2M on the equator) no static observer exists.
    let inside = [0.0, 1.95, FRAC_PI_2, 0.0];
    assert!(matches!(
        static_frame(&k, &inside),
        Err(Error::InvalidInput { .. })
    ));
}

#[test]
fn on_shell_gives_future_directed_unit_and_null_vectors() {
    let k = kerr(1.0, 0.5);
    let x = [0.0, 8.0, 1.3, 0.0];
    let u = on_shell(&k, &x, [0.0, 0.1, 0.01, 0.02], -1.0).unwrap();
    assert!((k.norm(&x, &u) + 1.0).abs() < 1e-13 && u[0] > 0.0);
    let n = on_shell(&k, &x, [-3.0, 0.1, 0.01, 0.02], 0.0).unwrap();
    assert!(k.norm(&x, &n).abs() < 1e-13 && n[0] > 0.0);
}

#[test]
fn pinhole_rays_are_null_and_see_the_shadow() {
    // A camera at r = 30M looking at a Schwarzschild hole (forward = -e_r): the central pixel
    // falls in, a pixel near the image corner (impact parameter ≈ 30 tan(30°) ≈ 17M > 3√3 M)
    // escapes. (Shadow radius 3√3 M: Carroll, Sec. 5.6, from memory.)
    let bh = Schwarzschild { m: 1.0 };
    let x = [0.0, 30.0, FRAC_PI_2, 0.0];
    let mut frame = static_frame(&bh, &x).unwrap();
    frame[1] = frame[1].map(|c| -c); // look inward
    let g = bh.metric(&x);
    let fate = |col, row| {
        let k = pinhole_ray(&frame, 1, 3, 2, col, row, 21, 21, 60f64.to_radians()).unwrap();
        assert!(inner(&g, &k, &k).abs() < 1e-13);
        let mut horizon = CoordinateCrossing::falling_below(1, 2.02);
        let mut far = CoordinateCrossing::rising_above(1, 60.0);
        let mut events: [&mut dyn Event<4>; 2] = [&mut horizon, &mut far];
        let out = integrate_with_events(&bh, x, k, 1e4, &Options::default(), &mut events).unwrap();
        match out.stop {
            StopReason::Event { index, .. } => index,
            other => panic!("{other:?}"),
        }
    };
    assert_eq!(fate(10, 10), 0, "central pixel is captured");
    assert_eq!(fate(20, 10), 1, "edge pixel escapes");
    assert!(pinhole_ray(&frame, 1, 1, 2, 0, 0, 4, 4, 1.0).is_err());
    assert!(pinhole_ray(&frame, 1, 3, 2, 4, 0, 4, 4, 1.0).is_err());
}
