//! The renderer behind `geokern render`: one light ray per pixel, traced backwards from a
//! pinhole camera through a black hole's spacetime.
//!
//! Scope: 4-dimensional metrics whose coordinates are ordered (time, radius, polar angle,
//! azimuth), flat far away, like Boyer-Lindquist coordinates of Kerr, and with a horizon.
//! [`Scene::new`] checks this and answers anything else with [`CliError::Unsuited`].
//!
//! - [`camera`]: the static observer's orthonormal frame and the ray through each pixel.
//! - [`scene`]: what is checked and derived once: far-field mass, outer horizon, disk,
//!   circular-orbit emitters, stopping radii.
//! - [`tracer`]: Dormand-Prince 5(4) over [`LANES`] rays at once, on the lane evaluator
//!   ([`crate::tape::lanes`]), with per-lane step sizes; a finished lane takes the next ray.
//! - [`shading`]: colours (disk by redshift, checkered sky, black shadow) and the PNG file.
//!
//! [`CliError::Unsuited`]: crate::CliError::Unsuited

pub mod camera;
pub mod scene;
pub mod shading;
pub mod tracer;

use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;

pub use camera::Camera;
pub use scene::{DiskChoice, Equations, Scene, SceneOptions};
pub use tracer::{trace_pixels, Hit, RayCounts, LANES};

use crate::error::CliError;

/// Pixels one worker traces as one job: large enough that lanes rarely idle at a job's end,
/// small enough that both cores stay busy to the last job.
const CHUNK: usize = 512;

/// A rendered image: what every pixel's ray met, row by row from the top left, with the
/// counters of the integration.
#[derive(Clone, Debug)]
pub struct Rendered {
    /// Width in pixels.
    pub width: usize,
    /// Height in pixels.
    pub height: usize,
    /// One entry per pixel, row-major.
    pub hits: Vec<Hit>,
    /// Counters summed over every ray.
    pub counts: RayCounts,
}

/// Traces every pixel of `scene`'s camera, in parallel over jobs of consecutive pixels,
/// adding to `done` the number of pixels finished as jobs complete (for a progress bar).
///
/// The result does not depend on how the work was split: each ray's integration runs on its
/// own lane with its own step size.
pub fn render(scene: &Scene, done: &AtomicUsize) -> Result<Rendered, CliError> {
    let (width, height) = (scene.camera.width, scene.camera.height);
    let pixels: Vec<(usize, usize)> = (0..height)
        .flat_map(|row| (0..width).map(move |column| (column, row)))
        .collect();
    let parts: Vec<(Vec<Hit>, RayCounts)> = pixels
        .par_chunks(CHUNK)
        .map_init(
            || scene.workspace(),
            |work, chunk| {
                let mut counts = RayCounts::default();
                let hits = tracer::trace_pixels_in(scene, work, chunk, &mut counts)?;
                done.fetch_add(chunk.len(), Ordering::Relaxed);
                Ok((hits, counts))
            },
        )
        .collect::<Result<_, CliError>>()?;
    let mut hits = Vec::with_capacity(pixels.len());
    let mut counts = RayCounts::default();
    for (h, c) in parts {
        hits.extend(h);
        counts.add(&c);
    }
    Ok(Rendered {
        width,
        height,
        hits,
        counts,
    })
}
