//! Pop-up prompts: the class picker and the text fields (subclass, note).

use super::{fit, put};
use crate::tui::app::{App, Mode};
use crate::tui::keys::CLASS_KEYS;
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Draw the open prompt, if any, over the lower part of `area`.
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let (title, body) = match &app.mode {
        Mode::ClassPick => (
            "Set the class by hand".to_string(),
            CLASS_KEYS
                .iter()
                .map(|(k, c)| format!("{k} {}", c.as_str()))
                .collect::<Vec<_>>()
                .join("   "),
        ),
        Mode::Subclass { class, text } => (
            format!("Subclass for {} (optional), Enter accepts", class.as_str()),
            format!("> {text}_"),
        ),
        Mode::Note { text } => ("Note for this target, Enter saves".to_string(), format!("> {text}_")),
        _ => return,
    };
    let t = &app.theme;
    let style = t.style(Role::Popup);
    let w = area.width.saturating_sub(4).min(76);
    let x = area.x + (area.width - w) / 2;
    let y = area.y + area.height.saturating_sub(7);
    for dy in 0..4 {
        put(buf, x, y + dy, &" ".repeat(w as usize), w, style);
    }
    put(buf, x + 1, y, &fit(&title, (w - 2) as usize, app.ascii), w - 2, t.style(Role::Title).patch(style));
    // Long text scrolls: keep its end (where the typing is) visible.
    let inner = (w - 2) as usize;
    let n = body.chars().count();
    let shown: String = if n > inner { body.chars().skip(n - inner).collect() } else { body };
    put(buf, x + 1, y + 2, &shown, w - 2, style);
}
