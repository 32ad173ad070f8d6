//! A terminal backend that sends fewer bytes than ratatui's crossterm backend
//! for the same screen changes, for slow links (SSH from a telescope).
//!
//! ratatui hands the backend only the cells that changed since the last
//! frame; the crossterm backend writes each run of changed cells after a
//! cursor move (6-8 bytes). Two things make that costly for this review: a
//! list or plot row that is emptied (old text replaced by blanks whose spaces
//! coincide with the old spaces, so it comes as many short runs), and runs
//! separated by one or two unchanged cells. [`LeanBackend`] keeps a copy of
//! what the terminal shows and, per row,
//! - writes the unchanged cells of a short gap between two changed runs again
//!   (they are already on screen, so this changes nothing but saves the
//!   cursor move) when that is cheaper, and
//! - ends a row with "erase to end of line" instead of blanks when everything
//!   from that column to the right edge is blank in the default style.
//!
//! Only cells known to be one column wide (ASCII and Braille) are ever
//! rewritten or erased next to, so wide characters are never split. After a
//! clear it cannot follow exactly (anything but clearing everything) it
//! stops optimising and passes frames straight through.

use ratatui::backend::{Backend, ClearType, CrosstermBackend, WindowSize};
use ratatui::buffer::Cell;
use ratatui::layout::{Position, Size};
use std::io::{self, Write};

/// A gap of unchanged cells is written again when it costs less than moving
/// the cursor over it; never for gaps longer than this.
const MAX_GAP: usize = 8;

/// The crossterm backend with a copy of the screen (see the module docs).
pub struct LeanBackend<W: Write> {
    inner: CrosstermBackend<W>,
    /// What the terminal shows, row by row (missing cells are blank; `None`
    /// is a cell that may be covered by a wide character before it).
    screen: Vec<Vec<Option<Cell>>>,
    /// False after a clear the copy cannot follow: frames pass straight through.
    exact: bool,
}

impl<W: Write> LeanBackend<W> {
    /// Wrap `writer`; the terminal is taken to be blank (as after entering the
    /// alternate screen and clearing it).
    pub fn new(writer: W) -> LeanBackend<W> {
        LeanBackend {
            inner: CrosstermBackend::new(writer),
            screen: Vec::new(),
            exact: true,
        }
    }

    fn cell(&self, x: u16, y: u16) -> Option<&Cell> {
        match self.screen.get(y as usize).and_then(|r| r.get(x as usize)) {
            Some(c) => c.as_ref(),
            None => Some(&Cell::EMPTY),
        }
    }

    fn set(&mut self, x: u16, y: u16, c: &Cell) {
        let (x, y) = (x as usize, y as usize);
        if self.screen.len() <= y {
            self.screen.resize(y + 1, Vec::new());
        }
        let row = &mut self.screen[y];
        if row.len() <= x + 1 {
            row.resize(x + 2, Some(Cell::EMPTY));
        }
        row[x] = Some(c.clone());
        // A symbol that may be two columns wide covers the next cell; what
        // that cell shows is unknown until it is written itself.
        if !narrow(Some(c)) {
            row[x + 1] = None;
        }
    }

    fn width(&self) -> usize {
        let known = self.screen.iter().map(Vec::len).max().unwrap_or(0);
        match self.inner.size() {
            Ok(s) => known.max(s.width as usize),
            Err(_) => known,
        }
    }
}

/// One column wide for certain: printable ASCII or Braille.
fn narrow(c: Option<&Cell>) -> bool {
    let Some(c) = c else { return false };
    let mut chars = c.symbol().chars();
    match (chars.next(), chars.next()) {
        (Some(ch), None) => (' '..='~').contains(&ch) || ('\u{2800}'..='\u{28FF}').contains(&ch),
        _ => false,
    }
}

/// Blank in the terminal's default colours (what "erase to end of line" leaves).
fn blank(c: Option<&Cell>) -> bool {
    c.is_some_and(|c| c.symbol() == " " && c.style() == Cell::EMPTY.style())
}

/// Bytes of a cursor move to (x, y) (`ESC [ row ; col H`, 1-based).
fn move_cost(x: u16, y: u16) -> usize {
    let digits = |n: u32| n.to_string().len();
    4 + digits(y as u32 + 1) + digits(x as u32 + 1)
}

impl<W: Write> Backend for LeanBackend<W> {
    type Error = io::Error;

