//! The candidate list: rank, redshift, velocity, class, score, grade and
//! the core's reason. The cursor row is highlighted (moving it redraws only
//! the two rows it leaves and enters); the shown candidate, the one the plot,
//! the matched-line list and accept are about, is marked `>` in the first
//! column, an accepted one `*`/`✓` in the second. The title row also gives
//! the barycentric correction and the barycentric z and velocity of the
//! shown candidate (the list itself is observed values), or which input the
//! correction lacks.

use super::{fit, put};
use crate::physics::bary::{BaryError, Missing};
use crate::tui::app::{App, BaryShown, Slot, Verdict};
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// The mark of the shown candidate's row (first column; ASCII in every mode,
/// so it is one column wide on every terminal).
pub const SHOWN_MARK: char = '>';

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
    let used = put(
        buf,
        area.x,
        area.y,
        fit(&title, w as usize, app.ascii).trim_end(),
        w,
        t.style(Role::Title),
    );
    // The barycentric values of the shown candidate, in the longest form
    // that fits beside the title.
    if let Some(bary) = app.shown_bary() {
        let room = w.saturating_sub(used + 2) as usize;
        let (role, forms) = match bary {
            Ok(b) => (Role::Base, known_forms(&b)),
            Err(e) => (Role::Dim, unknown_forms(e)),
        };
        let text = forms
            .iter()
            .find(|f| f.chars().count() <= room)
            .cloned()
            .unwrap_or_else(|| fit(forms.last().map_or("", |f| f.as_str()), room, app.ascii));
        put(
            buf,
            area.x + used + 2,
            area.y,
            &text,
            room as u16,
            t.style(role),
        );
    }
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
        let shown = i == app.cand_shown;
        let cursor = i == app.cand_cursor;
        let (z, v) = match (&app.nudge, shown) {
            (Some(n), true) => (n.z, velocity(n.z)),
            _ => (c.z, c.velocity_kms),
        };
        let shown_mark = if shown { SHOWN_MARK } else { ' ' };
        let accepted_mark = if accepted_rank == Some(c.rank) {
            if app.ascii { '*' } else { '✓' }
        } else {
            ' '
        };
        let reason = crate::text::clean(&c.reason);
        let line = format!(
            "{shown_mark}{accepted_mark}{:>1} {z:>7.5} {v:>6.0} {:<6} {:>5.1} {:<4} {reason}",
            c.rank,
            c.class.as_str(),
            c.score,
            c.grade.as_str(),
        );
        let style = if cursor {
            t.style(Role::Cursor)
        } else {
            t.style(Role::Base)
        };
        put(buf, body.x, y, &fit(&line, w as usize, app.ascii), w, style);
        // Off the cursor, the shown mark stands out in the key colour.
        if shown && !cursor {
            put(
                buf,
                body.x,
                y,
                &SHOWN_MARK.to_string(),
                1,
                t.style(Role::Key),
            );
        }
    }
}

/// The barycentric values, longest form first.
fn known_forms(b: &BaryShown) -> Vec<String> {
    let c = b.correction_kms;
    match (b.z_bary, b.velocity_bary_kms) {
        (Some(zb), Some(vb)) => vec![
            format!("bary corr {c:+.3} km/s: z_bary {zb:.6} v_bary {vb:.1} km/s"),
            format!("bary {c:+.2} km/s z_bary {zb:.6} v_bary {vb:.0}"),
            format!("bary {c:+.2} km/s z_bary {zb:.6}"),
            format!("z_bary {zb:.6}"),
        ],
        _ => vec![format!("bary corr {c:+.3} km/s"), format!("bary {c:+.2}")],
    }
}

/// Why there is no barycentric correction, longest form first: which input
/// is missing (or which value is unusable).
fn unknown_forms(e: &BaryError) -> Vec<String> {
    let what = match e {
        BaryError::Missing(m) => {
            let mut needs = Vec::new();
            let mut unknown = Vec::new();
            for m in m {
                match m {
                    Missing::Time => needs.push("obs time".to_string()),
                    Missing::TimeOfDay => needs.push("time of day".to_string()),
                    Missing::Coordinates => needs.push("RA/Dec".to_string()),
                    Missing::Site => needs.push("site".to_string()),
                    Missing::UnconfiguredSite(n) => {
                        unknown.push(format!("site '{}' not configured", crate::text::clean(n)))
                    }
                }
            }
            let mut parts = Vec::new();
            if !needs.is_empty() {
                parts.push(format!("needs {}", needs.join(", ")));
            }
            parts.extend(unknown);
            parts.join("; ")
        }
        BaryError::Invalid { keyword, .. } => format!("bad {}", crate::text::clean(keyword)),
    };
    vec![
        format!("no bary correction: {what}"),
        format!("no bary: {}", what.trim_start_matches("needs ")),
    ]
}
