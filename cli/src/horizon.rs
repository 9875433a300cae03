//! Horizons found from the metric's own kernels: the radii where the radial component of the
//! inverse metric changes sign.
//!
//! For a stationary metric in coordinates (t, r, ...) a Killing horizon where r is constant
//! is a null hypersurface r = r_h, and the normal dr is null there: g^rr(r_h) = 0 (common
//! practice; e.g. Schwarzschild g^rr = 1 - 2m/r, Kerr in Boyer-Lindquist form g^rr = Δ/Σ).
//! So a sign change of g^rr along a radial line, refined by bisection, locates each horizon
//! without a formula for any one metric. An extremal horizon is a double root, where g^rr
//! touches zero without changing sign (Kerr with a = m: g^rr = (r - m)²/Σ); it shows as a
//! local minimum of |g^rr| between samples, which is refined by golden-section search and
//! kept when the minimum is zero to rounding. A double root is ill-conditioned, so its
//! radius is found to about the square root of the rounding error (1e-8 relative), not 1e-15.

use geokern_symbolic::program::KernelKind;

use crate::tape::Inputs;
use crate::tape_metric::TapeSet;

/// Sample radii of the scan: fine enough to separate two horizons closer than 0.1% in r.
const SAMPLES: usize = 4000;

/// The radii in `[low, high]` where g^{radial radial} vanishes along the line through
/// `point` in which only coordinate `radial` varies, outermost first: sign changes refined to
/// a relative width of 1e-15, and double roots (extremal horizons, where g^rr touches zero
/// without changing sign) to about 1e-8.
///
/// ```
/// use geokern_cli::{horizon::horizons, source, tape_metric::TapeSet};
///
/// let text = b"struct Schwarzschild { coords: [t, r, theta, phi], params: [m],
///     g[t, t] = -(1 - 2 * m / r); g[r, r] = 1 / (1 - 2 * m / r);
///     g[theta, theta] = r.powi(2); g[phi, phi] = (r * theta.sin()).powi(2); }";
/// let loaded = source::load_bytes("s.gk", text, None).unwrap();
/// let set = TapeSet::new(&loaded.kernels, &[1.5]).unwrap();
/// let found = horizons(&set, 1, &[0.0, 0.0, 1.0, 0.0], 0.1, 100.0);
/// assert_eq!(found.len(), 1);
/// assert!((found[0] - 3.0).abs() < 1e-13);
/// ```
pub fn horizons(set: &TapeSet, radial: usize, point: &[f64], low: f64, high: f64) -> Vec<f64> {
    let n = set.dim();
    if radial >= n || point.len() != n || !(low > 0.0 && high > low && high.is_finite()) {
        return Vec::new();
    }
    let tape = set.tape(KernelKind::InverseMetric);
    let mut registers = tape.registers(&set.params);
    let mut out = vec![0.0; tape.output_len()];
    let mut x = point.to_vec();
    let mut g_rr = |r: f64| {
        x[radial] = r;
        tape.eval(
            &mut registers,
            &Inputs {
                x: &x,
                ..Inputs::default()
            },
            &mut out,
        );
        out[radial * n + radial]
    };
    // Geometric spacing: horizons sit at small r, and the scan reaches far out cheaply.
    let ratio = (high / low).powf(1.0 / (SAMPLES - 1) as f64);
    let mut found = Vec::new();
    // The last three samples, outermost first: (radius, g^rr).
    let mut window: [(f64, f64); 3] = [(high, g_rr(high)); 3];
    // What counts as zero for a touching minimum: rounding relative to g^rr's size far out.
    let scale = window[0].1.abs().max(f64::MIN_POSITIVE);
    for k in (0..SAMPLES - 1).rev() {
        let inner = low * ratio.powi(k as i32);
        window = [window[1], window[2], (inner, g_rr(inner))];
        let [(r0, f0), (r1, f1), (r2, f2)] = window;
        if !(f1.is_finite() && f2.is_finite()) {
            continue;
        }
        if (f1 > 0.0) != (f2 > 0.0) {
            found.push(bisect(&mut g_rr, r2, r1, f2));
        } else if k + 2 < SAMPLES
            && f0.is_finite()
            && f1 != 0.0
            && f1.abs() < f0.abs()
            && f1.abs() < f2.abs()
            && (f0 > 0.0) == (f1 > 0.0)
        {
            // |g^rr| dips between r2 and r0 without a sign change among the samples: a
            // double root, two roots closer than the sampling, or just a dip.
            let sign = f1.signum();
            let (r_min, f_min) = golden_minimum(&mut |r| sign * g_rr(r), r2, r0);
            if f_min < 0.0 {
                // Two simple roots around the minimum, outer first.
                found.push(bisect(&mut g_rr, r_min, r0, sign * f_min));
                found.push(bisect(&mut g_rr, r2, r_min, f2));
            } else if f_min <= 1e-12 * scale {
                found.push(r_min);
            }
        }
    }
    found
}

