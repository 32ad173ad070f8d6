//! The key map: every action the review knows, its keys and its wording.
//!
//! This is the one place where keys and their descriptions live. The help
//! overlay and the footer are generated from [`KeyMap`], so they cannot drift
//! from what the keys do. Users rebind keys in the config file
//! (`[keys]` table: `action = ["key", ...]`, see [`KeyMap::rebind`]).

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::fmt;

/// Something the person can ask for with one key press.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Action {
    /// Leave at once (decisions are already on disk).
    Quit,
    /// Show or hide the key list.
    Help,
    /// Go to the next target in the queue.
    NextTarget,
    /// Go to the previous target.
    PrevTarget,
    /// Go to the next target without a decision.
    NextUndecided,
    /// Move the candidate cursor up.
    CandidateUp,
    /// Move the candidate cursor down.
    CandidateDown,
    /// Show the candidate under the cursor: the plot, the matched-line list
    /// and the barycentric values follow it, and accept takes it.
    ShowCandidate,
    /// Move the line cursor to the next matched line and centre the plot on it.
    LineNext,
    /// Move the line cursor to the previous matched line.
    LinePrev,
    /// Accept the shown candidate (at its nudged redshift, if nudged).
    Accept,
    /// Reject the target (no usable redshift).
    Reject,
    /// Flag the target for re-observation.
    Reobserve,
    /// Set class and subclass by hand, then accept.
    SetClass,
    /// Type a note for this target.
    Note,
    /// Undo the last decision of this session.
    Undo,
    /// Nudge the redshift up by a fine step.
    NudgeUpFine,
    /// Nudge the redshift down by a fine step.
    NudgeDownFine,
    /// Nudge the redshift up by a coarse step.
    NudgeUpCoarse,
    /// Nudge the redshift down by a coarse step.
    NudgeDownCoarse,
    /// Drop the nudge: back to the candidate's own redshift.
    NudgeReset,
    /// Zoom in around the centre of the view.
    ZoomIn,
    /// Zoom out.
    ZoomOut,
    /// Pan towards shorter wavelengths.
    PanLeft,
    /// Pan towards longer wavelengths.
    PanRight,
    /// Show the whole spectrum.
    ViewAll,
    /// Next smoothing level.
    Smooth,
    /// Show or hide the error band.
    ToggleErrors,
    /// Show or hide the sky spectrum.
    ToggleSky,
}

impl Action {
    /// Every action, in the order the help overlay lists them.
    pub const ALL: [Action; 29] = [
        Action::NextTarget,
        Action::PrevTarget,
        Action::NextUndecided,
        Action::CandidateUp,
        Action::CandidateDown,
        Action::ShowCandidate,
        Action::Accept,
        Action::Reject,
        Action::Reobserve,
        Action::SetClass,
        Action::Note,
        Action::Undo,
        Action::NudgeUpFine,
        Action::NudgeDownFine,
        Action::NudgeUpCoarse,
        Action::NudgeDownCoarse,
        Action::NudgeReset,
        Action::LineNext,
        Action::LinePrev,
        Action::ZoomIn,
        Action::ZoomOut,
        Action::PanLeft,
        Action::PanRight,
        Action::ViewAll,
        Action::Smooth,
        Action::ToggleErrors,
        Action::ToggleSky,
        Action::Help,
        Action::Quit,
    ];

