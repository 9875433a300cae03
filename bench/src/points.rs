//! The points every route is compared and timed at: parameters, and (x, u) pairs invented for
//! these benchmarks, outside the horizon (r_+ = m + √(m² − a²) ≈ 1.44 for these parameters)
//! and off the axis, in the coordinates of each metric.

/// Mass and spin (m, a) of both metrics.
pub const PARAMS: [f64; 2] = [1.0, 0.9];

/// Boyer-Lindquist (t, r, θ, φ) positions with velocities.
pub const KERR_BL: [([f64; 4], [f64; 4]); 4] = [
    ([0.0, 7.0, 1.1, 0.4], [1.2, -0.1, 0.02, 0.05]),
    ([3.5, 4.25, 0.6, 2.0], [1.5, 0.3, -0.04, 0.08]),
    ([-1.0, 12.0, 2.3, 5.1], [1.05, 0.05, 0.01, -0.02]),
    ([0.25, 2.5, 1.5, 0.0], [2.0, -0.4, 0.1, 0.25]),
];

/// Kerr-Schild (t, x, y, z) positions with velocities.
pub const KERR_SCHILD: [([f64; 4], [f64; 4]); 4] = [
    ([0.0, 4.0, 3.0, 2.5], [1.2, -0.1, 0.2, 0.05]),
    ([1.5, -6.0, 2.0, -1.25], [1.1, 0.15, -0.05, 0.1]),
    ([-2.0, 1.5, -2.75, 0.5], [1.6, -0.3, -0.2, 0.35]),
    ([0.5, 0.75, 9.0, -4.0], [1.05, 0.02, -0.1, 0.04]),
];
