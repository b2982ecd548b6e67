//! The progress line on stderr: one renderer for the fit's steps (phase,
//! iteration, log-likelihood, gradient) and the ticks of every other long
//! phase (phase, done of total), each with the seconds its phase has run. It
//! speaks only to a terminal, only once the command has run a second, at most
//! ten times a second within a phase (a phase beginning is shown at once), and
//! is cleared when the work is done.

use std::io::IsTerminal;
use std::sync::Mutex;
use std::time::{Duration, Instant};

use crate::estimate::Step;
use crate::progress::Tick;

/// The width the line is padded to, so that a shorter line hides a longer one.
const WIDTH: usize = 96;
/// Nothing is shown before the command has run this long.
const QUIET_FOR: Duration = Duration::from_secs(1);
/// The least time between two lines.
const EVERY: Duration = Duration::from_millis(100);

/// What the line last showed, and when each phase began.
struct Shown {
    phase: &'static str,
    at: Option<Instant>,
    began: Vec<(&'static str, Instant)>,
}

/// The progress line of one command.
pub struct Line {
    start: Instant,
    tty: bool,
    shown: Mutex<Shown>,
}

impl Line {
    /// A line on stderr (silent unless stderr is a terminal).
    pub fn stderr() -> Line {
        let start = Instant::now();
        Line {
            start,
            tty: std::io::stderr().is_terminal(),
            shown: Mutex::new(Shown {
                phase: "",
                at: None,
                began: Vec::new(),
            }),
        }
    }

    /// Shows `what` of `phase` with the seconds since the phase began (first
    /// met, or met again with `begins`); a phase other than the last one
    /// shown, or one that begins, is shown at once.
    fn show(&self, phase: &'static str, begins: bool, what: &str) {
        if !self.tty {
            return;
        }
        let Ok(mut shown) = self.shown.lock() else {
            return;
        };
        let now = Instant::now();
        let since = match shown.began.iter_mut().find(|b| b.0 == phase) {
            Some(b) => {
                if begins {
                    b.1 = now;
                }
                b.1
            }
            None => {
                shown.began.push((phase, now));
                now
            }
        };
        let fresh = begins || shown.phase != phase;
        shown.phase = phase;
        let due = fresh || shown.at.is_none_or(|t| now - t >= EVERY);
        if now - self.start < QUIET_FOR || !due {
            return;
        }
        shown.at = Some(now);
        let secs = (now - since).as_secs_f64();
        let text = format!("  {phase}  {what}  {secs:.0} s");
        crate::report::note(&format!("\r{text:WIDTH$}"));
    }

    /// A step of the fit.
    pub fn step(&self, s: Step) {
        self.show(
            s.phase,
            false,
            &format!(
                "iteration {:>4}  log-likelihood {:>16.6}  gradient {:>10.3e}",
                s.iteration, s.log_likelihood, s.gradient_norm
            ),
        );
    }

    /// A tick of any other phase.
    pub fn tick(&self, t: Tick) {
        self.show(t.phase, t.done == 0, &done_of(t));
    }

    /// Clears the line, if one was shown.
    pub fn clear(&self) {
        let shown = self.shown.lock().map(|s| s.at.is_some()).unwrap_or(true);
        if self.tty && shown {
            crate::report::note(&format!("\r{:WIDTH$}\r", ""));
        }
    }
}

/// `done/total`, with the percentage for long phases.
fn done_of(t: Tick) -> String {
    if t.total >= 100 {
        // Rounded down: 100% only when every step is done.
        let pct = 100 * t.done.min(t.total) as u128 / t.total as u128;
        format!("{}/{} ({pct}%)", t.done, t.total)
    } else {
        format!("{}/{}", t.done, t.total)
    }
}