    /// The name used in the config file's `[keys]` table.
    pub fn config_name(self) -> &'static str {
        match self {
            Action::Quit => "quit",
            Action::Help => "help",
            Action::NextTarget => "next_target",
            Action::PrevTarget => "previous_target",
            Action::NextUndecided => "next_undecided",
            Action::CandidateUp => "candidate_up",
            Action::CandidateDown => "candidate_down",
            Action::ShowCandidate => "show_candidate",
            Action::LineNext => "line_next",
            Action::LinePrev => "line_previous",
            Action::Accept => "accept",
            Action::Reject => "reject",
            Action::Reobserve => "reobserve",
            Action::SetClass => "set_class",
            Action::Note => "note",
            Action::Undo => "undo",
            Action::NudgeUpFine => "nudge_up_fine",
            Action::NudgeDownFine => "nudge_down_fine",
            Action::NudgeUpCoarse => "nudge_up_coarse",
            Action::NudgeDownCoarse => "nudge_down_coarse",
            Action::NudgeReset => "nudge_reset",
            Action::ZoomIn => "zoom_in",
            Action::ZoomOut => "zoom_out",
            Action::PanLeft => "pan_left",
            Action::PanRight => "pan_right",
            Action::ViewAll => "view_all",
            Action::Smooth => "smooth",
            Action::ToggleErrors => "toggle_errors",
            Action::ToggleSky => "toggle_sky",
        }
    }

    /// What the help overlay says about it.
    pub fn description(self) -> &'static str {
        match self {
            Action::Quit => "leave now (all is saved)",
            Action::Help => "show / hide this list",
            Action::NextTarget => "next target",
            Action::PrevTarget => "previous target",
            Action::NextUndecided => "next undecided target",
            Action::CandidateUp => "candidate cursor up",
            Action::CandidateDown => "candidate cursor down",
            Action::ShowCandidate => "show cursor candidate",
            Action::LineNext => "next matched line",
            Action::LinePrev => "previous matched line",
            Action::Accept => "accept shown candidate",
            Action::Reject => "reject: no usable redshift",
            Action::Reobserve => "flag for re-observation",
            Action::SetClass => "class/subclass by hand",
            Action::Note => "type a note",
            Action::Undo => "undo last decision",
            Action::NudgeUpFine => "z up, fine (25 km/s)",
            Action::NudgeDownFine => "z down, fine",
            Action::NudgeUpCoarse => "z up, coarse (500 km/s)",
            Action::NudgeDownCoarse => "z down, coarse",
            Action::NudgeReset => "drop the z nudge",
            Action::ZoomIn => "zoom in",
            Action::ZoomOut => "zoom out",
            Action::PanLeft => "pan blueward",
            Action::PanRight => "pan redward",
            Action::ViewAll => "whole spectrum",
            Action::Smooth => "next smoothing level",
            Action::ToggleErrors => "error band on/off",
            Action::ToggleSky => "sky spectrum on/off",
        }
    }

    /// A one- or two-word label for the footer.
    pub fn short(self) -> &'static str {
        match self {
            Action::Quit => "quit",
            Action::Help => "keys",
            Action::NextTarget => "next",
            Action::PrevTarget => "prev",
            Action::NextUndecided => "to do",
            Action::CandidateUp | Action::CandidateDown => "cand",
            Action::ShowCandidate => "show",
            Action::LineNext | Action::LinePrev => "line",
            Action::Accept => "accept",
            Action::Reject => "reject",
            Action::Reobserve => "re-obs",
            Action::SetClass => "class",
            Action::Note => "note",
            Action::Undo => "undo",
            Action::NudgeUpFine | Action::NudgeDownFine => "nudge",
            Action::NudgeUpCoarse | Action::NudgeDownCoarse => "NUDGE",
            Action::NudgeReset => "un-nudge",
            Action::ZoomIn | Action::ZoomOut => "zoom",
            Action::PanLeft | Action::PanRight => "pan",
            Action::ViewAll => "all",
            Action::Smooth => "smooth",
            Action::ToggleErrors => "errors",
            Action::ToggleSky => "sky",
        }
    }

    /// The action with this config name.
    pub fn from_config_name(name: &str) -> Option<Action> {
        Action::ALL
            .iter()
            .copied()
            .find(|a| a.config_name() == name)
    }
}

/// One key (with modifiers), written in the config file as e.g. `a`, `A`,
/// `Enter`, `Tab`, `S-Tab`, `C-c`, `Left`, `PageDown`, `F1`, `Space`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Key {
    /// The key.
    pub code: KeyCode,
    /// Ctrl held (Shift is part of the character for printable keys).
    pub ctrl: bool,
}

