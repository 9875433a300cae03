//! Colours of what the rays met, and the PNG file.
//!
//! - The shadow, and unresolved rays (they circle the photon orbits at its rim), are black.
//! - The disk is coloured by the redshift factor g of its circular-orbit emitters: deep red
//!   for strongly redshifted light through orange and white to blue for blueshifted, and
//!   brightened as g⁴ (the observed bolometric intensity of a thermal emitter scales as g⁴,
//!   since I_ν/ν³ is invariant along a ray; common practice) times a profile falling off
//!   outwards. Faint azimuthal sectors show how the disk's far side is lensed.
//! - The sky is a checker of 10° cells on the celestial sphere, by the direction the escaping
//!   ray leaves in, blue north of the equatorial plane and mauve south of it, so lensing shows
//!   as bent and doubled cells.

use std::f64::consts::{FRAC_PI_2, PI};
use std::path::Path;

use crate::error::CliError;
use crate::render::scene::Disk;
use crate::render::tracer::Hit;
use crate::render::Rendered;

/// The colour of one pixel.
pub fn shade(hit: &Hit, disk: Option<&Disk>) -> [u8; 3] {
    match *hit {
        Hit::Shadow | Hit::Unresolved => [0, 0, 0],
        Hit::Sky { theta, phi } => sky(theta, phi),
        Hit::Disk {
            radius,
            phi,
            redshift,
        } => disk.map_or([0, 0, 0], |d| disk_colour(d, radius, phi, redshift)),
    }
}

fn sky(theta: f64, phi: f64) -> [u8; 3] {
    let cell = 10f64.to_radians();
    let parity = ((theta / cell).floor() + (phi / cell).floor()) as i64 % 2 == 0;
    match (theta < FRAC_PI_2, parity) {
        (true, true) => [30, 40, 78],
        (true, false) => [82, 104, 160],
        (false, true) => [60, 34, 52],
        (false, false) => [140, 92, 120],
    }
}

/// Colour stops of the redshift ramp, at g = 0.4, 0.8, 1.0, 1.3.
const RAMP: [(f64, [f64; 3]); 4] = [
    (0.4, [0.55, 0.06, 0.02]),
    (0.8, [1.0, 0.45, 0.12]),
    (1.0, [1.0, 0.86, 0.62]),
    (1.3, [0.66, 0.8, 1.0]),
];

fn ramp(g: f64) -> [f64; 3] {
    let (first, last) = (RAMP[0], RAMP[RAMP.len() - 1]);
    if g.is_nan() || g <= first.0 {
        return first.1;
    }
    if g >= last.0 {
        return last.1;
    }
    for pair in RAMP.windows(2) {
        let ((g0, c0), (g1, c1)) = (pair[0], pair[1]);
        if g <= g1 {
            let t = (g - g0) / (g1 - g0);
            return std::array::from_fn(|i| c0[i] + t * (c1[i] - c0[i]));
        }
    }
    last.1
}

fn disk_colour(disk: &Disk, radius: f64, phi: f64, g: f64) -> [u8; 3] {
    if !g.is_finite() || g <= 0.0 {
        // No circular emitter at this radius: a dull grey, visibly not physics.
        return [60, 60, 60];
    }
    let profile = (disk.inner / radius).powf(0.75);
    let sector = if ((phi / (PI / 6.0)).floor() as i64) % 2 == 0 {
        1.0
    } else {
        0.85
    };
    // Compressed so that both the dim redshifted and the bright blueshifted side stay
    // readable.
    let brightness = (g.powi(4) * profile).powf(0.5).min(1.6) * sector;
    let colour = ramp(g);
    colour.map(|c| (255.0 * (c * brightness).clamp(0.0, 1.0)).round() as u8)
}

/// The image's pixels, RGB, row-major from the top left.
pub fn pixels(rendered: &Rendered, disk: Option<&Disk>) -> Vec<u8> {
    rendered
        .hits
        .iter()
        .flat_map(|hit| shade(hit, disk))
        .collect()
}

/// Writes the rendered image as a PNG file.
pub fn write_png(path: &Path, rendered: &Rendered, disk: Option<&Disk>) -> Result<(), CliError> {
    let fail = |reason: String| CliError::Output {
        path: path.to_path_buf(),
        reason,
    };
    let width = u32::try_from(rendered.width).map_err(|_| fail("image too wide".into()))?;
    let height = u32::try_from(rendered.height).map_err(|_| fail("image too tall".into()))?;
    image::save_buffer_with_format(
        path,
        &pixels(rendered, disk),
        width,
        height,
        image::ExtendedColorType::Rgb8,
        image::ImageFormat::Png,
    )
    .map_err(|e| fail(e.to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ramp_runs_from_red_to_blue_and_clamps() {
        let red = ramp(0.1);
        let blue = ramp(2.0);
        assert!(red[0] > red[2] && blue[2] > blue[0]);
        assert_eq!(ramp(f64::NAN), RAMP[0].1);
        let mid = ramp(0.9);
        assert!(mid[1] > RAMP[1].1[1] && mid[1] < RAMP[2].1[1]);
    }

    #[test]
    fn blueshifted_disk_is_brighter() {
        let disk = Disk {
            inner: 6.0,
            outer: 20.0,
        };
        let sum = |c: [u8; 3]| c.iter().map(|&v| u32::from(v)).sum::<u32>();
        let dim = disk_colour(&disk, 10.0, 0.1, 0.6);
        let bright = disk_colour(&disk, 10.0, 0.1, 1.2);
        assert!(sum(bright) > sum(dim));
        assert_eq!(disk_colour(&disk, 10.0, 0.1, f64::NAN), [60, 60, 60]);
        assert_eq!(shade(&Hit::Shadow, Some(&disk)), [0, 0, 0]);
    }
}
