//! The footer: the few keys that matter in the current mode, generated from
//! the key map so it always tells the truth.

use super::put;
use crate::tui::app::{App, Mode};
use crate::tui::keys::{Action, CLASS_KEYS};
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// One footer entry: the keys, what they do, and whether it is highlighted
/// (the show key while the cursor is off the shown candidate).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Entry {
    /// The keys as shown.
    pub keys: String,
    /// What they do.
    pub label: String,
    /// Drawn in the cursor's style, to draw the eye.
    pub urgent: bool,
}

impl Entry {
    fn new(keys: String, label: &str) -> Entry {
        Entry {
            keys,
            label: label.to_string(),
            urgent: false,
        }
    }

    fn width(&self) -> u16 {
        (self.keys.chars().count() + self.label.chars().count() + 2) as u16
    }
}

/// The footer entries in the app's current mode, most important first.
///
/// In the main screen the show key's entry reads `show` while the cursor is
/// on the shown candidate and `SHOW` (highlighted) while it is not, so the
/// footer says which key makes the plot follow the cursor. The two wordings
/// have the same width: a cursor move never shifts the footer.
pub fn entries(app: &App) -> Vec<Entry> {
    let k = |a: Action| app.keys.first_label(a, app.ascii);
    let pair = |a: Action, b: Action| format!("{}{}", k(a), k(b));
    let e = |keys: String, label: &str| Entry::new(keys, label);
    match &app.mode {
        Mode::Browse => {
            let off = app.cursor_off_shown();
            vec![
                e(k(Action::Accept), "accept"),
                e(k(Action::Reject), "reject"),
                e(k(Action::Reobserve), "re-obs"),
                e(pair(Action::CandidateUp, Action::CandidateDown), "cand"),
                e(
                    format!("{}/{}", k(Action::NextTarget), k(Action::PrevTarget)),
                    "target",
                ),
                e(k(Action::NextUndecided), "to do"),
                e(pair(Action::NudgeDownFine, Action::NudgeUpFine), "nudge z"),
                e(k(Action::SetClass), "class"),
                e(k(Action::Note), "note"),
                e(k(Action::Undo), "undo"),
                Entry {
                    keys: k(Action::ShowCandidate),
                    label: if off { "SHOW" } else { "show" }.into(),
                    urgent: off,
                },
                e(k(Action::Help), "keys"),
                e(k(Action::Quit), "quit"),
            ]
        }
        Mode::Help => vec![e("any key".into(), "back"), e(k(Action::Quit), "quit")],
        Mode::ClassPick => {
            let mut v: Vec<Entry> = CLASS_KEYS
                .iter()
                .map(|(c, class)| e(c.to_string(), class.as_str()))
                .collect();
            v.push(e("other".into(), "cancel"));
            v
        }
        Mode::Subclass { .. } | Mode::Note { .. } => vec![
            e("Enter".into(), "save"),
            e("Esc".into(), "cancel"),
            e("Bksp".into(), "erase"),
        ],
    }
}

/// Draw the footer into `area` (one row). In the main screen the last three
/// entries (the show, help and quit keys) are always shown at the right, from
/// the smallest screen up; the others fill the room left, most important
/// first.
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    let mut all = entries(app);
    let keep = if app.mode == Mode::Browse {
        all.split_off(all.len() - 3)
    } else {
        Vec::new()
    };
    let right_w: u16 = keep.iter().map(Entry::width).sum();
    let mut x = area.x;
    let limit = area.right().saturating_sub(right_w);
    let draw = |buf: &mut Buffer, x: &mut u16, e: &Entry| {
        let (key, label) = if e.urgent {
            (t.style(Role::Cursor), t.style(Role::Cursor))
        } else {
            (t.style(Role::Key), t.style(Role::Dim))
        };
        *x += put(buf, *x, area.y, &e.keys, area.right() - *x, key);
        *x += put(
            buf,
            *x,
            area.y,
            &format!(" {}", e.label),
            area.right() - *x,
            label,
        );
        *x += put(buf, *x, area.y, " ", area.right() - *x, t.style(Role::Dim));
    };
    for e in &all {
        if x + e.width() > limit {
            break;
        }
        draw(buf, &mut x, e);
    }
    let mut x = limit.max(x);
    for e in &keep {
        if x + e.width() > area.right() {
            break;
        }
        draw(buf, &mut x, e);
    }
}