/// The minimum of `f` on `[a, b]` by golden-section search (`f` unimodal there), as
/// `(where, value)`, refined until the bracket stops shrinking.
fn golden_minimum(f: &mut impl FnMut(f64) -> f64, mut a: f64, mut b: f64) -> (f64, f64) {
    let shrink = (5f64.sqrt() - 1.0) / 2.0;
    let mut c = b - shrink * (b - a);
    let mut d = a + shrink * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..200 {
        if !(a < c && c < d && d < b) {
            break;
        }
        if fc <= fd {
            b = d;
            d = c;
            fd = fc;
            c = b - shrink * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + shrink * (b - a);
            fd = f(d);
        }
    }
    if fc <= fd {
        (c, fc)
    } else {
        (d, fd)
    }
}

/// A root of `f` in `[a, b]`, where `f(a) = fa` and `f(b)` differ in sign.
fn bisect(f: &mut impl FnMut(f64) -> f64, mut a: f64, mut b: f64, mut fa: f64) -> f64 {
    for _ in 0..200 {
        let mid = 0.5 * (a + b);
        if mid <= a || mid >= b || (b - a) <= 1e-15 * b.abs() {
            break;
        }
        let fm = f(mid);
        if fm == 0.0 {
            return mid;
        }
        if (fm > 0.0) == (fa > 0.0) {
            a = mid;
            fa = fm;
        } else {
            b = mid;
        }
    }
    0.5 * (a + b)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::source;

    /// Kerr in Boyer-Lindquist form has two horizons, r± = m ± sqrt(m² - a²) (Boyer and
    /// Lindquist 1967; common practice).
    #[test]
    fn kerr_has_both_horizons() {
        let text = std::fs::read("../examples/metrics/kerr_bl.gk").expect("example file");
        let loaded = source::load_bytes("kerr_bl.gk", &text, None).expect("loads");
        let (m, a) = (1.0, 0.9);
        let set = TapeSet::new(&loaded.kernels, &[m, a]).expect("tapes");
        let found = horizons(&set, 1, &[0.0, 0.0, 1.2, 0.0], 0.05, 1e3);
        let root = (m * m - a * a).sqrt();
        assert_eq!(found.len(), 2, "{found:?}");
        assert!((found[0] - (m + root)).abs() < 1e-12, "{found:?}");
        assert!((found[1] - (m - root)).abs() < 1e-12, "{found:?}");
    }

    /// Extremal Kerr, a = m, has one degenerate horizon at r = m, where Δ = (r - m)² touches
    /// zero (Boyer and Lindquist 1967; common practice). Just below extremality the two
    /// horizons lie closer together than the samples and are still told apart.
    #[test]
    fn extremal_and_nearly_extremal_kerr() {
        let text = std::fs::read("../examples/metrics/kerr_bl.gk").expect("example file");
        let loaded = source::load_bytes("kerr_bl.gk", &text, None).expect("loads");
        let at = [0.0, 0.0, 1.2, 0.0];
        let set = TapeSet::new(&loaded.kernels, &[1.0, 1.0]).expect("tapes");
        let found = horizons(&set, 1, &at, 0.05, 1e3);
        assert_eq!(found.len(), 1, "{found:?}");
        assert!((found[0] - 1.0).abs() < 1e-7, "{found:?}");
        let a = 1.0 - 1e-8;
        let set = TapeSet::new(&loaded.kernels, &[1.0, a]).expect("tapes");
        let found = horizons(&set, 1, &at, 0.05, 1e3);
        let root = (1.0 - a * a).sqrt();
        assert_eq!(found.len(), 2, "{found:?}");
        assert!((found[0] - (1.0 + root)).abs() < 1e-9, "{found:?}");
        assert!((found[1] - (1.0 - root)).abs() < 1e-9, "{found:?}");
        // Past extremality (a naked singularity) there is no horizon.
        let set = TapeSet::new(&loaded.kernels, &[1.0, 1.01]).expect("tapes");
        assert!(horizons(&set, 1, &at, 0.05, 1e3).is_empty());
    }

    #[test]
    fn flat_space_has_none_and_bad_ranges_give_none() {
        let text = b"struct Flat { coords: [t, r, theta, phi],
            g[t, t] = -1; g[r, r] = 1; g[theta, theta] = r.powi(2);
            g[phi, phi] = (r * theta.sin()).powi(2); }";
        let loaded = source::load_bytes("flat.gk", text, None).expect("loads");
        let set = TapeSet::new(&loaded.kernels, &[]).expect("tapes");
        assert!(horizons(&set, 1, &[0.0, 0.0, 1.0, 0.0], 0.01, 100.0).is_empty());
        assert!(horizons(&set, 7, &[0.0, 0.0, 1.0, 0.0], 0.01, 100.0).is_empty());
        assert!(horizons(&set, 1, &[0.0, 0.0, 1.0, 0.0], 1.0, f64::NAN).is_empty());
    }
}
