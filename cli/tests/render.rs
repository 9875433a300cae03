//! `geokern render`: the shadow's edges against analytic results, disk redshifts against a
//! closed form, and the command end to end. The shadow checks trace only the row or column of
//! pixels they measure, through the library.

mod common;

use common::{example, geokern, root, scratch_dir};
use geokern_cli::render::{
    trace_pixels, DiskChoice, Equations, Hit, RayCounts, Scene, SceneOptions,
};
use geokern_cli::source;
use geokern_cli::tape_metric::Evaluator;
use geokern_symbolic::kernels::KernelSet;

fn kernels(stem: &str) -> KernelSet {
    source::load(&root().join(example(stem)), None)
        .expect("example derives")
        .kernels
}

/// Options for a far camera with no disk.
fn far(distance: f64, inclination: f64, size: usize, half_width: f64) -> SceneOptions {
    SceneOptions {
        distance: Some(distance),
        inclination,
        size: (size, size),
        // tan(fov/2) = half_width / distance: the image's half width spans that impact
        // parameter, roughly.
        fov: Some(2.0 * (half_width / distance).atan()),
        disk: DiskChoice::Off,
        ..SceneOptions::default()
    }
}

fn trace(scene: &Scene, pixels: &[(usize, usize)]) -> Vec<Hit> {
    let mut counts = RayCounts::default();
    let hits = trace_pixels(scene, pixels, &mut counts).expect("traces");
    assert_eq!(counts.rays, pixels.len() as u64);
    assert_eq!(counts.unresolved, 0, "{counts:?}");
    hits
}

/// The shadow's two edges along a line of pixels, in pixel-centre units (pixel k's centre at
/// k): half a pixel outside the first and last shadow pixel. The shadow must be one run.
fn shadow_edges(hits: &[Hit]) -> (f64, f64) {
    let dark: Vec<usize> = (0..hits.len())
        .filter(|&k| hits[k] == Hit::Shadow)
        .collect();
    let (first, last) = (dark[0], dark[dark.len() - 1]);
    assert_eq!(dark.len(), last - first + 1, "one run of shadow: {dark:?}");
    assert!(
        first > 0 && last + 1 < hits.len(),
        "the shadow fits the line"
    );
    assert!(
        hits[..first]
            .iter()
            .chain(&hits[last + 1..])
            .all(|h| matches!(h, Hit::Sky { .. })),
        "sky on both sides"
    );
    (first as f64 - 0.5, last as f64 + 0.5)
}

/// The pixel-centre coordinate of a direction at horizontal angle α with tan α = `tan`, for
/// the pinhole camera: pixel k's direction has tan α = ((k + ½)/W · 2 − 1) tan(fov/2).
fn column_of(tan: f64, width: usize, fov: f64) -> f64 {
    (tan / (0.5 * fov).tan() + 1.0) * width as f64 / 2.0 - 0.5
}

/// Schwarzschild seen from far away: the shadow's radius is the critical impact parameter
/// b = 3√3 M. For a static observer at r_o the shadow's angular radius obeys
/// sin α = 3√3 M √(1 − 2M/r_o) / r_o (Synge 1966, from memory), i.e. b = r_o sin α / √(1 − 2M/r_o).
#[test]
fn schwarzschild_shadow_radius_is_three_root_three_m() {
    let ks = kernels("schwarzschild");
    let (m, r_o, n) = (1.0, 1000.0, 121);
    let scene = Scene::new(&ks, &[m], &far(r_o, 1.0, n, 6.5)).expect("scene");
    let fov = scene.camera.fov;
    let lapse = (1.0 - 2.0 * m / r_o).sqrt();
    let b_crit = 3.0 * 3f64.sqrt() * m;
    let sin_alpha = b_crit * lapse / r_o;
    let tan_alpha = sin_alpha / (1.0 - sin_alpha * sin_alpha).sqrt();
    let want = (column_of(-tan_alpha, n, fov), column_of(tan_alpha, n, fov));
    let centre = n / 2;
    let row: Vec<(usize, usize)> = (0..n).map(|c| (c, centre)).collect();
    let column: Vec<(usize, usize)> = (0..n).map(|r| (centre, r)).collect();
    // One pixel, as an impact parameter.
    let pixel_b = r_o * (2.0 * (0.5 * fov).tan() / n as f64) / lapse;
    for line in [row, column] {
        let (left, right) = shadow_edges(&trace(&scene, &line));
        assert!((left - want.0).abs() <= 1.0, "{left} vs {}", want.0);
        assert!((right - want.1).abs() <= 1.0, "{right} vs {}", want.1);
        // The measured radius, converted back to an impact parameter.
        let half = 0.5 * (right - left);
        let tan = half * 2.0 * (0.5 * fov).tan() / n as f64;
        let b = r_o * (tan / (1.0 + tan * tan).sqrt()) / lapse;
        assert!((b - b_crit).abs() <= pixel_b, "b = {b}, pixel {pixel_b}");
    }
}

