//! `sharecast explore`: the interactive terminal workbench. This module owns
//! the run loop and the terminal: raw mode and the alternate screen on entry,
//! restored on every way out (return, error, panic); `app` holds the shared
//! state and `update`, `part` what a view is, `views` the list of views (each
//! owning its state and drawing), `worker` the background jobs.

pub mod app;
mod cutaxis;
pub mod filter;
pub mod grid;
pub mod help;
pub mod keys;
pub mod part;
pub mod screen;
pub mod theme;
pub mod views;
pub mod widgets;
pub mod worker;

pub use views::whatif::levers;
pub use views::{compare, curve, diversion, elasticities, estimates, overview, whatif};

use std::io::{IsTerminal, Stdout};
use std::path::PathBuf;
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

/// Runs the workbench until the user quits.
/// Runs the workbench on `specs`, restoring the fit saved at `load` where it matches.
pub fn run(specs: Vec<PathBuf>, load: Option<PathBuf>) -> Result<ExitCode> {
    if !std::io::stdout().is_terminal() || !std::io::stdin().is_terminal() {
        return Err(Error::Usage(
            "explore is interactive and needs a terminal; `fit`, `simulate` and `sweep` print reports instead".into(),
        ));
    }
    let (mut app, jobs) = App::new(specs, load, theme::Theme::detect());
    let mut session = Session::start().map_err(|e| Error::io("the terminal", e))?;
    let outcome = event_loop(&mut session.terminal, &mut app, jobs);
    drop(session);
    outcome.map_err(|e| Error::io("the terminal", e))?;
    match app.stage {
        Stage::Failed(message) => Err(Error::Usage(message)),
        _ => Ok(ExitCode::SUCCESS),
    }
}

fn event_loop(
    terminal: &mut Terminal<CrosstermBackend<Stdout>>,
    app: &mut App,
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
    while !app.quit {
        if dirty {
            terminal.draw(|f| f.render_widget(&*app, f.area()))?;
            dirty = false;
        }
        if event::poll(Duration::from_millis(25))? {
            match event::read()? {
                Event::Key(k) => {
                    send(update(app, Msg::Key(k)));
                    dirty = true;
                }
                Event::Resize(..) => {
                    terminal.autoresize()?;
                    send(update(app, Msg::Resize));
                    dirty = true;
                }
                _ => {}
            }
        }
        loop {
            match rx.try_recv() {
                Ok(m) => {
                    send(update(app, m));
                    dirty = true;
                }
                Err(mpsc::TryRecvError::Empty) => break,
                Err(mpsc::TryRecvError::Disconnected) => {
                    if !worker_gone {
                        worker_gone = true;
                        app.say(
                            Tone::Bad,
                            "the background worker stopped: restart the workbench",
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
pub fn render_text(app: &App, width: u16, height: u16) -> String {
    let area = Rect::new(0, 0, width, height);
    let mut buf = Buffer::empty(area);
    app.render(area, &mut buf);
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
