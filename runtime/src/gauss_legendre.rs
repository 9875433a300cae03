//! Implicit Gauss-Legendre collocation (orders 4 and 6): symplectic, meant for Hamilton's
//! equations in (x, p).
//!
//! The stage equations `Z_i = h Σ_j a_ij f(y + Z_j)` are solved by fixed-point iteration
//! (Hairer, Lubich & Wanner, *Geometric Numerical Integration*, 2nd ed., Sec. VIII.6), started
//! from the previous step's collocation polynomial extrapolated over the new step (same
//! source, Sec. VIII.6.1), or from `Z_i = c_i h f(y)` on the first step.
//!
//! Convergence test: the iteration stops when the largest change of a stage component,
//! relative to `1 + |y|` of that component, is at most [`GaussLegendre::tolerance`] (default
//! `1e-14`), or, once that change is below `1e-10`, when it stops decreasing (round-off has
//! been reached; stopping there rather than at a fixed count keeps the map symplectic to
//! round-off, as HLW recommend). A solve that exceeds [`GaussLegendre::max_iterations`]
//! (default 60) or produces a non-finite value reports [`StepFailure::NotConverged`] or
//! [`StepFailure::NonFinite`], and the driver retries with half the step.

use crate::control::{PiController, Tolerance};
use crate::state::{State, System};
use crate::stats::Stats;
use crate::stepper::{StepFailure, Stepper};
use crate::tableau::{ButcherTableau, GAUSS_LEGENDRE_4, GAUSS_LEGENDRE_6};

/// An `S`-stage Gauss-Legendre collocation method of order `2S`.
#[derive(Clone, Debug)]
pub struct GaussLegendre<const N: usize, const S: usize> {
    tableau: ButcherTableau<f64, S>,
    /// Largest relative change of a stage component at which the iteration has converged.
    pub tolerance: f64,
    /// Iteration budget per step.
    pub max_iterations: usize,
    z: [State<N>; S],
    f: [State<N>; S],
    f0: State<N>,
    y0: State<N>,
    y1: State<N>,
    h: f64,
    has_previous: bool,
    f1: State<N>,
}

/// Two-stage Gauss-Legendre, order 4.
pub type GaussLegendre4<const N: usize> = GaussLegendre<N, 2>;
/// Three-stage Gauss-Legendre, order 6.
pub type GaussLegendre6<const N: usize> = GaussLegendre<N, 3>;

impl<const N: usize> GaussLegendre<N, 2> {
    /// The order-4 method, from [`GAUSS_LEGENDRE_4`].
    pub fn order4() -> Self {
        Self::from_tableau(GAUSS_LEGENDRE_4.to_f64())
    }
}

impl<const N: usize> GaussLegendre<N, 3> {
    /// The order-6 method, from [`GAUSS_LEGENDRE_6`].
    pub fn order6() -> Self {
        Self::from_tableau(GAUSS_LEGENDRE_6.to_f64())
    }
}

impl<const N: usize, const S: usize> GaussLegendre<N, S> {
    /// A collocation method from its tableau in `f64`.
    pub fn from_tableau(tableau: ButcherTableau<f64, S>) -> Self {
        GaussLegendre {
            tableau,
            tolerance: 1e-14,
            max_iterations: 60,
            z: [State::zero(); S],
            f: [State::zero(); S],
            f0: State::zero(),
            y0: State::zero(),
            y1: State::zero(),
            h: 0.0,
            has_previous: false,
            f1: State::zero(),
        }
    }

    /// The Lagrange basis on the nodes {0, c_1, ..., c_S}, for node `i ≥ 1`, at `theta`.
    fn lagrange(&self, i: usize, theta: f64) -> f64 {
        let c = &self.tableau.c;
        let ci = c[i];
        // The node 0 contributes the factor θ / c_i.
        let mut l = theta / ci;
        for (j, &cj) in c.iter().enumerate() {
            if j != i {
                l *= (theta - cj) / (ci - cj);
            }
        }
        l
    }

