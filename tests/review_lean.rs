//! The review's terminal backend (`tui::lean::LeanBackend`) leaves exactly the
//! screen that ratatui's own crossterm backend leaves, frame after frame, and
//! sends fewer bytes for it.
//!
//! Oracle: both byte streams are played into the same small terminal model
//! (cursor moves, erase to end of line, colours and attributes, one- and
//! two-column characters as xterm treats them); after every frame the two
//! screens must be identical cell for cell, and equal to the frame ratatui
//! rendered.

#[path = "common/review_fixture.rs"]
mod fx;

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::backend::{Backend, CrosstermBackend};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::{Terminal, TerminalOptions, Viewport};
use std::io::Write;
use std::sync::{Arc, Mutex};
use zsift::tui::app::Msg;
use zsift::tui::lean::LeanBackend;
use zsift::tui::theme::Theme;
use zsift::tui::widgets;

#[derive(Clone, Default)]
struct Sink(Arc<Mutex<Vec<u8>>>);

impl Write for Sink {
    fn write(&mut self, b: &[u8]) -> std::io::Result<usize> {
        self.0.lock().expect("lock").extend_from_slice(b);
        Ok(b.len())
    }
    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

impl Sink {
    fn take(&self) -> Vec<u8> {
        std::mem::take(&mut *self.0.lock().expect("lock"))
    }
}

/// Columns a character takes in the model: CJK ideographs two, else one.
fn columns(c: char) -> usize {
    if ('\u{4E00}'..='\u{9FFF}').contains(&c) {
        2
    } else {
        1
    }
}

/// One cell of the model: text ("" = covered by the wide character to its
/// left), foreground, background and attribute codes.
#[derive(Debug, Clone, PartialEq, Eq)]
struct Glyph {
    text: String,
    fg: String,
    bg: String,
    attrs: Vec<u16>,
}

impl Glyph {
    fn blank() -> Glyph {
        Glyph {
            text: " ".into(),
            fg: String::new(),
            bg: String::new(),
            attrs: Vec::new(),
        }
    }
}

/// A terminal that understands what the crossterm backend writes.
struct Model {
    w: usize,
    h: usize,
    cells: Vec<Vec<Glyph>>,
    x: usize,
    y: usize,
    pen: Glyph,
}

impl Model {
    fn new(w: usize, h: usize) -> Model {
        Model {
            w,
            h,
            cells: vec![vec![Glyph::blank(); w]; h],
            x: 0,
            y: 0,
            pen: Glyph::blank(),
        }
    }

    /// Break a wide character that (x, y) is part of, as xterm does.
    fn unwide(&mut self, x: usize, y: usize) {
        let row = &mut self.cells[y];
        if row[x].text.is_empty() && x > 0 {
            row[x - 1].text = " ".into();
        }
        if x + 1 < self.w && row[x + 1].text.is_empty() {
            row[x + 1].text = " ".into();
        }
    }

    fn sgr(&mut self, params: &[u16]) {
        let mut i = 0;
        if params.is_empty() {
            self.pen = Glyph::blank();
        }
        while i < params.len() {
            let p = params[i];
            match p {
                0 => self.pen = Glyph::blank(),
                30..=37 | 90..=97 => self.pen.fg = p.to_string(),
                39 => self.pen.fg.clear(),
                40..=47 | 100..=107 => self.pen.bg = p.to_string(),
                49 => self.pen.bg.clear(),
                38 | 48 | 58 => {
                    let n = if params.get(i + 1) == Some(&5) { 3 } else { 5 };
                    let code: Vec<String> = params[i..(i + n).min(params.len())]
                        .iter()
                        .map(|v| v.to_string())
                        .collect();
                    match p {
                        38 => self.pen.fg = code.join(";"),
                        48 => self.pen.bg = code.join(";"),
                        _ => {}
                    }
                    i += n - 1;
                }
                59 => {}
                22 => self.pen.attrs.retain(|a| *a != 1 && *a != 2),
                23..=29 => {
                    let off = p - 20;
                    self.pen.attrs.retain(|a| *a != off);
                }
                a => {
                    if !self.pen.attrs.contains(&a) {
                        self.pen.attrs.push(a);
                        self.pen.attrs.sort();
                    }
                }
            }
            i += 1;
        }
    }

    fn play(&mut self, bytes: &[u8]) {
        let text = std::str::from_utf8(bytes).expect("the backend writes UTF-8");
        let mut chars = text.chars().peekable();
        while let Some(c) = chars.next() {
            if c == '\x1b' {
                assert_eq!(chars.next(), Some('['), "only CSI sequences are expected");
                let mut body = String::new();
                let end = loop {
                    let ch = chars.next().expect("a complete sequence");
                    if ch.is_ascii_alphabetic() {
                        break ch;
                    }
                    body.push(ch);
                };
                if body.starts_with('?') {
                    continue; // cursor shown or hidden
                }
                let params: Vec<u16> = body
                    .split(';')
                    .filter(|p| !p.is_empty())
                    .map(|p| p.parse().expect("a number"))
                    .collect();
                match end {
                    'H' => {
                        self.y = params.first().copied().unwrap_or(1) as usize - 1;
                        self.x = params.get(1).copied().unwrap_or(1) as usize - 1;
                    }
                    'K' => {
                        assert!(params.is_empty() || params == [0], "erase to the end only");
                        if self.x < self.w {
                            self.unwide(self.x, self.y);
                            let bg = self.pen.bg.clone();
                            for g in &mut self.cells[self.y][self.x..] {
                                *g = Glyph {
                                    bg: bg.clone(),
                                    ..Glyph::blank()
                                };
                            }
                        }
                    }
                    'm' => self.sgr(&params),
                    other => panic!("unexpected sequence ESC [ {body} {other}"),
                }
                continue;
            }
            assert!(self.y < self.h && self.x < self.w, "writing off the screen");
            self.unwide(self.x, self.y);
            let n = columns(c);
            self.cells[self.y][self.x] = Glyph {
                text: c.to_string(),
                ..self.pen.clone()
            };
            if n == 2 && self.x + 1 < self.w {
                self.unwide(self.x + 1, self.y);
                self.cells[self.y][self.x + 1] = Glyph {
                    text: String::new(),
                    ..self.pen.clone()
                };
            }
            self.x += n;
        }
    }

