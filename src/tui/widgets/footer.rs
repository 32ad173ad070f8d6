//! The footer: the few keys that matter in the current mode, generated from
//! the key map so it always tells the truth.

use super::put;
use crate::tui::app::{App, Mode};
use crate::tui::keys::{Action, CLASS_KEYS};
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// The (keys, label) pairs the footer shows in the app's current mode, most
/// important first.
pub fn entries(app: &App) -> Vec<(String, String)> {
    let k = |a: Action| app.keys.first_label(a, app.ascii);
    let pair = |a: Action, b: Action| format!("{}{}", k(a), k(b));
    match &app.mode {
        Mode::Browse => vec![
            (k(Action::Accept), "accept".into()),
            (k(Action::Reject), "reject".into()),
            (k(Action::Reobserve), "re-obs".into()),
            (pair(Action::CandidateUp, Action::CandidateDown), "cand".into()),
            (format!("{}/{}", k(Action::NextTarget), k(Action::PrevTarget)), "next/prev".into()),
            (k(Action::NextUndecided), "to do".into()),
            (pair(Action::NudgeDownFine, Action::NudgeUpFine), "nudge z".into()),
            (k(Action::SetClass), "class".into()),
            (k(Action::Note), "note".into()),
            (k(Action::Undo), "undo".into()),
            (k(Action::Help), "all keys".into()),
            (k(Action::Quit), "quit".into()),
        ],
        Mode::Help => vec![("any key".into(), "back".into()), (k(Action::Quit), "quit".into())],
        Mode::ClassPick => {
            let mut v: Vec<(String, String)> = CLASS_KEYS
                .iter()
                .map(|(c, class)| (c.to_string(), class.as_str().to_string()))
                .collect();
            v.push(("other".into(), "cancel".into()));
            v
        }
        Mode::Subclass { .. } | Mode::Note { .. } => vec![
            ("Enter".into(), "save".into()),
            ("Esc".into(), "cancel".into()),
            ("Bksp".into(), "erase".into()),
        ],
    }
}

/// Draw the footer into `area` (one row). The last two entries (the help
/// and quit keys in the main screen) are always shown at the right; the
/// others fill the room left, most important first.
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    let mut all = entries(app);
    let keep = if app.mode == Mode::Browse { all.split_off(all.len() - 2) } else { Vec::new() };
    let width = |e: &(String, String)| (e.0.chars().count() + e.1.chars().count() + 2) as u16;
    let right_w: u16 = keep.iter().map(width).sum();
    let mut x = area.x;
    let limit = area.right().saturating_sub(right_w);
    let draw = |buf: &mut Buffer, x: &mut u16, e: &(String, String)| {
        *x += put(buf, *x, area.y, &e.0, area.right() - *x, t.style(Role::Key));
        *x += put(buf, *x, area.y, &format!(" {} ", e.1), area.right() - *x, t.style(Role::Dim));
    };
    for e in &all {
        if x + width(e) > limit {
            break;
        }
        draw(buf, &mut x, e);
    }
    let mut x = limit.max(x);
    for e in &keep {
        if x + width(e) > area.right() {
            break;
        }
        draw(buf, &mut x, e);
    }
}