impl Key {
    /// A printable character key.
    pub const fn ch(c: char) -> Key {
        Key {
            code: KeyCode::Char(c),
            ctrl: false,
        }
    }

    /// A non-character key.
    pub const fn code(code: KeyCode) -> Key {
        Key { code, ctrl: false }
    }

    /// The key of a terminal key event (Shift folded into the character).
    pub fn from_event(ev: &KeyEvent) -> Key {
        let ctrl = ev.modifiers.contains(KeyModifiers::CONTROL);
        let code = match ev.code {
            // Terminals send Shift-Tab as BackTab.
            KeyCode::Tab if ev.modifiers.contains(KeyModifiers::SHIFT) => KeyCode::BackTab,
            KeyCode::Char(c) if ctrl => KeyCode::Char(c.to_ascii_lowercase()),
            c => c,
        };
        Key { code, ctrl }
    }

    /// Parse the config-file spelling.
    pub fn parse(s: &str) -> Option<Key> {
        let (ctrl, rest) = match s.strip_prefix("C-") {
            Some(r) if !r.is_empty() => (true, r),
            _ => (false, s),
        };
        let code = match rest {
            "Enter" => KeyCode::Enter,
            "Tab" => KeyCode::Tab,
            "S-Tab" => KeyCode::BackTab,
            "Esc" => KeyCode::Esc,
            "Space" => KeyCode::Char(' '),
            "Backspace" => KeyCode::Backspace,
            "Delete" => KeyCode::Delete,
            "Left" => KeyCode::Left,
            "Right" => KeyCode::Right,
            "Up" => KeyCode::Up,
            "Down" => KeyCode::Down,
            "Home" => KeyCode::Home,
            "End" => KeyCode::End,
            "PageUp" => KeyCode::PageUp,
            "PageDown" => KeyCode::PageDown,
            f if f.len() >= 2 && f.starts_with('F') => {
                KeyCode::F(f[1..].parse().ok().filter(|n| (1..=12).contains(n))?)
            }
            c if c.chars().count() == 1 => {
                let ch = c.chars().next()?;
                if ch.is_control() {
                    return None;
                }
                KeyCode::Char(if ctrl { ch.to_ascii_lowercase() } else { ch })
            }
            _ => return None,
        };
        Some(Key { code, ctrl })
    }

    /// How the key is written on screen; `ascii` avoids arrow glyphs.
    pub fn label(&self, ascii: bool) -> String {
        let base = match self.code {
            KeyCode::Enter => "Enter".to_string(),
            KeyCode::Tab => "Tab".to_string(),
            KeyCode::BackTab => "S-Tab".to_string(),
            KeyCode::Esc => "Esc".to_string(),
            KeyCode::Char(' ') => "Space".to_string(),
            KeyCode::Backspace => "Bksp".to_string(),
            KeyCode::Delete => "Del".to_string(),
            KeyCode::Left => if ascii { "Left" } else { "←" }.to_string(),
            KeyCode::Right => if ascii { "Right" } else { "→" }.to_string(),
            KeyCode::Up => if ascii { "Up" } else { "↑" }.to_string(),
            KeyCode::Down => if ascii { "Down" } else { "↓" }.to_string(),
            KeyCode::Home => "Home".to_string(),
            KeyCode::End => "End".to_string(),
            KeyCode::PageUp => "PgUp".to_string(),
            KeyCode::PageDown => "PgDn".to_string(),
            KeyCode::F(n) => format!("F{n}"),
            KeyCode::Char(c) => c.to_string(),
            _ => "?".to_string(),
        };
        if self.ctrl { format!("C-{base}") } else { base }
    }
}

impl fmt::Display for Key {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.label(true))
    }
}

/// Which keys trigger which action.
#[derive(Debug, Clone, PartialEq)]
pub struct KeyMap {
    bindings: Vec<(Action, Vec<Key>)>,
}

