//! The typed errors of the integrators.

use core::fmt;

/// Why an integration could not go on.
///
/// Every variant carries the affine parameter where it happened. `Display` gives one line,
/// fit for a command-line tool's stderr.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Error {
    /// The step size fell below what `f64` can resolve at `lambda` while trying to meet the
    /// tolerances (or to converge the implicit stage equations).
    StepSizeUnderflow {
        /// Where the integration stood.
        lambda: f64,
        /// The step that was too small.
        step: f64,
    },
    /// The step budget ran out before the end was reached.
    MaxSteps {
        /// Where the integration stood.
        lambda: f64,
        /// The budget (accepted plus rejected steps).
        steps: usize,
    },
    /// The state given, or reached, has a non-finite component.
    NonFiniteState {
        /// Where the integration stood.
        lambda: f64,
    },
    /// The kernels returned a non-finite value at a finite state (a coordinate singularity,
    /// a horizon, or a degenerate metric), and no smaller step avoided it.
    SingularMetric {
        /// Where the integration stood.
        lambda: f64,
    },
    /// An option or argument is out of its domain.
    InvalidInput {
        /// Which one, and why.
        reason: &'static str,
    },
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::StepSizeUnderflow { lambda, step } => write!(
                f,
                "step size underflow at lambda = {lambda:e} (step {step:e})"
            ),
            Error::MaxSteps { lambda, steps } => {
                write!(f, "step budget of {steps} exhausted at lambda = {lambda:e}")
            }
            Error::NonFiniteState { lambda } => {
                write!(f, "non-finite state at lambda = {lambda:e}")
            }
            Error::SingularMetric { lambda } => write!(
                f,
                "metric kernels non-finite near lambda = {lambda:e} (singularity or horizon)"
            ),
            Error::InvalidInput { reason } => write!(f, "invalid input: {reason}"),
        }
    }
}

#[cfg(feature = "std")]
impl std::error::Error for Error {}

#[cfg(all(test, feature = "std"))]
mod tests {
    use super::*;

    #[test]
    fn display_is_one_line() {
        let cases = [
            Error::StepSizeUnderflow {
                lambda: 1.0,
                step: 1e-300,
            },
            Error::MaxSteps {
                lambda: 2.0,
                steps: 10,
            },
            Error::NonFiniteState { lambda: 0.0 },
            Error::SingularMetric { lambda: 3.5 },
            Error::InvalidInput {
                reason: "rtol must be positive",
            },
        ];
        for e in cases {
            let s = e.to_string();
            assert!(!s.is_empty() && !s.contains('\n'), "{s}");
        }
        assert!(Error::MaxSteps {
            lambda: 2.0,
            steps: 10
        }
        .to_string()
        .contains("10"));
    }
}
