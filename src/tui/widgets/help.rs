//! The help overlay: every action and its keys, generated from the key map.

use super::{fit, put};
use crate::tui::app::{App, Mode};
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Draw the help overlay over `area` when the app is in help mode.
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    if app.mode != Mode::Help {
        return;
    }
    let t = &app.theme;
    let rows = app.keys.help_rows(app.ascii);
    let style = t.style(Role::Popup);
    // Two columns when the list is taller than the screen allows.
    let max_rows = area.height.saturating_sub(4) as usize;
    let cols = if rows.len() > max_rows { 2 } else { 1 };
    let per_col = rows.len().div_ceil(cols);
    let col_w = ((area.width.saturating_sub(2)) as usize / cols).min(44);
    let key_w = 11.min(col_w / 3);
    let w = (col_w * cols + 2) as u16;
    let h = (per_col + 3).min(area.height as usize) as u16;
    let x0 = area.x + (area.width - w) / 2;
    let y0 = area.y + (area.height - h) / 2;
    let panel = Rect { x: x0, y: y0, width: w, height: h };
    buf.set_style(panel, style);
    for y in panel.top()..panel.bottom() {
        put(buf, panel.x, y, &" ".repeat(w as usize), w, style);
    }
    put(buf, x0 + 1, y0, "Keys (any key closes)", w - 2, t.style(Role::Title).patch(style));
    for (i, (keys, desc)) in rows.iter().enumerate() {
        let col = i / per_col;
        let row = i % per_col;
        let y = y0 + 2 + row as u16;
        if y >= panel.bottom() {
            continue;
        }
        let x = x0 + 1 + (col * col_w) as u16;
        put(buf, x, y, &fit(keys, key_w, app.ascii), key_w as u16, t.style(Role::Key).patch(style));
        let dw = col_w.saturating_sub(key_w + 1);
        put(buf, x + key_w as u16 + 1, y, &fit(desc, dw, app.ascii), dw as u16, style);
    }
}