/// A bad `[keys]` entry in the config file.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum KeyMapError {
    /// The action name is not known.
    #[error("[keys] {0:?} is not an action (see `zsift review --print-config`)")]
    UnknownAction(String),
    /// The key spelling is not understood.
    #[error("[keys] {action}: {key:?} is not a key name (examples: a, A, Enter, S-Tab, C-n, F1)")]
    BadKey {
        /// The action.
        action: String,
        /// The key text.
        key: String,
    },
}

impl Default for KeyMap {
    fn default() -> Self {
        use KeyCode as K;
        let b = |a: Action, keys: &[Key]| (a, keys.to_vec());
        let ctrl_c = Key {
            code: K::Char('c'),
            ctrl: true,
        };
        KeyMap {
            bindings: vec![
                b(Action::NextTarget, &[Key::ch('n'), Key::code(K::PageDown)]),
                b(Action::PrevTarget, &[Key::ch('p'), Key::code(K::PageUp)]),
                b(Action::NextUndecided, &[Key::ch(' ')]),
                b(Action::CandidateUp, &[Key::code(K::Up)]),
                b(Action::CandidateDown, &[Key::code(K::Down)]),
                b(Action::ShowCandidate, &[Key::code(K::Enter)]),
                b(Action::Accept, &[Key::ch('a')]),
                b(Action::Reject, &[Key::ch('r')]),
                b(Action::Reobserve, &[Key::ch('f')]),
                b(Action::SetClass, &[Key::ch('c')]),
                b(Action::Note, &[Key::ch('t')]),
                b(Action::Undo, &[Key::ch('u')]),
                b(Action::NudgeUpFine, &[Key::ch('.')]),
                b(Action::NudgeDownFine, &[Key::ch(',')]),
                b(Action::NudgeUpCoarse, &[Key::ch('>')]),
                b(Action::NudgeDownCoarse, &[Key::ch('<')]),
                b(Action::NudgeReset, &[Key::ch('z')]),
                b(Action::LineNext, &[Key::code(K::Tab)]),
                b(Action::LinePrev, &[Key::code(K::BackTab)]),
                b(Action::ZoomIn, &[Key::ch('+'), Key::ch('=')]),
                b(Action::ZoomOut, &[Key::ch('-')]),
                b(Action::PanLeft, &[Key::code(K::Left)]),
                b(Action::PanRight, &[Key::code(K::Right)]),
                b(Action::ViewAll, &[Key::ch('0')]),
                b(Action::Smooth, &[Key::ch('s')]),
                b(Action::ToggleErrors, &[Key::ch('e')]),
                b(Action::ToggleSky, &[Key::ch('k')]),
                b(Action::Help, &[Key::ch('?'), Key::code(K::F(1))]),
                b(Action::Quit, &[Key::ch('q'), ctrl_c]),
            ],
        }
    }
}

impl KeyMap {
    /// The action bound to `key`, if any.
    pub fn action(&self, key: Key) -> Option<Action> {
        self.bindings
            .iter()
            .find(|(_, keys)| keys.contains(&key))
            .map(|(a, _)| *a)
    }

    /// The keys of `action` (empty when unbound).
    pub fn keys(&self, action: Action) -> &[Key] {
        self.bindings
            .iter()
            .find(|(a, _)| *a == action)
            .map(|(_, k)| k.as_slice())
            .unwrap_or(&[])
    }

    /// The first key of `action` as shown on screen, or `-` when unbound.
    pub fn first_label(&self, action: Action, ascii: bool) -> String {
        self.keys(action)
            .first()
            .map(|k| k.label(ascii))
            .unwrap_or_else(|| "-".into())
    }

    /// Replace the keys of the action called `name` by `keys` (config-file
    /// spellings). A key taken from another action is removed there, so one
    /// key never means two things. An empty list unbinds the action.
    pub fn rebind(&mut self, name: &str, keys: &[String]) -> Result<(), KeyMapError> {
        let action = Action::from_config_name(name)
            .ok_or_else(|| KeyMapError::UnknownAction(crate::text::clean(name)))?;
        let mut parsed = Vec::new();
        for k in keys {
            parsed.push(Key::parse(k).ok_or_else(|| KeyMapError::BadKey {
                action: name.to_string(),
                key: crate::text::clean(k),
            })?);
        }
        for (_, ks) in self.bindings.iter_mut() {
            ks.retain(|k| !parsed.contains(k));
        }
        if let Some((_, ks)) = self.bindings.iter_mut().find(|(a, _)| *a == action) {
            *ks = parsed;
        }
        Ok(())
    }

