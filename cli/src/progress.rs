//! A progress bar for runs that last more than a second.
//!
//! Drawn on stderr, and only when stderr is a terminal and the output is not JSON, so pipes,
//! scripts and tests never see it. It appears once the run has lasted a second, so quick runs
//! stay quiet. Integrations report their progress through [`ProgressEvent`], an event of the
//! runtime that never fires but is told λ after every accepted step.

use std::cell::{Cell, RefCell};
use std::io::IsTerminal;
use std::time::{Duration, Instant};

use geokern_runtime::{Direction, Event};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

/// How long a run goes before its bar appears.
const DELAY: Duration = Duration::from_secs(1);
/// Positions of the bar (fractions are rounded to this).
const TICKS: u64 = 1000;

/// A progress bar that shows itself only when it should.
pub struct Progress {
    enabled: bool,
    started: Instant,
    message: RefCell<String>,
    bar: RefCell<Option<ProgressBar>>,
    calls: Cell<u32>,
}

impl Progress {
    /// A bar for a run starting now; `json` output never gets one, nor does a stderr that is
    /// not a terminal.
    pub fn new(json: bool, message: &str) -> Progress {
        Progress {
            enabled: !json && std::io::stderr().is_terminal(),
            started: Instant::now(),
            message: RefCell::new(message.to_string()),
            bar: RefCell::new(None),
            calls: Cell::new(0),
        }
    }

    /// Whether the bar may be drawn at all (callers skip the bookkeeping otherwise).
    pub fn enabled(&self) -> bool {
        self.enabled
    }

    /// Sets the text beside the bar.
    pub fn set_message(&self, message: &str) {
        *self.message.borrow_mut() = message.to_string();
        if let Some(bar) = self.bar.borrow().as_ref() {
            bar.set_message(message.to_string());
        }
    }

    /// Records that `fraction` (0 to 1) of the run is done.
    pub fn set_fraction(&self, fraction: f64) {
        if !self.enabled {
            return;
        }
        // Reading the clock on every step of a fast integration would cost more than the
        // bar is worth; every 64th call is often enough for a one-second threshold.
        let calls = self.calls.get().wrapping_add(1);
        self.calls.set(calls);
        let mut bar = self.bar.borrow_mut();
        if bar.is_none() {
            if !calls.is_multiple_of(64) || self.started.elapsed() < DELAY {
                return;
            }
            // Built hidden and shown once complete, so its first frame is already right.
            let b = ProgressBar::with_draw_target(Some(TICKS), ProgressDrawTarget::hidden())
                .with_elapsed(self.started.elapsed());
            if let Ok(style) =
                ProgressStyle::with_template("{msg} [{bar:30}] {percent:>3}% {elapsed}")
            {
                b.set_style(style.progress_chars("=> "));
            }
            b.set_message(self.message.borrow().clone());
            b.set_position(position(fraction));
            b.set_draw_target(ProgressDrawTarget::stderr());
            *bar = Some(b);
        }
        if let Some(b) = bar.as_ref() {
            let f = if fraction.is_finite() {
                fraction.clamp(0.0, 1.0)
            } else {
                0.0
            };
            b.set_position((f * TICKS as f64).round() as u64);
        }
    }

    /// Removes the bar, if it was drawn.
    pub fn finish(&self) {
        if let Some(bar) = self.bar.borrow_mut().take() {
            bar.finish_and_clear();
        }
    }
}

/// The bar position of a fraction done (a non-finite fraction counts as none).
fn position(fraction: f64) -> u64 {
    let f = if fraction.is_finite() {
        fraction.clamp(0.0, 1.0)
    } else {
        0.0
    };
    (f * TICKS as f64).round() as u64
}

impl Drop for Progress {
    fn drop(&mut self) {
        self.finish();
    }
}

/// An event that never fires but passes the fraction done to a [`Progress`] after every
/// step.
pub struct ProgressEvent<'a> {
    progress: &'a Progress,
    lambda_end: f64,
    offset: f64,
    weight: f64,
}

impl<'a> ProgressEvent<'a> {
    /// Reports to `progress` a run that ends at `lambda_end` and is the part
    /// `slice = (offset, weight)` of the whole: at λ the fraction done is
    /// `offset + weight λ / lambda_end`.
    pub fn new(progress: &'a Progress, lambda_end: f64, slice: (f64, f64)) -> Self {
        ProgressEvent {
            progress,
            lambda_end,
            offset: slice.0,
            weight: slice.1,
        }
    }
}

impl<const N: usize> Event<N> for ProgressEvent<'_> {
    fn value(&self, lambda: f64, _x: &[f64; N], _u: &[f64; N]) -> f64 {
        self.progress
            .set_fraction(self.offset + self.weight * lambda / self.lambda_end);
        // A constant of one sign: never a crossing.
        1.0
    }

    fn direction(&self) -> Direction {
        Direction::Both
    }

    fn is_terminal(&self) -> bool {
        false
    }
}
