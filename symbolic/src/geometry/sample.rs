//! Deterministic sample points for the checks that canonical forms cannot settle alone
//! (an identically zero determinant, a declared inverse, a line element's degree).

use crate::expr::{ExprId, Store, Symbol};

/// A fixed, reproducible set of values for every symbol of a store.
#[derive(Clone, Debug)]
pub struct SamplePoints {
    count: usize,
    seed: u64,
}

impl SamplePoints {
    /// The set every check of the engine uses: 12 points, fixed seed.
    pub fn standard() -> SamplePoints {
        SamplePoints {
            count: 12,
            seed: 0x9e37_79b9_7f4a_7c15,
        }
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.count
    }

    /// Whether the set has no points.
    pub fn is_empty(&self) -> bool {
        self.count == 0
    }

    /// The value of symbol number `sym` at point `k`: a pseudo-random number in
    /// [0.35, 1.35), which keeps angles off the poles and radii positive.
    pub fn value(&self, k: usize, sym: usize) -> f64 {
        let mut z = self.seed ^ ((k as u64) << 32 | sym as u64).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^= z >> 31;
        0.35 + (z >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Values of `roots` at point `k`.
    pub fn eval(&self, s: &Store, roots: &[ExprId], k: usize) -> Vec<f64> {
        let index_of = |sym: &Symbol| s.symbols().iter().position(|t| t == sym).unwrap_or(0);
        let vals = s.eval_all(roots, &|sym| self.value(k, index_of(sym)));
        roots.iter().map(|r| vals[r.index()]).collect()
    }

    /// Value and rounding magnitude of `e` at point `k` (see [`Store::eval_with_magnitude`]).
    pub fn eval_with_magnitude(&self, s: &Store, e: ExprId, k: usize) -> (f64, f64) {
        let index_of = |sym: &Symbol| s.symbols().iter().position(|t| t == sym).unwrap_or(0);
        let (v, m) = s.eval_with_magnitude(&[e], &|sym| self.value(k, index_of(sym)));
        (v[e.index()], m[e.index()])
    }

    /// Whether `e` is zero (to rounding) at every sample point where it is finite, and finite
    /// at one at least.
    pub fn all_zero(&self, s: &Store, e: ExprId) -> bool {
        let mut finite = 0;
        for k in 0..self.count {
            let v = self.eval(s, &[e], k)[0];
            if v.is_finite() {
                finite += 1;
                if v.abs() > 1e-13 {
                    return false;
                }
            }
        }
        finite > 0
    }
}
