//! Progress of long work as plain values: a phase reports how many of its
//! steps are done through a sink the caller passes in. The library never
//! prints; the command line renders the ticks on stderr and the workbench may
//! show them. Sinks only watch: no figure depends on whether one is present.

use std::sync::atomic::{AtomicUsize, Ordering};

/// One report of progress: `done` of the `total` steps of `phase` are finished.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Tick {
    pub phase: &'static str,
    pub done: usize,
    pub total: usize,
}

/// Where ticks go: called from the thread doing the work (which may be any
/// thread, hence `Sync`). It should return quickly.
pub type Sink<'a> = &'a (dyn Fn(Tick) + Sync);

fn ignore(_: Tick) {}

/// The sink that drops every tick.
pub const QUIET: Sink<'static> = &ignore;

/// A phase of `total` steps reported to a sink: `start` reports none done,
/// each `step` one more, and `finish` all of them (once, however many steps
/// were counted). Steps may be counted from several threads.
pub struct Phase<'a> {
    sink: Sink<'a>,
    name: &'static str,
    total: usize,
    done: AtomicUsize,
}

impl<'a> Phase<'a> {
    /// Reports `name` begun with `total` steps, none done.
    pub fn start(sink: Sink<'a>, name: &'static str, total: usize) -> Self {
        sink(Tick {
            phase: name,
            done: 0,
            total,
        });
        Phase {
            sink,
            name,
            total,
            done: AtomicUsize::new(0),
        }
    }

    /// One more step done (never past the total: the last is left to `finish`).
    pub fn step(&self) {
        self.advance(1);
    }

    /// `n` more steps done.
    pub fn advance(&self, n: usize) {
        let done = self.done.fetch_add(n, Ordering::Relaxed) + n;
        if done < self.total {
            (self.sink)(Tick {
                phase: self.name,
                done,
                total: self.total,
            });
        }
    }

    /// Reports every step done.
    pub fn finish(self) {
        (self.sink)(Tick {
            phase: self.name,
            done: self.total,
            total: self.total,
        });
    }

    /// The sink this phase reports to (for a phase nested in it).
    pub fn sink(&self) -> Sink<'a> {
        self.sink
    }
}

/// Runs `work` as a phase of one step: a tick before, one after.
pub fn one<T>(sink: Sink, name: &'static str, work: impl FnOnce() -> T) -> T {
    let phase = Phase::start(sink, name, 1);
    let out = work();
    phase.finish();
    out
}
