//! The shadow of a spinning black hole, as seen by a camera hovering at r = 25M slightly above
//! the equatorial plane: one photon per pixel, traced backwards from the camera in parallel
//! with `integrate_batch`.
//!
//! A ray that gets out past r = 50M came from the sky (`.`); one that does not reaches the
//! horizon, where the Boyer-Lindquist time coordinate diverges and the integration cannot
//! continue (`#`); the example checks that reading on one such ray with a horizon event.
//! Frame dragging shifts the shadow off the centre of the image, sideways.
//!
//! Run: `cargo run --example photon_batch`.

use geokern::{
    integrate_batch, integrate_with_events, pinhole_ray, static_frame, CoordinateCrossing, Error,
    Event, Method, Options,
};

geokern::include_metric!("examples/metrics/kerr_bl.gk");

const WIDTH: usize = 40;
const HEIGHT: usize = 16;

fn main() -> Result<(), Error> {
    let hole = Kerr::new(1.0, 0.95);
    let camera = [0.0, 25.0, 1.45, 0.0];
    let frame = static_frame(&hole, &camera)?;
    // Frame axes: 1 along +r (outward), 2 along +θ (south), 3 along +φ. Looking inward
    // (forward = -e_r) needs the negated radial axis; up is -e_θ.
    let mut flipped = frame;
    flipped[1] = frame[1].map(|c| -c);
    flipped[2] = frame[2].map(|c| -c);
    let mut starts = Vec::with_capacity(WIDTH * HEIGHT);
    for row in 0..HEIGHT {
        for column in 0..WIDTH {
            // Characters are about twice as tall as wide: every other row of a camera with
            // square pixels.
            let k = pinhole_ray(&flipped, 1, 3, 2, column, 2 * row, WIDTH, 2 * HEIGHT, 0.9)?;
            starts.push((camera, k));
        }
    }
    let options = Options {
        rtol: 1e-7,
        atol: 1e-9,
        max_steps: 5_000,
        ..Options::with_method(Method::DormandPrince54)
    };
    let results = integrate_batch(&hole, &starts, 200.0, &options);
    let mut escaped = 0;
    let mut rows = vec![String::new(); HEIGHT];
    for (i, result) in results.iter().enumerate() {
        let sky = matches!(result, Ok(out) if out.x[1] > 50.0);
        escaped += usize::from(sky);
        rows[i / WIDTH].push(if sky { '.' } else { '#' });
    }
    for row in rows {
        println!("{row}");
    }
    println!(
        "{} rays: {escaped} from the sky, {} into the hole",
        results.len(),
        results.len() - escaped
    );
    // Check the reading of a failed ray: traced again with an event just outside the
    // horizon r+ = m + √(m² - a²), it crosses that radius before the step collapses.
    if let Some((i, Err(failure))) = results.iter().enumerate().find(|(_, r)| r.is_err()) {
        let horizon = hole.m + (hole.m * hole.m - hole.a * hole.a).sqrt();
        let mut near_horizon = CoordinateCrossing::falling_below(1, horizon + 0.01);
        let mut events: [&mut dyn Event<4>; 1] = [&mut near_horizon];
        let (x0, k0) = starts[i];
        let out = integrate_with_events(&hole, x0, k0, 200.0, &options, &mut events)?;
        println!("pixel ({}, {}): {failure}", i % WIDTH, i / WIDTH);
        println!(
            "  traced again: {} at r = {:.4} (r+ = {horizon:.4}), λ = {:.3}",
            out.stop.name(),
            out.x[1],
            out.lambda
        );
    }
    Ok(())
}
