//! The matched lines of the shown candidate: name, rest and observed
//! wavelength, velocity offset, S/N, FWHM and equivalent width.

use super::{fit, put};
use crate::tui::app::{App, Slot};
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Draw the matched-line list into `area`.
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    if area.height == 0 {
        return;
    }
    let w = area.width as usize;
    let c = app.shown_candidate();
    let title = match &c {
        Some(c) => format!("Lines at z={:.5} ({})", c.z, c.class.as_str()),
        None => "Lines".to_string(),
    };
    put(buf, area.x, area.y, &fit(&title, w, app.ascii), area.width, t.style(Role::Title));
    if area.height < 2 {
        return;
    }
    let head = format!(
        "{:<13} {:>7} {:>7} {:>5} {:>5} {:>5} {:>6}",
        "line", "rest", "obs", "dv", "S/N", "FWHM", "EW"
    );
    put(buf, area.x, area.y + 1, &fit(&head, w, app.ascii), area.width, t.style(Role::Dim));
    let body_y = area.y + 2;
    let rows = area.height.saturating_sub(2) as usize;
    let Some(c) = c else {
        if let Some(Slot::Ready(_)) = app.slot() {
            put(buf, area.x, body_y, "no candidate chosen", area.width, t.style(Role::Dim));
        }
        return;
    };
    if rows == 0 {
        return;
    }
    if c.matched.is_empty() {
        let msg = if app.nudge.as_ref().is_some_and(|n| n.candidate.is_none()) {
            "measuring..."
        } else {
            "no lines matched at this redshift"
        };
        put(buf, area.x, body_y, msg, area.width, t.style(Role::Dim));
        return;
    }
    let cursor = app.line_cursor.unwrap_or(0);
    let first = if app.line_cursor.is_some() {
        cursor.saturating_sub(rows - 1)
    } else {
        0
    };
    for (row, (i, m)) in c.matched.iter().enumerate().skip(first).take(rows).enumerate() {
        let name = fit(&crate::text::clean(&m.line), 13, app.ascii);
        let line = format!(
            "{name} {:>7.1} {:>7.1} {:>+5.0} {:>5.1} {:>5.0} {:>6.1}",
            m.rest_wavelength, m.observed_wavelength, m.offset_kms, m.snr, m.fwhm_kms, m.ew
        );
        let style = if app.line_cursor == Some(i) {
            t.style(Role::Cursor)
        } else {
            t.style(Role::Base)
        };
        put(buf, area.x, body_y + row as u16, &fit(&line, w, app.ascii), area.width, style);
    }
}
