//! The pinhole camera: a static observer at (r, θ, φ = 0) looking at the centre.
//!
//! Orientation, which the shadow tests rely on: the camera looks along −∂r (inwards), its
//! image's up is −∂θ (towards the pole θ = 0, the spin axis of a Kerr hole with a > 0), and its
//! image's right is +∂φ (the direction of increasing azimuth, the sense of a > 0 rotation).
//! So a photon reaching the right half of the image carries negative angular momentum p_φ
//! (it comes from the +φ side, moving against +φ).

use geokern_runtime::{pinhole_ray, static_frame, MetricKernels};

use crate::error::CliError;
use crate::tape_metric::{TapeMetric, TapeSet};

/// A static observer's pinhole camera.
#[derive(Clone, Debug)]
pub struct Camera {
    /// Where the camera is: (t, r, θ, φ) = (0, distance, inclination, 0).
    pub position: [f64; 4],
    /// Image width in pixels.
    pub width: usize,
    /// Image height in pixels.
    pub height: usize,
    /// Horizontal field of view, radians.
    pub fov: f64,
    /// The observer's orthonormal frame, reordered for the image: 4-velocity, forward, up,
    /// right.
    frame: [[f64; 4]; 4],
    /// g_ab at the camera, to lower the rays' indices.
    metric: [[f64; 4]; 4],
}

impl Camera {
    /// The camera at radius `distance` and polar angle `inclination` (radians) of `set`'s
    /// metric. Fails where no static observer exists (inside an ergoregion) or for an empty
    /// image or a field of view outside (0, π).
    pub fn new(
        set: &TapeSet,
        distance: f64,
        inclination: f64,
        (width, height): (usize, usize),
        fov: f64,
    ) -> Result<Camera, CliError> {
        if width == 0 || height == 0 {
            return Err(CliError::usage("the image must have at least one pixel"));
        }
        if !(fov > 0.0 && fov < std::f64::consts::PI) {
            return Err(CliError::usage(
                "the field of view must lie strictly between 0 and 180 degrees",
            ));
        }
        let position = [0.0, distance, inclination, 0.0];
        let metric_view = TapeMetric::<4>::new(set)
            .ok_or_else(|| CliError::Unsuited("render needs a 4-dimensional metric".to_string()))?;
        let frame = static_frame(&metric_view, &position).map_err(|_| {
            CliError::Unsuited(format!(
                "no static observer at r = {distance}, θ = {:.4}° (g_tt ≥ 0 there: inside an \
                 ergoregion?); move the camera further out",
                inclination.to_degrees()
            ))
        })?;
        let metric = metric_view.metric(&position);
        let negated = |v: [f64; 4]| v.map(|c| -c);
        Ok(Camera {
            position,
            width,
            height,
            fov,
            frame: [frame[0], negated(frame[1]), negated(frame[2]), frame[3]],
            metric,
        })
    }

    /// The past-directed null tangent k^a of the ray through the centre of pixel
    /// `(column, row)` (row 0 at the top), normalised so that the observer measures
    /// −k·u = −1, i.e. k·u_observer = 1.
    pub fn ray(&self, column: usize, row: usize) -> Result<[f64; 4], CliError> {
        pinhole_ray(
            &self.frame,
            1,
            3,
            2,
            column,
            row,
            self.width,
            self.height,
            self.fov,
        )
        .map_err(|e| CliError::usage(format!("pixel ({column}, {row}): {e}")))
    }

    /// The covariant components k_a = g_ab k^b at the camera.
    pub fn lower(&self, k: &[f64; 4]) -> [f64; 4] {
        std::array::from_fn(|a| (0..4).map(|b| self.metric[a][b] * k[b]).sum())
    }

    /// The metric at the camera.
    pub fn metric(&self) -> &[[f64; 4]; 4] {
        &self.metric
    }
}
