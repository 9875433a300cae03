//! Horizons found from the metric's own kernels: the radii where the radial component of the
//! inverse metric changes sign.
//!
//! For a stationary metric in coordinates (t, r, ...) a Killing horizon where r is constant
//! is a null hypersurface r = r_h, and the normal dr is null there: g^rr(r_h) = 0 (common
//! practice; e.g. Schwarzschild g^rr = 1 - 2m/r, Kerr in Boyer-Lindquist form g^rr = Δ/Σ).
//! So a sign change of g^rr along a radial line, refined by bisection, locates each horizon
//! without a formula for any one metric.

use geokern_symbolic::program::KernelKind;

use crate::tape::Inputs;
use crate::tape_metric::TapeSet;

/// Sample radii of the scan: fine enough to separate two horizons closer than 0.1% in r.
const SAMPLES: usize = 4000;

/// The radii in `[low, high]` where g^{radial radial} changes sign along the line through
/// `point` in which only coordinate `radial` varies, outermost first, each refined to a
/// relative width of 1e-15. A double root (an extremal horizon, where g^rr touches zero
/// without changing sign) is not found.
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
    let mut outer = high;
    let mut outer_value = g_rr(high);
    for k in (0..SAMPLES - 1).rev() {
        let inner = low * ratio.powi(k as i32);
        let inner_value = g_rr(inner);
        if outer_value.is_finite()
            && inner_value.is_finite()
            && (outer_value > 0.0) != (inner_value > 0.0)
        {
            found.push(bisect(&mut g_rr, inner, outer, inner_value));
        }
        outer = inner;
        outer_value = inner_value;
    }
    found
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
