//! How many bytes the review sends to the terminal per step, through the
//! real crossterm backend into a counting sink (no terminal needed).
//!
//! Goals (issue 7): a step to the next target at 100x30 in plain mode under
//! 6 KB; a cursor-only move (the candidate-list highlight, Up/Down) under
//! 400 B. Also measured, without a goal: showing the cursor's candidate (the
//! show key: plot markers, matched lines, barycentric values), a jump to a
//! matched line (zoom and replot), and a cursor move with `follow_cursor =
//! true` (a move and a show in one). Run: `cargo bench --bench
//! terminal_bytes` (add `-- --check` to exit non-zero when a goal is missed
//! in any of the review backend's layouts: 100x30 and 80x24 plain, 100x30
//! Braille). The goals are checked on what the review sends
//! (`tui::lean::LeanBackend`, as `tui::run` uses); ratatui's own crossterm
//! backend is measured too, for comparison.
//!
//! Data: the invented fixture queue of the UI tests (six galaxy-like
//! targets, 2000 pixels each), so the figure does not depend on the
//! identifier's current output.

#[path = "../tests/common/review_fixture.rs"]
mod fx;

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::backend::{Backend, CrosstermBackend};
use ratatui::layout::Rect;
use ratatui::{Terminal, TerminalOptions, Viewport};
use std::cell::Cell;
use std::io::Write;
use std::rc::Rc;
use zsift::tui::app::{App, Msg};
use zsift::tui::lean::LeanBackend;
use zsift::tui::widgets;

/// A `Write` sink that only counts.
struct Counter(Rc<Cell<usize>>);

impl Write for Counter {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.0.set(self.0.get() + buf.len());
        Ok(buf.len())
    }
    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

fn press(app: &mut App, k: KeyCode) {
    let _ = app.update(Msg::Key(KeyEvent::new(k, KeyModifiers::NONE)));
    fx::deliver(app);
}

struct Stats {
    name: &'static str,
    samples: Vec<usize>,
    limit: usize,
}

impl Stats {
    fn max(&self) -> usize {
        self.samples.iter().copied().max().unwrap_or(0)
    }
    fn mean(&self) -> f64 {
        self.samples.iter().sum::<usize>() as f64 / self.samples.len().max(1) as f64
    }
}

fn measure(w: u16, h: u16, ascii: bool, lean: bool) -> Vec<Stats> {
    let count = Rc::new(Cell::new(0));
    if lean {
        run_steps(LeanBackend::new(Counter(count.clone())), count, w, h, ascii)
    } else {
        run_steps(
            CrosstermBackend::new(Counter(count.clone())),
            count,
            w,
            h,
            ascii,
        )
    }
}

fn run_steps<B: Backend>(
    backend: B,
    count: Rc<Cell<usize>>,
    w: u16,
    h: u16,
    ascii: bool,
) -> Vec<Stats>
where
    B::Error: std::fmt::Debug,
{
    let mut term = Terminal::with_options(
        backend,
        TerminalOptions {
            viewport: Viewport::Fixed(Rect::new(0, 0, w, h)),
        },
    )
    .expect("terminal");
    let mut app = fx::app();
    app.ascii = ascii;
    let mut draw = |app: &App| -> usize {
        let before = count.get();
        term.draw(|f| widgets::draw(f, app)).expect("draw");
        count.get() - before
    };
    let first = draw(&app);
    let mut step = Vec::new();
    let mut cursor = Vec::new();
    let mut show = Vec::new();
    let mut line = Vec::new();
    let mut follow = Vec::new();
    for _round in 0..3 {
        for _ in 0..app.targets.len() - 1 {
            press(&mut app, KeyCode::Char('n'));
            step.push(draw(&app));
            // Cursor only: off the shown row (the footer's show hint lights),
            // further off, back; then show candidate 2, move back to 1 and
            // show it again.
            for k in [KeyCode::Down, KeyCode::Down, KeyCode::Up] {
                press(&mut app, k);
                cursor.push(draw(&app));
            }
            press(&mut app, KeyCode::Enter);
            show.push(draw(&app));
            press(&mut app, KeyCode::Up);
            cursor.push(draw(&app));
            press(&mut app, KeyCode::Enter);
            show.push(draw(&app));
            press(&mut app, KeyCode::Tab);
            line.push(draw(&app));
            press(&mut app, KeyCode::Tab);
            line.push(draw(&app));
            press(&mut app, KeyCode::Char('0'));
            let _ = draw(&app);
        }
        for _ in 0..app.targets.len() - 1 {
            press(&mut app, KeyCode::Char('p'));
            step.push(draw(&app));
        }
    }
    // With `follow_cursor = true` every cursor move is also a show.
    app.follow_cursor = true;
    for _ in 0..app.targets.len() - 1 {
        press(&mut app, KeyCode::Char('n'));
        let _ = draw(&app);
        for k in [KeyCode::Down, KeyCode::Down, KeyCode::Up, KeyCode::Up] {
            press(&mut app, k);
            follow.push(draw(&app));
        }
    }
    vec![
        Stats {
            name: "first full draw",
            samples: vec![first],
            limit: usize::MAX,
        },
        Stats {
            name: "step to next/previous target",
            samples: step,
            limit: 6 * 1024,
        },
        Stats {
            name: "candidate cursor move (cursor only)",
            samples: cursor,
            limit: 400,
        },
        Stats {
            name: "show the cursor candidate (markers, lines)",
            samples: show,
            limit: usize::MAX,
        },
        Stats {
            name: "line jump (jump to line, zoom, replot)",
            samples: line,
            limit: usize::MAX,
        },
        Stats {
            name: "cursor move with follow_cursor = true",
            samples: follow,
            limit: usize::MAX,
        },
    ]
}

fn main() {
    let check = std::env::args().any(|a| a == "--check");
    let mut missed = false;
    for (w, h, ascii, lean) in [
        (100, 30, true, true),
        (80, 24, true, true),
        (100, 30, false, true),
        (100, 30, true, false),
    ] {
        println!(
            "{w}x{h} {}, {}",
            if ascii { "plain ASCII" } else { "Braille" },
            if lean {
                "the review's backend (tui::lean)"
            } else {
                "ratatui's crossterm backend, for comparison"
            }
        );
        for s in measure(w, h, ascii, lean) {
            let goal = if s.limit == usize::MAX {
                String::new()
            } else {
                format!("  (goal < {} B)", s.limit)
            };
            println!(
                "  {:<44} max {:>6} B  mean {:>8.1} B  over {} samples{goal}",
                s.name,
                s.max(),
                s.mean(),
                s.samples.len()
            );
            if lean && s.max() >= s.limit {
                missed = true;
            }
        }
    }
    if check && missed {
        eprintln!("a byte goal was missed");
        std::process::exit(1);
    }
}
