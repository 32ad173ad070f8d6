//! The terminal runtime: puts the terminal in raw mode on the alternate
//! screen, feeds keys, resizes, worker results and signals into
//! [`App::update`] as messages on one channel, carries out the effects, and
//! draws after each burst of messages (ratatui sends only the cells that
//! changed).
//!
//! The terminal is restored on every way out: a normal quit, an error, a
//! panic (a panic hook restores it before the message is printed) and SIGTERM
//! / SIGHUP / SIGINT (turned into [`Msg::Stop`]). Every decision is durable
//! before the screen says saved, so stopping at any moment loses nothing.

use super::app::{App, Effect, Msg};
use super::journal::Journal;
use super::lean::LeanBackend;
use super::widgets;
use super::worker::{Analyser, THREAD_NAME, Worker};
use crossterm::event::{self, Event};
use crossterm::execute;
use crossterm::terminal::{
    EnterAlternateScreen, LeaveAlternateScreen, disable_raw_mode, enable_raw_mode,
};
use ratatui::Terminal;
use ratatui::backend::Backend;
use std::io::Write;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{Receiver, Sender, channel};

/// What happened in a session, for the goodbye line.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Summary {
    /// Log entries written this session.
    pub written: usize,
    /// Targets with a decision at the end.
    pub decided: usize,
    /// Targets in the queue.
    pub total: usize,
    /// Why the review ended, when a signal ended it.
    pub stopped_by: Option<String>,
}

/// True while the terminal is in raw mode on the alternate screen.
static TERMINAL_TAKEN: AtomicBool = AtomicBool::new(false);

/// Put the terminal back: leave the alternate screen, show the cursor, leave
/// raw mode. Safe to call more than once and when the terminal is gone.
pub fn restore_terminal() {
    if TERMINAL_TAKEN.swap(false, Ordering::SeqCst) {
        let mut out = std::io::stdout();
        let _ = execute!(out, LeaveAlternateScreen, crossterm::cursor::Show);
        let _ = disable_raw_mode();
        let _ = out.flush();
    }
}

/// Restores the terminal when dropped.
struct Guard;

impl Drop for Guard {
    fn drop(&mut self) {
        restore_terminal();
    }
}

fn install_panic_hook() {
    let previous = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        // Worker panics are caught and shown as a failed target.
        if std::thread::current().name() == Some(THREAD_NAME) {
            return;
        }
        restore_terminal();
        previous(info);
    }));
}

fn spawn_input(tx: Sender<Msg>) {
    let _ = std::thread::Builder::new()
        .name("zsift-input".into())
        .spawn(move || {
            loop {
                let msg = match event::read() {
                    Ok(Event::Key(k)) => Msg::Key(k),
                    Ok(Event::Resize(w, h)) => Msg::Resize(w, h),
                    Ok(_) => continue,
                    Err(e) => Msg::Stop(format!("the terminal went away: {e}")),
                };
                let stop = matches!(msg, Msg::Stop(_));
                if tx.send(msg).is_err() || stop {
                    return;
                }
            }
        });
}

fn spawn_signals(tx: Sender<Msg>) -> std::io::Result<signal_hook::iterator::Handle> {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
    let mut signals = signal_hook::iterator::Signals::new([SIGTERM, SIGHUP, SIGINT])?;
    let handle = signals.handle();
    std::thread::Builder::new()
        .name("zsift-signals".into())
        .spawn(move || {
            if let Some(sig) = signals.forever().next() {
                let name = match sig {
                    SIGTERM => "SIGTERM",
                    SIGHUP => "SIGHUP (link dropped)",
                    _ => "SIGINT",
                };
                let _ = tx.send(Msg::Stop(format!("stopped by {name}")));
            }
        })?;
    Ok(handle)
}

