//! The candidate list: rank, redshift, velocity, class, score, grade and
//! the core's reason, with the cursor on the candidate the plot shows.

use super::{fit, put};
use crate::tui::app::{App, Slot, Verdict};
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Relativistic velocity from redshift, km/s (for a nudged z awaiting the core).
fn velocity(z: f64) -> f64 {
    let s = (1.0 + z) * (1.0 + z);
    crate::physics::constants::C_KM_S * (s - 1.0) / (s + 1.0)
}

/// Draw the candidate list into `area`.
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    if area.height == 0 {
        return;
    }
    let w = area.width;
    let title = match &app.nudge {
        Some(n) => format!(
            "Candidates  nudged z={:.5}{}",
            n.z,
            if n.candidate.is_some() { "" } else { " ..." }
        ),
        None => "Candidates".to_string(),
    };
    put(
        buf,
        area.x,
        area.y,
        &fit(&title, w as usize, app.ascii),
        w,
        t.style(Role::Title),
    );
    let body = Rect {
        y: area.y + 1,
        height: area.height - 1,
        ..area
    };
    let l = match app.slot() {
        Some(Slot::Ready(l)) => l,
        Some(Slot::Failed(_)) => {
            put(
                buf,
                body.x,
                body.y,
                "no analysis (see the plot)",
                w,
                t.style(Role::Dim),
            );
            return;
        }
        _ => {
            put(buf, body.x, body.y, "analysing...", w, t.style(Role::Dim));
            return;
        }
    };
    let cands = &l.analysis.candidates;
    if cands.is_empty() {
        put(
            buf,
            body.x,
            body.y,
            "no candidates: reject, flag or set the class by hand",
            w,
            t.style(Role::Dim),
        );
        return;
    }
    let accepted_rank = app
        .decisions
        .get(app.pos)
        .and_then(|d| d.as_ref())
        .filter(|d| d.verdict == Verdict::Accept)
        .and_then(|d| d.candidate_rank);
    let rows = body.height as usize;
    let first = app.cand_cursor.saturating_sub(rows.saturating_sub(1));
    for (row, (i, c)) in cands.iter().enumerate().skip(first).take(rows).enumerate() {
        let y = body.y + row as u16;
        let here = i == app.cand_cursor;
        let (z, v) = match (&app.nudge, here) {
            (Some(n), true) => (n.z, velocity(n.z)),
            _ => (c.z, c.velocity_kms),
        };
        let mark = if accepted_rank == Some(c.rank) {
            if app.ascii { '*' } else { '✓' }
        } else if here {
            '>'
        } else {
            ' '
        };
        let reason = crate::text::clean(&c.reason);
        let line = format!(
            "{mark}{:>1} {z:>7.5} {v:>6.0} {:<6} {:>5.1} {:<4} {reason}",
            c.rank,
            c.class.as_str(),
            c.score,
            c.grade.as_str(),
        );
        let style = if here {
            t.style(Role::Cursor)
        } else {
            t.style(Role::Base)
        };
        put(buf, body.x, y, &fit(&line, w as usize, app.ascii), w, style);
    }
}
