//! Roots of one real function on a radial range: a scan for sign changes on a geometric grid,
//! each refined by Brent's method.

/// Brent's method (R. P. Brent, "Algorithms for Minimization without Derivatives", 1973,
/// ch. 4: inverse quadratic interpolation and secant steps guarded by bisection) on a bracket
/// `[a, b]` where `fa = f(a)` and `fb = f(b)` differ in sign. Stops when the bracket is a few
/// ulps wide (about 1e-15 relative). `None` when `f` is not finite inside the bracket.
pub fn brent(
    f: &mut impl FnMut(f64) -> f64,
    mut a: f64,
    mut b: f64,
    mut fa: f64,
    mut fb: f64,
) -> Option<f64> {
    if !(fa.is_finite() && fb.is_finite()) || (fa > 0.0) == (fb > 0.0) && fa != 0.0 && fb != 0.0 {
        return None;
    }
    if fa == 0.0 {
        return Some(a);
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..300 {
        if (fb > 0.0) == (fc > 0.0) {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + f64::MIN_POSITIVE;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 {
            return Some(b);
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q) = if a == c {
                (2.0 * m * s, 1.0 - s)
            } else {
                let qa = fa / fc;
                let r = fb / fc;
                (
                    s * (2.0 * m * qa * (qa - r) - (b - a) * (r - 1.0)),
                    (qa - 1.0) * (r - 1.0) * (s - 1.0),
                )
            };
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        } else {
            d = m;
            e = m;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol { d } else { tol.copysign(m) };
        fb = f(b);
        if !fb.is_finite() {
            return None;
        }
    }
    Some(b)
}

/// Which way a function crosses zero as the radius grows.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Crossing {
    /// From negative (inside) to positive (outside).
    Rising,
    /// From positive (inside) to negative (outside).
    Falling,
}

/// The outermost zero of `f` crossed in the direction `crossing` among the grid points
/// `grid` (increasing radii) with values `values`, refined by [`brent`]. Pairs of neighbours
/// with a non-finite value are skipped.
pub fn outermost_crossing(
    f: &mut impl FnMut(f64) -> f64,
    grid: &[f64],
    values: &[f64],
    crossing: Crossing,
) -> Option<f64> {
    let n = grid.len().min(values.len());
    for k in (1..n).rev() {
        let (inner, outer) = (values[k - 1], values[k]);
        if !(inner.is_finite() && outer.is_finite()) {
            continue;
        }
        let hit = match crossing {
            Crossing::Rising => inner < 0.0 && outer >= 0.0,
            Crossing::Falling => inner > 0.0 && outer <= 0.0,
        };
        if hit {
            if outer == 0.0 {
                return Some(grid[k]);
            }
            if let Some(root) = brent(f, grid[k - 1], grid[k], inner, outer) {
                return Some(root);
            }
        }
    }
    None
}

/// `count` radii from `low` to `high`, spaced geometrically (equal ratios), so that a wide
/// range is covered cheaply and small radii, where orbits crowd, are sampled finely.
pub fn geometric_grid(low: f64, high: f64, count: usize) -> Vec<f64> {
    let count = count.max(2);
    let ratio = (high / low).powf(1.0 / (count - 1) as f64);
    let mut grid: Vec<f64> = (0..count).map(|k| low * ratio.powi(k as i32)).collect();
    grid[count - 1] = high;
    grid
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn brent_finds_the_root_of_a_cubic_to_rounding() {
        // x³ − 2x − 5 = 0, the classic example, root 2.0945514815423265 (Wallis; common
        // practice, checked here by the residual).
        let mut f = |x: f64| (x * x - 2.0) * x - 5.0;
        let (f2, f3, f4) = (f(2.0), f(3.0), f(4.0));
        let root = brent(&mut f, 2.0, 3.0, f2, f3).expect("bracketed");
        assert!(f(root).abs() < 1e-13, "{root}");
        assert!((root - 2.0945514815423265).abs() < 1e-15);
        assert!(brent(&mut f, 3.0, 4.0, f3, f4).is_none());
    }

    #[test]
    fn the_outermost_crossing_of_the_asked_direction_is_found() {
        // (r − 2)(r − 5): falls through zero at 2, rises through it at 5.
        let mut f = |r: f64| (r - 2.0) * (r - 5.0);
        let grid = geometric_grid(1.0, 100.0, 200);
        let values: Vec<f64> = grid.iter().map(|&r| f(r)).collect();
        let rising = outermost_crossing(&mut f, &grid, &values, Crossing::Rising);
        let falling = outermost_crossing(&mut f, &grid, &values, Crossing::Falling);
        assert!((rising.expect("rises") - 5.0).abs() < 1e-13);
        assert!((falling.expect("falls") - 2.0).abs() < 1e-13);
        let mut g = |r: f64| r + 1.0;
        let values: Vec<f64> = grid.iter().map(|&r| g(r)).collect();
        assert!(outermost_crossing(&mut g, &grid, &values, Crossing::Rising).is_none());
    }
}
