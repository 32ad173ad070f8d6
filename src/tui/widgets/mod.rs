//! Widgets: each draws one part of the screen from `&App` and nothing else.
//!
//! [`draw`] lays the screen out: a two-row header, the spectrum plot, the
//! candidate list and the matched-line list (side by side from 100 columns,
//! stacked below), a one-row footer, and the help overlay or a prompt on
//! top when open. Rendering has no side effects.

pub mod candidates;
pub mod footer;
pub mod header;
pub mod help;
pub mod matches;
pub mod plot;
pub mod prompt;

use super::app::App;
use super::theme::Role;
use ratatui::Frame;
use ratatui::buffer::Buffer;
use ratatui::layout::{Constraint, Layout, Rect};

/// Smallest terminal the review draws in (columns).
pub const MIN_WIDTH: u16 = 64;
/// Smallest terminal the review draws in (rows).
pub const MIN_HEIGHT: u16 = 18;
/// From this width the two lists sit side by side.
pub const WIDE: u16 = 100;

/// Draw the whole screen.
pub fn draw(frame: &mut Frame<'_>, app: &App) {
    let area = frame.area();
    render(app, area, frame.buffer_mut());
}

/// Draw the whole screen into `buf` (what [`draw`] does, usable on any buffer).
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    buf.set_style(area, app.theme.style(Role::Base));
    if area.width < MIN_WIDTH || area.height < MIN_HEIGHT {
        too_small(app, area, buf);
        return;
    }
    let [head, body, foot] = Layout::vertical([
        Constraint::Length(2),
        Constraint::Min(6),
        Constraint::Length(1),
    ])
    .areas(area);
    header::render(app, head, buf);
    footer::render(app, foot, buf);
    if area.width >= WIDE {
        let [plot_area, lists] =
            Layout::vertical([Constraint::Min(6), Constraint::Length(7)]).areas(body);
        let [cands, lines] = Layout::horizontal([Constraint::Fill(1), Constraint::Length(54)])
            .spacing(1)
            .areas(lists);
        plot::render(app, plot_area, buf);
        candidates::render(app, cands, buf);
        matches::render(app, lines, buf);
    } else {
        let [plot_area, cands, lines] = Layout::vertical([
            Constraint::Min(6),
            Constraint::Length(5),
            Constraint::Length(5),
        ])
        .areas(body);
        plot::render(app, plot_area, buf);
        candidates::render(app, cands, buf);
        matches::render(app, lines, buf);
    }
    help::render(app, area, buf);
    prompt::render(app, area, buf);
}

fn too_small(app: &App, area: Rect, buf: &mut Buffer) {
    // Short lines, so that the message survives a very narrow terminal.
    let lines = [
        format!("zsift needs {MIN_WIDTH}x{MIN_HEIGHT} or more;"),
        format!("this terminal is {}x{}.", area.width, area.height),
        "Make the window larger;".to_string(),
        "decisions so far are saved.".to_string(),
        format!(
            "{} quits.",
            app.keys.first_label(super::keys::Action::Quit, app.ascii)
        ),
    ];
    for (i, l) in lines.iter().enumerate() {
        let y = area.y + i as u16;
        if y >= area.bottom() {
            break;
        }
        buf.set_stringn(
            area.x,
            y,
            l,
            area.width as usize,
            app.theme.style(Role::Warning),
        );
    }
}

/// Write `text` at (x, y) clipped to `width` cells; returns the cells used.
pub(crate) fn put(
    buf: &mut Buffer,
    x: u16,
    y: u16,
    text: &str,
    width: u16,
    style: ratatui::style::Style,
) -> u16 {
    if width == 0 {
        return 0;
    }
    let (end, _) = buf.set_stringn(x, y, text, width as usize, style);
    end - x
}

/// Fit `s` into `w` characters: truncated with an ellipsis or padded.
pub(crate) fn fit(s: &str, w: usize, ascii: bool) -> String {
    let n = s.chars().count();
    if n <= w {
        format!("{s:<w$}")
    } else if w == 0 {
        String::new()
    } else {
        let mut t: String = s.chars().take(w - 1).collect();
        t.push(if ascii { '~' } else { '…' });
        t
    }
}
