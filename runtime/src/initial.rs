//! Initial data: velocities on the mass shell, the orthonormal frame of a static observer,
//! and the ray through a pixel of a pinhole camera.

use crate::error::Error;
use crate::monitor::project_time_component;
use crate::MetricKernels;

/// `g(a, b)` for the metric components `g`.
fn inner<const N: usize>(g: &[[f64; N]; N], a: &[f64; N], b: &[f64; N]) -> f64 {
    (0..N)
        .map(|i| (0..N).map(|j| g[i][j] * a[i] * b[j]).sum::<f64>())
        .sum()
}

/// The velocity with spatial components `u[1..]` whose time component `u[0]` makes
/// g(u, u) = `target` (−1 for a timelike, 0 for a null geodesic), choosing the
/// future-directed root (u⁰ > 0; the one nearer `u[0]` if both are positive).
///
/// ```
/// use geokern_runtime::{on_shell, MetricKernels};
/// # struct Minkowski;
/// # impl MetricKernels<f64, 2> for Minkowski {
/// #     fn coordinate_names(&self) -> &[&str] { &["t", "x"] }
/// #     fn metric(&self, _: &[f64; 2]) -> [[f64; 2]; 2] { [[-1.0, 0.0], [0.0, 1.0]] }
/// #     fn inverse_metric(&self, x: &[f64; 2]) -> [[f64; 2]; 2] { self.metric(x) }
/// #     fn christoffel(&self, _: &[f64; 2]) -> [[[f64; 2]; 2]; 2] { [[[0.0; 2]; 2]; 2] }
/// #     fn geodesic_accel(&self, _: &[f64; 2], _: &[f64; 2]) -> [f64; 2] { [0.0; 2] }
/// #     fn hamilton_rhs(&self, _: &[f64; 2], p: &[f64; 2]) -> ([f64; 2], [f64; 2]) { ([-p[0], p[1]], [0.0; 2]) }
/// #     fn parallel_transport(&self, _: &[f64; 2], _: &[f64; 2], _: &[f64; 2]) -> [f64; 2] { [0.0; 2] }
/// #     fn norm(&self, _: &[f64; 2], u: &[f64; 2]) -> f64 { -u[0] * u[0] + u[1] * u[1] }
/// #     fn conserved_names(&self) -> &[&str] { &[] }
/// #     fn conserved(&self, _: &[f64; 2], _: &[f64; 2], _: &mut [f64]) {}
/// #     fn invariant_names(&self) -> &[&str] { &[] }
/// #     fn invariants(&self, _: &[f64; 2], _: &[f64; 2], _: &mut [f64]) {}
/// # }
/// let u = on_shell(&Minkowski, &[0.0, 0.0], [0.0, 0.75], -1.0)?;
/// assert!((u[0] - 1.25).abs() < 1e-15); // u^t = √(1 + 0.75²): speed 0.6, γ = 1.25
/// # Ok::<(), geokern_runtime::Error>(())
/// ```
pub fn on_shell<M: MetricKernels<f64, N>, const N: usize>(
    metric: &M,
    x: &[f64; N],
    u: [f64; N],
    target: f64,
) -> Result<[f64; N], Error> {
    let g = metric.metric(x);
    // Both roots of g(v, v) = target in v⁰, by projecting from far above and far below.
    let scale = 1.0 + u.iter().map(|c| c.abs()).fold(0.0, f64::max);
    let given = u.first().copied().unwrap_or(0.0);
    let candidates = [given, 1e8 * scale, -1e8 * scale].map(|start| {
        let mut v = u;
        if let Some(t) = v.first_mut() {
            *t = start;
        }
        project_time_component(&g, &mut v, target).then_some(v)
    });
    // The root nearest the given u⁰ if it is future-directed, else the larger root.
    candidates
        .into_iter()
        .flatten()
        .find(|v| v.first().is_some_and(|t| *t > 0.0))
        .ok_or(Error::InvalidInput {
            reason: "no future-directed velocity with these spatial components",
        })
}