/// Kerr, a = 0.9, observer on the equator far away: along the horizontal line through the
/// centre the shadow's edges are the two equatorial circular photon orbits, at
/// r_ph = 2M{1 + cos[(2/3) arccos(∓a/M)]} (Bardeen, Press & Teukolsky 1972, from memory; upper
/// sign prograde), with ξ = L/E = −(r³ − 3Mr² + a²r + a²M)/(a(r − M)) (Bardeen 1973, from
/// memory).
///
/// Image position of a given ξ, derived for this camera: a static observer with frame
/// e₀ = ∂t/√(−g_tt), e₃ = (∂φ − (g_tφ/g_tt)∂t)/N, N² = g_φφ − g_tφ²/g_tt, sees a photon
/// arriving from the direction at angle α to the right (towards +φ) with
/// p = E_loc(e₀ − sin α e₃ + ...), so E = −p_t = E_loc √(−g_tt) and
/// L = p_φ = E_loc (g_tφ/√(−g_tt) − N sin α): sin α = (g_tφ/(−g_tt) − ξ) √(−g_tt) / N.
/// The prograde orbit (ξ > 0) is on the left, the retrograde one on the right.
#[test]
fn kerr_equatorial_shadow_edges_are_the_circular_photon_orbits() {
    let ks = kernels("kerr_bl");
    let (m, a, r_o, n) = (1.0, 0.9, 1000.0, 161);
    let scene =
        Scene::new(&ks, &[m, a], &far(r_o, std::f64::consts::FRAC_PI_2, n, 9.0)).expect("scene");
    let fov = scene.camera.fov;
    let g = scene.camera.metric();
    let (g_tt, g_tp, g_pp) = (g[0][0], g[0][3], g[3][3]);
    let norm = (g_pp - g_tp * g_tp / g_tt).sqrt();
    let column = |sign: f64| {
        let r = 2.0 * m * (1.0 + ((2.0 / 3.0) * (sign * a / m).acos()).cos());
        let xi = -(r.powi(3) - 3.0 * m * r * r + a * a * r + a * a * m) / (a * (r - m));
        let sin_alpha = (g_tp / -g_tt - xi) * (-g_tt).sqrt() / norm;
        column_of(sin_alpha / (1.0 - sin_alpha.powi(2)).sqrt(), n, fov)
    };
    let (prograde, retrograde) = (column(-1.0), column(1.0));
    assert!(prograde < retrograde);
    let row: Vec<(usize, usize)> = (0..n).map(|c| (c, n / 2)).collect();
    let (left, right) = shadow_edges(&trace(&scene, &row));
    assert!((left - prograde).abs() <= 1.0, "{left} vs {prograde}");
    assert!((right - retrograde).abs() <= 1.0, "{right} vs {retrograde}");
}

/// Where a ray with no angular momentum (p_φ = 0: the centre column of a Schwarzschild
/// image) meets the disk, the redshift factor is g = √(1 − 3M/r) / √(1 − 2M/r_o): u^t of a
/// circular orbit is 1/√(1 − 3M/r) (common practice), and the camera's static observer has
/// k_t = √(1 − 2M/r_o) for its normalised rays.
#[test]
fn disk_redshift_on_the_centre_column_matches_the_closed_form() {
    let ks = kernels("schwarzschild");
    let (m, r_o, n) = (1.0, 50.0, 41);
    let options = SceneOptions {
        distance: Some(r_o),
        inclination: 60f64.to_radians(),
        size: (n, n),
        fov: Some(40f64.to_radians()),
        disk: DiskChoice::Range(6.0, 20.0),
        ..SceneOptions::default()
    };
    let scene = Scene::new(&ks, &[m], &options).expect("scene");
    let column: Vec<(usize, usize)> = (0..n).map(|r| (n / 2, r)).collect();
    let hits = trace(&scene, &column);
    let mut seen = 0;
    for hit in hits {
        if let Hit::Disk {
            radius, redshift, ..
        } = hit
        {
            let want = (1.0 - 3.0 * m / radius).sqrt() / (1.0 - 2.0 * m / r_o).sqrt();
            assert!(
                (redshift - want).abs() < 1e-9,
                "r {radius}: {redshift} vs {want}"
            );
            assert!((6.0..=20.0).contains(&radius));
            seen += 1;
        }
    }
    assert!(seen >= 5, "{seen} disk hits");
}