/// The event loop over any backend, with messages from `rx`. Used by
/// [`run`] with the real terminal; tests drive it with a `TestBackend`.
pub fn event_loop<B: Backend>(
    terminal: &mut Terminal<B>,
    app: &mut App,
    rx: &Receiver<Msg>,
    worker: &Worker,
    analyser: &dyn Analyser,
    journal: &mut dyn Journal,
) -> anyhow::Result<Summary>
where
    B::Error: Send + Sync + 'static,
{
    let mut written = 0;
    let mut stopped_by = None;
    let mut queue: std::collections::VecDeque<Msg> = std::collections::VecDeque::new();
    let mut carry_out = |effects: Vec<Effect>,
                         app: &App,
                         queue: &mut std::collections::VecDeque<Msg>,
                         written: &mut usize| {
        for e in effects {
            match e {
                Effect::Record(entry) => {
                    let result = journal.write(&app.targets, &entry);
                    if result.is_ok() {
                        *written += 1;
                    }
                    queue.push_back(Msg::Recorded { entry, result });
                }
                Effect::Want(v) => worker.want(v),
                Effect::Remeasure { target, z } => {
                    if let Some(l) = app.slots.get(&target).and_then(|s| match s {
                        super::app::Slot::Ready(l) => Some(l.clone()),
                        _ => None,
                    }) {
                        match analyser.remeasure(&l, z) {
                            Ok(candidate) => queue.push_back(Msg::Remeasured {
                                target,
                                z,
                                candidate,
                            }),
                            Err(message) => {
                                queue.push_back(Msg::RemeasureFailed { target, message })
                            }
                        }
                    }
                }
                Effect::Quit => {}
            }
        }
    };
    let start = app.start();
    carry_out(start, app, &mut queue, &mut written);
    terminal.draw(|f| widgets::draw(f, app))?;
    loop {
        if queue.is_empty() {
            match rx.recv() {
                Ok(m) => queue.push_back(m),
                Err(_) => break,
            }
        }
        // Take everything already waiting, then draw once.
        while let Ok(m) = rx.try_recv() {
            queue.push_back(m);
        }
        while let Some(msg) = queue.pop_front() {
            if let Msg::Stop(why) = &msg {
                stopped_by = Some(why.clone());
            }
            let effects = app.update(msg);
            carry_out(effects, app, &mut queue, &mut written);
            if app.quitting {
                break;
            }
        }
        if app.quitting {
            break;
        }
        if let Err(e) = terminal.draw(|f| widgets::draw(f, app)) {
            // A dropped link: the decisions are on disk, just leave.
            stopped_by.get_or_insert_with(|| format!("the terminal went away: {e}"));
            break;
        }
    }
    Ok(Summary {
        written,
        decided: app.decided(),
        total: app.targets.len(),
        stopped_by,
    })
}

/// Run the review in the real terminal until the person quits or a signal
/// stops it. The terminal is restored before this returns (or panics).
pub fn run(
    mut app: App,
    analyser: Arc<dyn Analyser>,
    journal: &mut dyn Journal,
) -> anyhow::Result<Summary> {
    install_panic_hook();
    let (tx, rx) = channel();
    let signals = spawn_signals(tx.clone())?;
    let targets = Arc::new(app.targets.clone());
    let worker = Worker::spawn(analyser.clone(), targets, tx.clone())?;

    enable_raw_mode()?;
    TERMINAL_TAKEN.store(true, Ordering::SeqCst);
    let _guard = Guard;
    // Terminal::clear would ask the terminal for the cursor position, which
    // some pseudo-terminals never answer; clearing directly needs no reply.
    execute!(
        std::io::stdout(),
        EnterAlternateScreen,
        crossterm::terminal::Clear(crossterm::terminal::ClearType::All)
    )?;
    let mut terminal = Terminal::new(LeanBackend::new(std::io::stdout()))?;
    terminal.hide_cursor()?;
    spawn_input(tx);
    let summary = event_loop(
        &mut terminal,
        &mut app,
        &rx,
        &worker,
        analyser.as_ref(),
        journal,
    );
    signals.close();
    drop(terminal);
    restore_terminal();
    summary
}