/// The orthonormal frame of the static observer at `x` (worldline along coordinate 0), by
/// Gram-Schmidt with the metric on the coordinate basis ∂₀, ∂₁, …: `frame[0]` is the
/// observer's 4-velocity (g = −1), `frame[i]` for i ≥ 1 the spatial axes (g = +1), each `frame[i]`
/// built from ∂ᵢ. Fails where no static observer exists (g₀₀ ≥ 0, e.g. inside an ergoregion)
/// or the basis degenerates.
pub fn static_frame<M: MetricKernels<f64, N>, const N: usize>(
    metric: &M,
    x: &[f64; N],
) -> Result<[[f64; N]; N], Error> {
    let g = metric.metric(x);
    let mut frame = [[0.0; N]; N];
    let mut signs = [0.0; N];
    for i in 0..N {
        let mut e = [0.0; N];
        e[i] = 1.0;
        for j in 0..i {
            let c = inner(&g, &e, &frame[j]) * signs[j];
            for (ek, fk) in e.iter_mut().zip(frame[j].iter()) {
                *ek -= c * fk;
            }
        }
        let n = inner(&g, &e, &e);
        let wanted = if i == 0 { -1.0 } else { 1.0 };
        if !(n.is_finite() && n * wanted > 0.0) {
            return Err(Error::InvalidInput {
                reason: "no static orthonormal frame here (g_00 >= 0 or degenerate metric)",
            });
        }
        let scale = 1.0 / libm::sqrt(n.abs());
        frame[i] = e.map(|c| c * scale);
        signs[i] = wanted;
    }
    Ok(frame)
}

/// The null vector for pixel `(column, row)` of a `width × height` pinhole camera with
/// horizontal field of view `fov` (radians), carried by the observer whose orthonormal frame
/// is `frame` (as from [`static_frame`]), looking along `frame[forward]` with `frame[up]`
/// up and `frame[right]` to the right.
///
/// Returns `k = -e₀ + n`, with `n` the unit spatial direction through the pixel centre: the
/// past-directed tangent of the light ray that reaches the camera from that direction, so
/// that integrating it forward in λ traces the ray back to where it came from.
#[allow(clippy::too_many_arguments)]
pub fn pinhole_ray<const N: usize>(
    frame: &[[f64; N]; N],
    forward: usize,
    right: usize,
    up: usize,
    column: usize,
    row: usize,
    width: usize,
    height: usize,
    fov: f64,
) -> Result<[f64; N], Error> {
    if forward.max(right).max(up) >= N || forward == 0 || right == 0 || up == 0 {
        return Err(Error::InvalidInput {
            reason: "camera axes must be distinct spatial frame indices",
        });
    }
    if forward == right || forward == up || right == up {
        return Err(Error::InvalidInput {
            reason: "camera axes must be distinct spatial frame indices",
        });
    }
    if width == 0
        || height == 0
        || column >= width
        || row >= height
        || !(fov > 0.0 && fov < core::f64::consts::PI)
    {
        return Err(Error::InvalidInput {
            reason: "pixel outside the image, or field of view not in (0, pi)",
        });
    }
    // Image plane at unit distance; pixel centres; rows grow downwards.
    let half = libm::tan(0.5 * fov);
    let px = ((column as f64 + 0.5) / width as f64 * 2.0 - 1.0) * half;
    let py = (1.0 - (row as f64 + 0.5) / height as f64 * 2.0) * half * height as f64 / width as f64;
    let norm = libm::sqrt(1.0 + px * px + py * py);
    let (a, b, c) = (1.0 / norm, px / norm, py / norm);
    Ok(core::array::from_fn(|i| {
        -frame[0][i] + a * frame[forward][i] + b * frame[right][i] + c * frame[up][i]
    }))
}