/// The prograde circular orbit's angular velocity from the metric's own Christoffel symbols:
/// Ω = M^½ / (r^{3/2} + a M^½) in Kerr for a > 0 (Bardeen, Press & Teukolsky 1972, from
/// memory); for a < 0 the hole turns the other way, and the co-rotating orbit is the mirror
/// image, Ω = −M^½ / (r^{3/2} + |a| M^½).
#[test]
fn kerr_emitters_turn_at_the_prograde_angular_velocity() {
    let ks = kernels("kerr_bl");
    for a in [0.9, -0.5] {
        let scene = Scene::new(&ks, &[1.0, a], &SceneOptions::default()).expect("scene");
        let mut work = scene.workspace();
        for r in [6.0, 9.5, 20.0] {
            let (omega, u_t) = scene.emitter(&mut work, r).expect("a circular orbit");
            let want = a.signum() / (r.powf(1.5) + a.abs());
            assert!((omega - want).abs() < 1e-13 * want.abs(), "a {a} r {r}");
            assert!(u_t > 1.0);
        }
    }
}

/// Both forms of the equations see the same scene.
#[test]
fn hamilton_and_accel_forms_agree() {
    let ks = kernels("kerr_bl");
    let row: Vec<(usize, usize)> = (0..21).map(|c| (c, 7)).collect();
    let run = |equations| {
        let options = SceneOptions {
            size: (21, 15),
            equations,
            ..SceneOptions::default()
        };
        let scene = Scene::new(&ks, &[1.0, 0.9], &options).expect("scene");
        trace(&scene, &row)
    };
    let (h, u) = (run(Equations::Hamilton), run(Equations::Accel));
    let mut disk = 0;
    for (a, b) in h.iter().zip(&u) {
        match (a, b) {
            (
                Hit::Disk {
                    redshift: g1,
                    radius: r1,
                    ..
                },
                Hit::Disk {
                    redshift: g2,
                    radius: r2,
                    ..
                },
            ) => {
                assert!(
                    (g1 - g2).abs() < 1e-4 && (r1 - r2).abs() < 1e-3,
                    "{a:?} {b:?}"
                );
                disk += 1;
            }
            (Hit::Sky { theta: t1, phi: p1 }, Hit::Sky { theta: t2, phi: p2 }) => {
                let turn = (p1 - p2).rem_euclid(std::f64::consts::TAU);
                let apart = turn.min(std::f64::consts::TAU - turn);
                // Far below a pixel of this image (about 0.035 rad).
                assert!((t1 - t2).abs() < 1e-3 && apart < 1e-3, "{a:?} {b:?}");
            }
            _ => assert_eq!(a, b),
        }
    }
    assert!(disk > 0, "the row crosses the disk");
}

#[test]
fn renders_a_small_png_end_to_end() {
    let dir = scratch_dir("render");
    let out = dir.join("kerr.png");
    let out_text = out.to_string_lossy().into_owned();
    let v = geokern(&[
        "render",
        &example("kerr_bl"),
        "--param",
        "m=1",
        "--param",
        "a=0.9",
        "--size",
        "24x16",
        "--output",
        &out_text,
        "--json",
    ])
    .json();
    assert_eq!(v["rays"], 24 * 16);
    for key in ["shadow", "disk_hits", "sky"] {
        assert!(v[key].as_u64().expect("count") > 0, "{key}: {v}");
    }
    assert!(v["rhs_evaluations_per_ray"].as_f64().expect("number") > 6.0);
    assert!(v["rays_per_second"].as_f64().expect("number") > 0.0);
    let image = image::open(&out).expect("a PNG").to_rgb8();
    assert_eq!(image.dimensions(), (24, 16));
    let black = image.pixels().filter(|p| p.0 == [0, 0, 0]).count();
    assert!(black > 0 && black < 24 * 16);
}