    /// `u(θ) - y0` for the collocation polynomial of the last step.
    fn polynomial_increment(&self, theta: f64) -> State<N> {
        let mut out = State::zero();
        for i in 0..S {
            out.add_scaled(self.lagrange(i, theta), &self.z[i]);
        }
        out
    }
}

impl<const N: usize, const S: usize> Stepper<N> for GaussLegendre<N, S> {
    fn order(&self) -> u32 {
        self.tableau.order
    }
    fn controller(&self) -> Option<PiController> {
        None
    }
    fn reset<Sys: System<N>>(&mut self, system: &Sys, y: &State<N>, stats: &mut Stats) -> bool {
        let mut f = State::zero();
        system.rhs(y, &mut f);
        stats.rhs_evaluations += 1;
        self.f0 = f;
        self.has_previous = false;
        f.is_finite()
    }
    fn derivative(&self) -> &State<N> {
        &self.f0
    }
    fn attempt<Sys: System<N>>(
        &mut self,
        system: &Sys,
        y: &State<N>,
        h: f64,
        _tol: &Tolerance,
        stats: &mut Stats,
    ) -> Result<f64, StepFailure> {
        // Starting values.
        if self.has_previous && self.h != 0.0 && (h / self.h) > 0.0 {
            let ratio = h / self.h;
            // The previous polynomial is anchored at the previous y0; shift it to y.
            let mut guesses = [State::zero(); S];
            let u1 = self.polynomial_increment(1.0);
            for (i, g) in guesses.iter_mut().enumerate() {
                let mut zi = self.polynomial_increment(1.0 + self.tableau.c[i] * ratio);
                zi.add_scaled(-1.0, &u1);
                *g = zi;
            }
            self.z = guesses;
        } else {
            for i in 0..S {
                self.z[i] = self.f0.scaled(self.tableau.c[i] * h);
            }
        }
        self.h = h;
        self.y0 = *y;
        let mut previous_change = f64::INFINITY;
        let mut converged = false;
        for _ in 0..self.max_iterations {
            stats.implicit_iterations += 1;
            for i in 0..S {
                let mut yi = *y;
                yi.add_scaled(1.0, &self.z[i]);
                let mut fi = State::zero();
                system.rhs(&yi, &mut fi);
                stats.rhs_evaluations += 1;
                self.f[i] = fi;
            }
            let mut change: f64 = 0.0;
            for i in 0..S {
                let zi = State::combine(&State::zero(), h, &self.tableau.a[i], &self.f);
                for c in 0..N {
                    change = change
                        .max((zi.x[c] - self.z[i].x[c]).abs() / (1.0 + y.x[c].abs()))
                        .max((zi.v[c] - self.z[i].v[c]).abs() / (1.0 + y.v[c].abs()));
                }
                self.z[i] = zi;
            }
            if !change.is_finite() {
                self.has_previous = false;
                return Err(StepFailure::NonFinite);
            }
            if change <= self.tolerance || (change < 1e-10 && change >= previous_change) {
                converged = true;
                break;
            }
            previous_change = change;
        }
        if !converged {
            self.has_previous = false;
            return Err(StepFailure::NotConverged);
        }
        self.y1 = State::combine(y, h, &self.tableau.b, &self.f);
        // f(y1) is the starting derivative of the next step, and checks that the kernels are
        // still finite where the step lands (the stages all lie strictly inside the step).
        let mut f1 = State::zero();
        system.rhs(&self.y1, &mut f1);
        stats.rhs_evaluations += 1;
        self.f1 = f1;
        if !self.y1.is_finite() || !f1.is_finite() {
            self.has_previous = false;
            return Err(StepFailure::NonFinite);
        }
        self.has_previous = true;
        Ok(0.0)
    }
    fn proposal(&self) -> &State<N> {
        &self.y1
    }
    fn dense<Sys: System<N>>(&mut self, _system: &Sys, theta: f64, _stats: &mut Stats) -> State<N> {
        let mut out = self.y0;
        out.add_scaled(1.0, &self.polynomial_increment(theta));
        out
    }
    fn accept(&mut self) {
        self.f0 = self.f1;
    }
}