    /// Rows of the help overlay: (keys as shown, description), in
    /// [`Action::ALL`] order.
    pub fn help_rows(&self, ascii: bool) -> Vec<(String, &'static str)> {
        Action::ALL
            .iter()
            .map(|a| {
                let keys: Vec<String> = self.keys(*a).iter().map(|k| k.label(ascii)).collect();
                let shown = if keys.is_empty() {
                    "(unbound)".to_string()
                } else {
                    keys.join(" ")
                };
                (shown, a.description())
            })
            .collect()
    }
}

/// Keys of the class picker (a pop-up, so they may reuse letters of the main
/// map): digit, class. Shown in the pop-up from this table.
pub const CLASS_KEYS: [(char, crate::lines::ObjectClass); 4] = [
    ('1', crate::lines::ObjectClass::Star),
    ('2', crate::lines::ObjectClass::Galaxy),
    ('3', crate::lines::ObjectClass::Qso),
    ('4', crate::lines::ObjectClass::Unknown),
];

/// Keys inside a text prompt (note, subclass): confirm, cancel.
pub const PROMPT_CONFIRM: KeyCode = KeyCode::Enter;
/// Cancels a pop-up or prompt.
pub const PROMPT_CANCEL: KeyCode = KeyCode::Esc;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_action_has_a_default_key_and_no_key_means_two_actions() {
        let map = KeyMap::default();
        let mut seen = std::collections::HashSet::new();
        for a in Action::ALL {
            assert!(!map.keys(a).is_empty(), "{a:?} unbound");
            for k in map.keys(a) {
                assert!(seen.insert(*k), "{k} bound twice");
            }
        }
        assert_eq!(map.bindings.len(), Action::ALL.len());
    }

    #[test]
    fn q_quits_by_default() {
        assert_eq!(KeyMap::default().action(Key::ch('q')), Some(Action::Quit));
    }

    #[test]
    fn key_spellings_round_trip_through_their_label() {
        for s in [
            "a", "A", "Enter", "Tab", "S-Tab", "C-n", "Left", "PageDown", "F1", "Space", ".",
        ] {
            let k = Key::parse(s).expect(s);
            let back = Key::parse(&k.label(true).replace("PgDn", "PageDown")).expect("label");
            assert_eq!(k, back, "{s}");
        }
        assert_eq!(Key::parse("F13"), None);
        assert_eq!(Key::parse("Hyper"), None);
    }

    #[test]
    fn rebinding_moves_a_key_away_from_its_old_action() {
        let mut map = KeyMap::default();
        map.rebind("accept", &["y".into(), "n".into()])
            .expect("rebind");
        assert_eq!(map.action(Key::ch('n')), Some(Action::Accept));
        assert_eq!(map.action(Key::ch('a')), None);
        assert_eq!(
            map.keys(Action::NextTarget),
            &[Key::code(KeyCode::PageDown)]
        );
    }

    #[test]
    fn rebinding_reports_unknown_actions_and_keys() {
        let mut map = KeyMap::default();
        assert!(matches!(
            map.rebind("launch", &[]),
            Err(KeyMapError::UnknownAction(_))
        ));
        assert!(matches!(
            map.rebind("accept", &["Hyper-x".into()]),
            Err(KeyMapError::BadKey { .. })
        ));
    }

    #[test]
    fn shift_tab_event_maps_to_back_tab() {
        let ev = KeyEvent::new(KeyCode::Tab, KeyModifiers::SHIFT);
        assert_eq!(Key::from_event(&ev).code, KeyCode::BackTab);
    }
}