    fn draw<'a, I>(&mut self, content: I) -> io::Result<()>
    where
        I: Iterator<Item = (u16, u16, &'a Cell)>,
    {
        if !self.exact {
            return self.inner.draw(content);
        }
        let mut changed: Vec<(u16, u16)> = Vec::new();
        for (x, y, c) in content {
            self.set(x, y, c);
            changed.push((x, y));
        }
        changed.sort_by_key(|&(x, y)| (y, x));
        changed.dedup();
        let width = self.width();
        let mut send: Vec<(u16, u16)> = Vec::with_capacity(changed.len());
        let mut erase: Vec<(u16, u16)> = Vec::new();
        let mut i = 0;
        while i < changed.len() {
            let y = changed[i].1;
            let mut j = i;
            while j < changed.len() && changed[j].1 == y {
                j += 1;
            }
            let row = &changed[i..j];
            // Blank tail: from `tail` to the right edge all is blank now.
            let mut tail = width;
            while tail > 0 && blank(self.cell(tail as u16 - 1, y)) {
                tail -= 1;
            }
            let safe_edge = |s: usize| {
                (s == 0 || narrow(self.cell(s as u16 - 1, y)))
                    && (s < 2 || narrow(self.cell(s as u16 - 2, y)))
            };
            let in_tail: Vec<&(u16, u16)> =
                row.iter().filter(|(x, _)| *x as usize >= tail).collect();
            let use_erase = if in_tail.is_empty() || !safe_edge(tail) {
                false
            } else {
                // Plain: one byte a cell plus a cursor move a run.
                let runs = in_tail.windows(2).filter(|w| w[1].0 != w[0].0 + 1).count() + 1;
                let plain = in_tail.len() + runs * move_cost(in_tail[0].0, y);
                plain > move_cost(tail as u16, y) + 3
            };
            let end = if use_erase { tail } else { width.max(1) };
            let mut last: Option<u16> = None;
            for &(x, _) in row.iter().filter(|(x, _)| (*x as usize) < end) {
                if let Some(l) = last {
                    let gap = (x - l - 1) as usize;
                    if gap > 0 && gap <= MAX_GAP && gap < move_cost(x, y) {
                        let style = self.cell(l, y).map(|c| c.style());
                        let bridge = narrow(self.cell(l, y))
                            && (l + 1..x).all(|g| {
                                let c = self.cell(g, y);
                                narrow(c) && c.map(|c| c.style()) == style
                            });
                        if bridge {
                            send.extend((l + 1..x).map(|g| (g, y)));
                        }
                    }
                }
                send.push((x, y));
                last = Some(x);
            }
            if use_erase {
                erase.push((tail as u16, y));
            }
            i = j;
        }
        if !send.is_empty() {
            // Every cell sent is known: written this frame or checked narrow.
            let cells: Vec<(u16, u16, Cell)> = send
                .iter()
                .filter_map(|&(x, y)| self.cell(x, y).map(|c| (x, y, c.clone())))
                .collect();
            self.inner.draw(cells.iter().map(|(x, y, c)| (*x, *y, c)))?;
        }
        // The crossterm backend ends every draw with the default colours, so
        // the erased cells take the terminal's default background.
        for (x, y) in erase {
            crossterm::queue!(
                self.inner,
                crossterm::cursor::MoveTo(x, y),
                crossterm::terminal::Clear(crossterm::terminal::ClearType::UntilNewLine)
            )?;
        }
        Ok(())
    }

    fn append_lines(&mut self, n: u16) -> io::Result<()> {
        self.exact = false;
        self.inner.append_lines(n)
    }

    fn hide_cursor(&mut self) -> io::Result<()> {
        self.inner.hide_cursor()
    }

    fn show_cursor(&mut self) -> io::Result<()> {
        self.inner.show_cursor()
    }

    fn get_cursor_position(&mut self) -> io::Result<Position> {
        self.inner.get_cursor_position()
    }

    fn set_cursor_position<P: Into<Position>>(&mut self, position: P) -> io::Result<()> {
        self.inner.set_cursor_position(position)
    }

    fn clear(&mut self) -> io::Result<()> {
        self.clear_region(ClearType::All)
    }

    fn clear_region(&mut self, clear_type: ClearType) -> io::Result<()> {
        match clear_type {
            ClearType::All => {
                self.screen.clear();
                self.exact = true;
            }
            _ => self.exact = false,
        }
        self.inner.clear_region(clear_type)
    }

    fn size(&self) -> io::Result<Size> {
        self.inner.size()
    }

    fn window_size(&mut self) -> io::Result<WindowSize> {
        self.inner.window_size()
    }

    fn flush(&mut self) -> io::Result<()> {
        Backend::flush(&mut self.inner)
    }
}
