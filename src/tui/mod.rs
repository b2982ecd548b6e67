//! `sharecast explore`: the interactive terminal workbench. This module owns
//! the run loop and the terminal: raw mode and the alternate screen on entry,
//! restored on every way out (return, error, panic); `app` holds the shared
//! state and `update`, `part` what a view is, `views` the list of views (each
//! owning its state and drawing), `worker` the background jobs; `design` the
//! workbench on a survey design file, with its own state and views.

pub mod app;
mod cutaxis;
pub mod design;
pub mod filter;
pub mod grid;
pub mod help;
pub mod keys;
pub mod part;
pub mod screen;
pub mod shell;
pub mod theme;
pub mod views;
pub mod widgets;
pub mod worker;

pub use views::whatif::levers;
pub use views::{compare, curve, diversion, elasticities, estimates, overview, whatif};

use std::io::{IsTerminal, Stdout};
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, AtomicI32, Ordering};
use std::sync::{mpsc, OnceLock};
use std::thread::ThreadId;
use std::time::Duration;

use ratatui::backend::CrosstermBackend;
use ratatui::buffer::Buffer;
use ratatui::crossterm::event::{self, Event};
use ratatui::crossterm::terminal::{
    disable_raw_mode, enable_raw_mode, EnterAlternateScreen, LeaveAlternateScreen,
};
use ratatui::crossterm::{cursor, execute};
use ratatui::layout::Rect;
use ratatui::widgets::Widget;
use ratatui::Terminal;

use crate::error::{Error, Result};
use app::{update, App, Msg, Stage, Tone};

/// Whether the terminal is in the workbench's modes (raw, alternate screen).
static ACTIVE: AtomicBool = AtomicBool::new(false);
/// The real stderr while it is pointed at /dev/null (-1 when it is not).
static SAVED_STDERR: AtomicI32 = AtomicI32::new(-1);
static UI_THREAD: OnceLock<ThreadId> = OnceLock::new();

/// While the screen is drawn, anything written to stderr (a library's trace,
/// a worker's panic message) would be painted over it: send it to /dev/null.
fn quiet_stderr() {
    #[cfg(unix)]
    {
        if !std::io::stderr().is_terminal() || SAVED_STDERR.load(Ordering::SeqCst) >= 0 {
            return;
        }
        // SAFETY: plain descriptor calls on fd 2 and descriptors opened here; every
        // return value is checked and nothing is left open on failure.
        unsafe {
            let saved = libc::dup(2);
            if saved < 0 {
                return;
            }
            let null = libc::open(c"/dev/null".as_ptr(), libc::O_WRONLY);
            if null < 0 {
                libc::close(saved);
                return;
            }
            if libc::dup2(null, 2) < 0 {
                libc::close(saved);
            } else {
                SAVED_STDERR.store(saved, Ordering::SeqCst);
            }
            libc::close(null);
        }
    }
}

fn restore_stderr() {
    #[cfg(unix)]
    {
        let saved = SAVED_STDERR.swap(-1, Ordering::SeqCst);
        if saved >= 0 {
            // SAFETY: `saved` is the descriptor `quiet_stderr` duplicated from fd 2.
            unsafe {
                libc::dup2(saved, 2);
                libc::close(saved);
            }
        }
    }
}

/// Puts the terminal back; safe to call more than once, from any exit path.
pub fn restore_terminal() {
    if ACTIVE.swap(false, Ordering::SeqCst) {
        let _ = disable_raw_mode();
        let _ = execute!(std::io::stdout(), LeaveAlternateScreen, cursor::Show);
    }
    restore_stderr();
}

/// A panic on the UI thread restores the terminal before the message prints;
/// one on the worker leaves the screen alone (the job reports an error instead).
fn install_panic_hook() {
    static ONCE: OnceLock<()> = OnceLock::new();
    ONCE.get_or_init(|| {
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            let ui = UI_THREAD
                .get()
                .is_none_or(|id| *id == std::thread::current().id());
            if ui {
                restore_terminal();
            }
            previous(info);
        }));
    });
}

/// The terminal in the workbench's modes; dropping it restores them.
struct Session {
    terminal: Terminal<CrosstermBackend<Stdout>>,
}

impl Session {
    fn start() -> std::io::Result<Session> {
        let _ = UI_THREAD.set(std::thread::current().id());
        install_panic_hook();
        enable_raw_mode()?;
        ACTIVE.store(true, Ordering::SeqCst);
        let started = (|| {
            execute!(std::io::stdout(), EnterAlternateScreen, cursor::Hide)?;
            Terminal::new(CrosstermBackend::new(std::io::stdout()))
        })();
        match started {
            Ok(terminal) => {
                quiet_stderr();
                Ok(Session { terminal })
            }
            Err(e) => {
                restore_terminal();
                Err(e)
            }
        }
    }
}

impl Drop for Session {
    fn drop(&mut self) {
        restore_terminal();
    }
}

/// What the run loop drives: the model workbench (`App`) or the design
/// workbench (`design::Desk`). Both take the same messages and send the same
/// worker their jobs.
pub trait Bench {
    /// Applies one message; returns the jobs for the worker.
    fn update(&mut self, msg: Msg) -> Vec<worker::Job>;
    fn quitting(&self) -> bool;
    /// Puts a message on the message line.
    fn say(&mut self, tone: Tone, text: String);
    /// Draws the whole screen.
    fn draw(&self, area: Rect, buf: &mut Buffer);
    /// Why it could not open, once it failed (the run ends in that error).
    fn failure(&self) -> Option<String>;
}

