//! The header: queue position and progress, target, file, S/N, and the
//! target's current decision with the latest status message.

use super::{fit, put};
use crate::tui::app::{App, Slot, StatusKind, Verdict, describe};
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Draw the header into `area` (two rows).
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    let w = area.width;
    let n = app.targets.len();
    // Row 0: position, progress, target, S/N, file.
    let mut x = area.x;
    let pos = format!("{:>3}/{:<3}", app.pos + 1, n);
    x += put(buf, x, area.y, &pos, w, t.style(Role::Title));
    let pct = if n == 0 { 0 } else { 100 * app.decided() / n };
    let progress = format!(" {} done {pct:>3}% ", app.decided());
    x += put(buf, x, area.y, &progress, area.right() - x, t.style(Role::Dim));
    let Some(target) = app.targets.get(app.pos) else {
        put(buf, x, area.y, "the queue is empty", area.right() - x, t.style(Role::Warning));
        return;
    };
    x += put(buf, x, area.y, &fit(&target.name, 24, app.ascii), area.right().saturating_sub(x), t.style(Role::Title));
    let snr = match app.slot() {
        Some(Slot::Ready(l)) => format!(" S/N {:>5.1} ", l.analysis.noise.median_snr),
        Some(Slot::Failed(_)) => " S/N   -   ".to_string(),
        _ => " S/N  ...  ".to_string(),
    };
    x += put(buf, x, area.y, &snr, area.right().saturating_sub(x), t.style(Role::Base));
    let file = crate::text::clean(&target.path.display().to_string());
    let room = area.right().saturating_sub(x) as usize;
    // Show the end of a long path: the file name matters most.
    let shown: String = if file.chars().count() > room && room > 1 {
        let skip = file.chars().count() - (room - 1);
        let tail: String = file.chars().skip(skip).collect();
        format!("{}{tail}", if app.ascii { "~" } else { "…" })
    } else {
        file
    };
    put(buf, x, area.y, &shown, area.right().saturating_sub(x), t.style(Role::Dim));

    // Row 1: decision state, then status (or the first warning).
    let y = area.y + 1;
    let (role, text) = match (&app.pending, app.decisions.get(app.pos).and_then(|d| d.as_ref())) {
        (Some(e), _) if e.target() == app.pos => (Role::Dim, "saving...".to_string()),
        (_, None) => (Role::Undecided, "undecided".to_string()),
        (_, Some(d)) => (
            match d.verdict {
                Verdict::Accept => Role::Accepted,
                Verdict::Reject => Role::Rejected,
                Verdict::Reobserve | Verdict::Conflict => Role::Reobserve,
            },
            describe(d).to_uppercase_first(),
        ),
    };
    let mut x = area.x;
    x += put(buf, x, y, &format!("{text} "), w, t.style(role));
    if let Some(note) = app.notes.get(app.pos).and_then(|n| n.as_ref()) {
        let s = format!("note: {} ", fit(note, 20, app.ascii).trim_end());
        x += put(buf, x, y, &s, area.right().saturating_sub(x), t.style(Role::Dim));
    }
    let status = app.status.as_ref().map(|(k, s)| {
        (
            match k {
                StatusKind::Info => Role::Base,
                StatusKind::Saved => Role::StatusOk,
                StatusKind::Error => Role::StatusError,
            },
            s.clone(),
        )
    });
    let warning = app.loaded().and_then(|l| {
        l.analysis
            .warnings
            .first()
            .or(l.spectrum.meta.warnings.first())
            .map(|w| (Role::Warning, format!("! {}", crate::text::clean(w))))
    });
    if let Some((role, s)) = status.or(warning) {
        let room = area.right().saturating_sub(x);
        put(buf, x, y, &fit(&s, room as usize, app.ascii), room, t.style(role));
    }
}

trait UpperFirst {
    fn to_uppercase_first(&self) -> String;
}

impl UpperFirst for String {
    fn to_uppercase_first(&self) -> String {
        let mut c = self.chars();
        match c.next() {
            Some(f) => f.to_uppercase().chain(c).collect(),
            None => String::new(),
        }
    }
}