    fn text(&self) -> Vec<String> {
        self.cells
            .iter()
            .map(|r| r.iter().map(|g| g.text.as_str()).collect())
            .collect()
    }
}

fn frame_text(buf: &Buffer) -> Vec<String> {
    let a = buf.area;
    (a.top()..a.bottom())
        .map(|y| {
            let mut s = String::new();
            let mut skip = 0;
            for x in a.left()..a.right() {
                if skip > 0 {
                    skip -= 1;
                    continue;
                }
                let sym = buf[(x, y)].symbol();
                skip = sym.chars().map(columns).sum::<usize>().saturating_sub(1);
                s.push_str(sym);
            }
            s
        })
        .collect()
}

fn terminal<B: Backend>(backend: B, w: u16, h: u16) -> Terminal<B> {
    Terminal::with_options(
        backend,
        TerminalOptions {
            viewport: Viewport::Fixed(Rect::new(0, 0, w, h)),
        },
    )
    .expect("terminal")
}

/// A fixed pseudo-random walk over the review's keys.
fn keys(n: usize, seed: u64) -> Vec<KeyCode> {
    let pool = [
        KeyCode::Char('n'),
        KeyCode::Char('p'),
        KeyCode::Down,
        KeyCode::Up,
        KeyCode::Enter,
        KeyCode::Down,
        KeyCode::Tab,
        KeyCode::BackTab,
        KeyCode::Char('+'),
        KeyCode::Char('-'),
        KeyCode::Left,
        KeyCode::Right,
        KeyCode::Char('0'),
        KeyCode::Char('s'),
        KeyCode::Char('e'),
        KeyCode::Char('k'),
        KeyCode::Char('>'),
        KeyCode::Char(','),
        KeyCode::Char('z'),
        KeyCode::Char('?'),
        KeyCode::Char('x'),
        KeyCode::Char(' '),
    ];
    let mut x = seed;
    (0..n)
        .map(|_| {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            pool[(x % pool.len() as u64) as usize]
        })
        .collect()
}

fn compare(
    w: u16,
    h: u16,
    ascii: bool,
    theme: &str,
    wide_names: bool,
    seed: u64,
) -> (usize, usize) {
    let (plain_sink, lean_sink) = (Sink::default(), Sink::default());
    let mut plain = terminal(CrosstermBackend::new(plain_sink.clone()), w, h);
    let mut lean = terminal(LeanBackend::new(lean_sink.clone()), w, h);
    let (mut plain_model, mut lean_model) = (
        Model::new(w as usize, h as usize),
        Model::new(w as usize, h as usize),
    );
    let mut app = fx::app();
    app.ascii = ascii;
    app.theme = Theme::find(theme, None).expect("built-in theme");
    if wide_names {
        for (i, t) in app.targets.iter_mut().enumerate() {
            // Wide characters that shift position from target to target.
            t.name = format!("{}斗{i} {}Ørla", "北".repeat(i % 3), "x".repeat(i % 2));
        }
    }
    let (mut plain_bytes, mut lean_bytes) = (0, 0);
    for (step, k) in std::iter::once(None)
        .chain(keys(200, seed).into_iter().map(Some))
        .enumerate()
    {
        if let Some(k) = k {
            let _ = app.update(Msg::Key(KeyEvent::new(k, KeyModifiers::NONE)));
            fx::deliver(&mut app);
        }
        let mut rendered = None;
        plain
            .draw(|f| {
                widgets::draw(f, &app);
                rendered = Some(f.buffer_mut().clone());
            })
            .expect("draw");
        lean.draw(|f| widgets::draw(f, &app)).expect("draw");
        let (a, b) = (plain_sink.take(), lean_sink.take());
        plain_bytes += a.len();
        lean_bytes += b.len();
        plain_model.play(&a);
        lean_model.play(&b);
        assert_eq!(
            lean_model.cells, plain_model.cells,
            "{w}x{h} {theme} step {step} ({k:?}): the screens differ"
        );
        let want = frame_text(&rendered.expect("frame"));
        assert_eq!(
            lean_model.text(),
            want,
            "{w}x{h} step {step}: not the rendered frame"
        );
    }
    (plain_bytes, lean_bytes)
}

#[test]
fn the_lean_backend_leaves_the_same_screen_as_ratatuis_and_sends_less() {
    for (w, h, ascii, theme, wide, seed) in [
        (100, 30, true, "standard", false, 1),
        (80, 24, true, "standard", false, 2),
        (100, 30, false, "standard", false, 3),
        (80, 24, false, "night", false, 4),
        (100, 30, true, "contrast", true, 5),
        (80, 24, false, "mono", true, 6),
    ] {
        let (plain, lean) = compare(w, h, ascii, theme, wide, seed);
        assert!(
            lean < plain,
            "{w}x{h} {theme}: {lean} B is not less than ratatui's {plain} B"
        );
    }
}