impl Bench for App {
    fn update(&mut self, msg: Msg) -> Vec<worker::Job> {
        update(self, msg)
    }

    fn quitting(&self) -> bool {
        self.quit
    }

    fn say(&mut self, tone: Tone, text: String) {
        App::say(self, tone, text);
    }

    fn draw(&self, area: Rect, buf: &mut Buffer) {
        self.render(area, buf);
    }

    fn failure(&self) -> Option<String> {
        match &self.stage {
            Stage::Failed(message) => Some(message.clone()),
            _ => None,
        }
    }
}

/// What `explore` was given: the design file when the paths are one design
/// file, None when they are all specs; an error naming the file when design
/// files and specs are mixed, when several design files are given, or when
/// `--load` comes with a design file.
pub fn design_given(paths: &[PathBuf], load: Option<&Path>) -> Result<Option<PathBuf>> {
    let designs: Vec<&PathBuf> = paths
        .iter()
        .filter(|p| crate::experiment::is_design_file(p))
        .collect();
    let Some(first) = designs.first() else {
        return Ok(None);
    };
    if paths.len() > 1 {
        let other = paths.iter().find(|p| p != first).unwrap_or(first);
        let what = if designs.len() > 1 {
            "another design file"
        } else {
            "a spec"
        };
        return Err(Error::Usage(format!(
            "{} is a design file and {} is {what}: explore opens one or more specs, or one design file alone",
            first.display(),
            other.display()
        )));
    }
    if load.is_some() {
        return Err(Error::Usage(format!(
            "--load restores a fitted spec, and {} is a design file: open it without --load",
            first.display()
        )));
    }
    Ok(Some(first.to_path_buf()))
}

/// Runs the workbench on `specs` (restoring the fit saved at `load` where it
/// matches), or on one design file, until the user quits.
pub fn run(specs: Vec<PathBuf>, load: Option<PathBuf>) -> Result<ExitCode> {
    let design = design_given(&specs, load.as_deref())?;
    // A design file is read before the screen changes: its mistakes print as
    // plain errors naming the file and the key.
    let plan = design.as_deref().map(crate::experiment::read).transpose()?;
    if !std::io::stdout().is_terminal() || !std::io::stdin().is_terminal() {
        return Err(Error::Usage(
            "explore is interactive and needs a terminal; `fit`, `simulate` and `sweep` print reports instead (`design` for a design file)".into(),
        ));
    }
    match plan {
        Some(plan) => {
            let (mut desk, jobs) = design::Desk::new(plan, theme::Theme::detect());
            on_terminal(&mut desk, jobs)
        }
        None => {
            let (mut app, jobs) = App::new(specs, load, theme::Theme::detect());
            on_terminal(&mut app, jobs)
        }
    }
}

/// Runs a workbench on the terminal until it quits.
fn on_terminal(bench: &mut impl Bench, jobs: Vec<worker::Job>) -> Result<ExitCode> {
    let mut session = Session::start().map_err(|e| Error::io("the terminal", e))?;
    let outcome = event_loop(&mut session.terminal, bench, jobs);
    drop(session);
    outcome.map_err(|e| Error::io("the terminal", e))?;
    match bench.failure() {
        Some(message) => Err(Error::Usage(message)),
        None => Ok(ExitCode::SUCCESS),
    }
}

fn event_loop(
    terminal: &mut Terminal<CrosstermBackend<Stdout>>,
    app: &mut impl Bench,
    jobs: Vec<worker::Job>,
) -> std::io::Result<()> {
    let (tx, rx) = mpsc::channel::<Msg>();
    let worker = worker::spawn(tx)?;
    let send = |jobs: Vec<worker::Job>| {
        for j in jobs {
            let _ = worker.send(j);
        }
    };
    send(jobs);
    let mut dirty = true;
    let mut worker_gone = false;
    while !app.quitting() {
        if dirty {
            terminal.draw(|f| app.draw(f.area(), f.buffer_mut()))?;
            dirty = false;
        }
        if event::poll(Duration::from_millis(25))? {
            match event::read()? {
                Event::Key(k) => {
                    send(app.update(Msg::Key(k)));
                    dirty = true;
                }
                Event::Resize(..) => {
                    terminal.autoresize()?;
                    send(app.update(Msg::Resize));
                    dirty = true;
                }
                _ => {}
            }
        }
        loop {
            match rx.try_recv() {
                Ok(m) => {
                    send(app.update(m));
                    dirty = true;
                }
                Err(mpsc::TryRecvError::Empty) => break,
                Err(mpsc::TryRecvError::Disconnected) => {
                    if !worker_gone {
                        worker_gone = true;
                        app.say(
                            Tone::Bad,
                            "the background worker stopped: restart the workbench".into(),
                        );
                        dirty = true;
                    }
                    break;
                }
            }
        }
    }
    Ok(())
}

/// The screen as text at a given size: for tests and documentation.
pub fn render_text(bench: &impl Bench, width: u16, height: u16) -> String {
    let area = Rect::new(0, 0, width, height);
    let mut buf = Buffer::empty(area);
    bench.draw(area, &mut buf);
    let mut out = String::new();
    for y in 0..height {
        let line: String = (0..width)
            .filter_map(|x| buf.cell((x, y)).map(|c| c.symbol().to_string()))
            .collect();
        out.push_str(line.trim_end());
        out.push('\n');
    }
    out
}
