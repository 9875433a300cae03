//! How an orbit around a Kerr black hole depends on the hole's mass and spin, by running the
//! generated kernels on dual numbers.
//!
//! `Kerr<Dual<2>>` carries, beside each value, its derivatives with respect to two marked
//! variables: here the parameters m and a. Stepping an orbit with kernels of that type
//! (fourth-order Runge-Kutta written below for any scalar) gives the end point together
//! with its exact derivatives ∂x/∂m and ∂x/∂a, the derivatives of the discrete method, in a
//! single run. The same orbit stepped in `f64` by the runtime's RK4 with the parameters
//! nudged either way gives central differences to compare against.
//!
//! Run: `cargo run --example spin_sensitivity`.

use geokern::{integrate, on_shell, Dual, Method, MetricKernels, Options, Scalar};

geokern::include_metric!("examples/metrics/kerr_bl.gk");

type D = Dual<2>;

const MASS: f64 = 1.0;
const SPIN: f64 = 0.6;
const START: [f64; 4] = [0.0, 12.0, 1.2, 0.0];
/// Spatial velocity components; u^t follows from g(u, u) = -1.
const SPATIAL: [f64; 3] = [0.01, 0.02, 0.025];
const STEP: f64 = 0.5;
const TAU: f64 = 300.0;

/// `a + h b` componentwise.
fn axpy<T: Scalar>(a: &[T; 4], h: T, b: &[T; 4]) -> [T; 4] {
    core::array::from_fn(|i| a[i] + h * b[i])
}

/// One classic Runge-Kutta step of dx/dλ = u, du/dλ = geodesic_accel(x, u).
fn rk4_step<T: Scalar, K: MetricKernels<T, 4>>(k: &K, x: &mut [T; 4], u: &mut [T; 4], h: T) {
    let half = h * T::from_f64(0.5);
    let a1 = k.geodesic_accel(x, u);
    let (x2, u2) = (axpy(x, half, u), axpy(u, half, &a1));
    let a2 = k.geodesic_accel(&x2, &u2);
    let (x3, u3) = (axpy(x, half, &u2), axpy(u, half, &a2));
    let a3 = k.geodesic_accel(&x3, &u3);
    let (x4, u4) = (axpy(x, h, &u3), axpy(u, h, &a3));
    let a4 = k.geodesic_accel(&x4, &u4);
    let sixth = h / T::from_f64(6.0);
    let two = T::from_f64(2.0);
    for i in 0..4 {
        x[i] = x[i] + sixth * (u[i] + two * u2[i] + two * u3[i] + u4[i]);
        u[i] = u[i] + sixth * (a1[i] + two * a2[i] + two * a3[i] + a4[i]);
    }
}

/// The future-directed u^t that puts u on the unit mass shell, in any scalar type:
/// g_tt (u^t)² + 2 g_tφ u^φ u^t + (g_ij u^i u^j + 1) = 0, with g_tt < 0 outside the ergoregion.
fn unit_time_component<T: Scalar, K: MetricKernels<T, 4>>(k: &K, x: &[T; 4], u: &[T; 4]) -> T {
    let g = k.metric(x);
    let one = T::from_f64(1.0);
    let b = g[0][3] * u[3];
    let c = g[1][1] * u[1] * u[1] + g[2][2] * u[2] * u[2] + g[3][3] * u[3] * u[3] + one;
    (-b - (b * b - g[0][0] * c).sqrt()) / g[0][0]
}

/// The end point after `TAU` with dual-number kernels: values and gradients w.r.t. (m, a).
fn dual_run() -> [D; 4] {
    let hole = Kerr::<D>::new(D::variable(MASS, 0), D::variable(SPIN, 1));
    let mut x = START.map(D::constant);
    let mut u = [0.0, SPATIAL[0], SPATIAL[1], SPATIAL[2]].map(D::constant);
    u[0] = unit_time_component(&hole, &x, &u);
    let steps = (TAU / STEP).round() as usize;
    for _ in 0..steps {
        rk4_step(&hole, &mut x, &mut u, D::constant(STEP));
    }
    x
}

/// The end point after `TAU` with the runtime's fixed-step RK4 in f64.
fn plain_run(m: f64, a: f64) -> Result<[f64; 4], geokern::Error> {
    let hole = Kerr::new(m, a);
    let u0 = on_shell(
        &hole,
        &START,
        [0.0, SPATIAL[0], SPATIAL[1], SPATIAL[2]],
        -1.0,
    )?;
    let options = Options {
        fixed_step: Some(STEP),
        ..Options::with_method(Method::Rk4)
    };
    Ok(integrate(&hole, START, u0, TAU, &options)?.x)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dual = dual_run();
    let plain = plain_run(MASS, SPIN)?;
    let eps = 1e-6;
    let dm = [plain_run(MASS + eps, SPIN)?, plain_run(MASS - eps, SPIN)?];
    let da = [plain_run(MASS, SPIN + eps)?, plain_run(MASS, SPIN - eps)?];
    println!("Kerr m = {MASS}, a = {SPIN}: orbit from r = 12, θ = 1.2 after proper time {TAU}");
    println!("coord  value         d/dm (dual)   d/dm (diff)   d/da (dual)   d/da (diff)");
    let mut worst: f64 = 0.0;
    for (i, name) in ["t", "r", "theta", "phi"].iter().enumerate() {
        let fd_m = (dm[0][i] - dm[1][i]) / (2.0 * eps);
        let fd_a = (da[0][i] - da[1][i]) / (2.0 * eps);
        let [d_m, d_a] = dual[i].gradient;
        println!(
            "{name:<6} {:<13.6} {d_m:<13.6} {fd_m:<13.6} {d_a:<13.6} {fd_a:<13.6}",
            dual[i].value
        );
        worst = worst
            .max((dual[i].value - plain[i]).abs() / plain[i].abs().max(1.0))
            .max((d_m - fd_m).abs() / d_m.abs().max(1.0))
            .max((d_a - fd_a).abs() / d_a.abs().max(1.0));
    }
    println!("largest relative disagreement between the two: {worst:.1e}");
    if worst > 1e-5 {
        return Err(format!("dual-number derivatives disagree with differences: {worst:e}").into());
    }
    Ok(())
}