#[test]
fn the_built_in_scene_renders_without_a_file() {
    let dir = scratch_dir("render-scene");
    let out = dir.join("vesper.png");
    let run = geokern(&[
        "render",
        "--scene",
        "vesper",
        "--size",
        "16x10",
        "-o",
        &out.to_string_lossy(),
    ]);
    assert_eq!(run.code, Some(0), "{}", run.stderr);
    assert!(
        run.stdout.starts_with("Vesper: 16×10 image written to"),
        "{}",
        run.stdout
    );
    assert!(run.stdout.contains("rays/s"), "{}", run.stdout);
    assert!(run.stdout.contains("RHS evaluations"), "{}", run.stdout);
    assert_eq!(
        image::open(&out).expect("a PNG").to_rgb8().dimensions(),
        (16, 10)
    );
}

#[test]
fn bad_input_gives_one_clear_line() {
    let dir = scratch_dir("render-bad");
    let out = dir.join("x.png");
    let out = out.to_string_lossy();
    let kerr = example("kerr_bl");
    let (schild, sphere) = (example("kerr_schild"), example("sphere"));
    // Flat space in spherical coordinates: the right layout, but no mass and no horizon.
    let flat = dir.join("flat.gk");
    std::fs::write(
        &flat,
        "struct Flat { coords: [t, r, theta, phi], g[t, t] = -1; g[r, r] = 1;
         g[theta, theta] = r.powi(2); g[phi, phi] = (r * theta.sin()).powi(2); }",
    )
    .expect("scratch file");
    let flat = flat.to_string_lossy().into_owned();
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["render", "no/such/file.gk", "-o", &out], "cannot read"),
        (
            vec![
                "render", &schild, "--param", "m=1", "--param", "a=0.5", "-o", &out,
            ],
            "(time, radius, polar angle, azimuth)",
        ),
        (
            vec!["render", &sphere, "--param", "rho=1", "-o", &out],
            "4-dimensional",
        ),
        (
            vec![
                "render", &kerr, "--param", "m=1", "--param", "a=0.9", "--disk", "6-20", "-o", &out,
            ],
            "RIN:ROUT",
        ),
        (
            vec![
                "render", &kerr, "--param", "m=1", "--param", "a=0.9", "--disk", "1:20", "-o", &out,
            ],
            "outside the horizon",
        ),
        (
            vec![
                "render", &kerr, "--param", "m=1", "--param", "a=0.9", "--size", "0x4", "-o", &out,
            ],
            "WIDTHxHEIGHT",
        ),
        (
            vec!["render", &kerr, "--param", "m=1", "--param", "a=0.9"],
            "--output",
        ),
        (
            vec!["render", "--scene", "nowhere", "-o", &out],
            "unknown scene",
        ),
        (vec!["render", &flat, "-o", &out], "positive mass"),
        (
            // Inside the ergoregion (r < 2M on the equator) no observer stays static.
            vec![
                "render",
                &kerr,
                "--param",
                "m=1",
                "--param",
                "a=0.99",
                "--distance",
                "1.8",
                "--inclination",
                "90",
                "-o",
                &out,
            ],
            "no static observer",
        ),
    ];
    for (args, needle) in cases {
        let run = geokern(&args);
        let line = run.one_error_line();
        assert!(line.contains(needle), "{args:?}: {line}");
    }
}

/// Native code and the lane tape round alike, so every ray ends on the same bits whichever
/// evaluates the right-hand side, in both forms of the equations.
#[test]
fn native_and_tape_rays_are_identical() {
    let ks = kernels("kerr_bl");
    let pixels: Vec<(usize, usize)> = (0..17).flat_map(|c| [(c, 3), (c, 8)]).collect();
    for equations in [Equations::Hamilton, Equations::Accel] {
        let run = |evaluator| {
            let options = SceneOptions {
                size: (17, 13),
                equations,
                evaluator,
                ..SceneOptions::default()
            };
            let scene = Scene::new(&ks, &[1.0, 0.9], &options).expect("scene");
            (scene.evaluator_name(), trace(&scene, &pixels))
        };
        let (tape, native) = (run(Evaluator::Tape), run(Evaluator::Native));
        assert_eq!((tape.0, native.0), ("tape", "native"));
        assert_eq!(
            format!("{:?}", tape.1),
            format!("{:?}", native.1),
            "{equations:?}"
        );
    }
}
