//! Step-size control: the scaled error norm, the PI controller, and the starting step.

use crate::state::{State, System};
use crate::stats::Stats;

/// Relative and absolute tolerances, applied to every component of the state.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Tolerance {
    /// Relative tolerance.
    pub rtol: f64,
    /// Absolute tolerance.
    pub atol: f64,
}

impl Tolerance {
    /// The root-mean-square of `err_i / (atol + rtol · max(|y0_i|, |y1_i|))` (Hairer, Nørsett &
    /// Wanner, *Solving ODEs I*, Sec. II.4, eq. (4.11)): a step is acceptable when this is ≤ 1.
    pub fn error_norm<const N: usize>(&self, err: &State<N>, y0: &State<N>, y1: &State<N>) -> f64 {
        let mut sum = 0.0;
        for i in 0..N {
            for (e, a, b) in [(err.x[i], y0.x[i], y1.x[i]), (err.v[i], y0.v[i], y1.v[i])] {
                let scale = self.atol + self.rtol * a.abs().max(b.abs());
                let q = e / scale;
                sum += q * q;
            }
        }
        libm::sqrt(sum / (2 * N).max(1) as f64)
    }

    /// The root-mean-square of `v_i / (atol + rtol · |y_i|)`.
    fn scaled_norm<const N: usize>(&self, v: &State<N>, y: &State<N>) -> f64 {
        let sum = v.fold_pairs(y, 0.0, |acc, vi, yi| {
            let q = vi / (self.atol + self.rtol * yi.abs());
            acc + q * q
        });
        libm::sqrt(sum / (2 * N).max(1) as f64)
    }
}

/// The proportional-integral step-size controller of Gustafsson, in the form used by Hairer,
/// Nørsett & Wanner (*Solving ODEs I*, Sec. II.4 and the DOPRI5 code):
/// `h_new = h · safety · err^(-α) · err_prev^β`, clamped to `[min_factor, max_factor]`, with
/// `α = 1/k - 0.75 β` and `k` one more than the lower order of the pair.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PiController {
    alpha: f64,
    beta: f64,
    safety: f64,
    min_factor: f64,
    max_factor: f64,
    previous_error: f64,
    last_rejected: bool,
}

impl PiController {
    /// A controller for a pair whose error estimate is of order `k - 1`, with the integral
    /// gain `beta` (0 gives the classical controller) and the factor bounds given.
    pub fn new(k: u32, beta: f64, min_factor: f64, max_factor: f64) -> Self {
        PiController {
            alpha: 1.0 / k as f64 - 0.75 * beta,
            beta,
            safety: 0.9,
            min_factor,
            max_factor,
            previous_error: 1e-4,
            last_rejected: false,
        }
    }

    /// The next step after a step of size `h` with scaled error `err ≤ 1` was accepted.
    pub fn accepted(&mut self, err: f64, h: f64) -> f64 {
        let mut factor = if err == 0.0 {
            self.max_factor
        } else {
            let f = self.safety
                * libm::pow(err, -self.alpha)
                * libm::pow(self.previous_error, self.beta);
            f.clamp(self.min_factor, self.max_factor)
        };
        // Right after a rejection the step is not allowed to grow (HNW, Sec. II.4).
        if self.last_rejected {
            factor = factor.min(1.0);
        }
        self.previous_error = err.max(1e-4);
        self.last_rejected = false;
        h * factor
    }

    /// The retry step after a step of size `h` was rejected with scaled error `err > 1`.
    pub fn rejected(&mut self, err: f64, h: f64) -> f64 {
        self.last_rejected = true;
        let factor = (self.safety * libm::pow(err, -self.alpha)).clamp(self.min_factor, 1.0);
        h * factor
    }

    /// Forgets the history after a step was cut for a reason other than its error.
    pub fn mark_rejected(&mut self) {
        self.last_rejected = true;
    }
}

/// The starting step of Hairer, Nørsett & Wanner (*Solving ODEs I*, Sec. II.4, "Starting step
/// size"), for a method of order `order`. `limit` is the largest step allowed, its sign the
/// direction of integration; the result is a magnitude. `f0` is `f(y0)`. Costs one evaluation
/// of the right-hand side.
pub fn initial_step<S: System<N>, const N: usize>(
    system: &S,
    y0: &State<N>,
    f0: &State<N>,
    order: u32,
    tol: &Tolerance,
    limit: f64,
    stats: &mut Stats,
) -> f64 {
    let (sign, max_step) = (limit.signum(), limit.abs());
    let d0 = tol.scaled_norm(y0, y0);
    let d1 = tol.scaled_norm(f0, y0);
    let h0 = if d0 < 1e-5 || d1 < 1e-5 {
        1e-6
    } else {
        0.01 * d0 / d1
    }
    .min(max_step);
    let mut y1 = *y0;
    y1.add_scaled(sign * h0, f0);
    let mut f1 = State::zero();
    system.rhs(&y1, &mut f1);
    stats.rhs_evaluations += 1;
    let mut diff = f1;
    diff.add_scaled(-1.0, f0);
    let d2 = tol.scaled_norm(&diff, y0) / h0;
    let h1 = if !d2.is_finite() {
        // The trial point left the domain of the kernels: stay with the cautious guess.
        h0
    } else if d1.max(d2) <= 1e-15 {
        (h0 * 1e-3).max(1e-6)
    } else {
        libm::pow(0.01 / d1.max(d2), 1.0 / (order as f64 + 1.0))
    };
    (100.0 * h0).min(h1).min(max_step)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn error_norm_is_rms_of_scaled_components() {
        let tol = Tolerance {
            rtol: 0.0,
            atol: 0.5,
        };
        let e = State::new([1.0], [1.0]);
        let z = State::zero();
        assert_eq!(tol.error_norm(&e, &z, &z), 2.0);
    }

    #[test]
    fn controller_shrinks_on_large_error_and_grows_on_small() {
        let mut c = PiController::new(5, 0.04, 0.2, 10.0);
        assert!(c.rejected(100.0, 1.0) < 1.0);
        // After a rejection the next accepted step may not grow.
        assert!(c.accepted(1e-6, 1.0) <= 1.0);
        assert!(c.accepted(1e-6, 1.0) > 1.0);
        assert!(c.accepted(0.0, 1.0) == 10.0);
    }
}
