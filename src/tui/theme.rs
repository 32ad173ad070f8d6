//! Themes: what each *meaning* on screen looks like.
//!
//! Widgets ask the theme for a [`Role`] ("the continuum", "a selected
//! emission marker", "an accepted target") and never name a colour. A theme
//! is a TOML file (`themes/*.toml` in the repository, embedded into the
//! binary; user themes in `<config folder>/themes/NAME.toml`) mapping each
//! role to a foreground, background and attributes. Roles a file leaves out
//! fall back to the `base` entry.

use ratatui::style::{Color, Modifier, Style};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::Path;

/// Every meaning a widget can draw. The TOML key is the snake-case name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Role {
    /// Background and plain text everywhere.
    Base,
    /// Panel titles.
    Title,
    /// Secondary text.
    Dim,
    /// Plot axis and tick labels.
    Axis,
    /// The flux curve.
    Flux,
    /// The fitted continuum.
    Continuum,
    /// The flux +/- 1 sigma band.
    ErrorBand,
    /// The sky spectrum.
    Sky,
    /// Markers and labels of matched emission lines.
    Emission,
    /// Markers and labels of matched absorption lines.
    Absorption,
    /// The marker of the line under the line cursor.
    MarkerSelected,
    /// Lines the chosen candidate predicts in range but that were not matched.
    Expected,
    /// Detected features that no line of the chosen candidate explains.
    Unmatched,
    /// Columns inside a night-sky line region.
    SkyRegion,
    /// Columns inside a telluric band.
    TelluricRegion,
    /// The highlighted row of a list.
    Cursor,
    /// An accepted target.
    Accepted,
    /// A rejected target.
    Rejected,
    /// A target flagged for re-observation.
    Reobserve,
    /// A target with no decision yet.
    Undecided,
    /// Warnings from the reader or the identifier.
    Warning,
    /// "Saved" confirmations.
    StatusOk,
    /// Errors (e.g. the log could not be written).
    StatusError,
    /// Key names in the footer and help.
    Key,
    /// Pop-up prompts and the help overlay.
    Popup,
}

impl Role {
    /// All roles, in declaration order.
    pub const ALL: [Role; 25] = [
        Role::Base,
        Role::Title,
        Role::Dim,
        Role::Axis,
        Role::Flux,
        Role::Continuum,
        Role::ErrorBand,
        Role::Sky,
        Role::Emission,
        Role::Absorption,
        Role::MarkerSelected,
        Role::Expected,
        Role::Unmatched,
        Role::SkyRegion,
        Role::TelluricRegion,
        Role::Cursor,
        Role::Accepted,
        Role::Rejected,
        Role::Reobserve,
        Role::Undecided,
        Role::Warning,
        Role::StatusOk,
        Role::StatusError,
        Role::Key,
        Role::Popup,
    ];

    /// The TOML key of this role.
    pub fn key(self) -> &'static str {
        match self {
            Role::Base => "base",
            Role::Title => "title",
            Role::Dim => "dim",
            Role::Axis => "axis",
            Role::Flux => "flux",
            Role::Continuum => "continuum",
            Role::ErrorBand => "error_band",
            Role::Sky => "sky",
            Role::Emission => "emission",
            Role::Absorption => "absorption",
            Role::MarkerSelected => "marker_selected",
            Role::Expected => "expected",
            Role::Unmatched => "unmatched",
            Role::SkyRegion => "sky_region",
            Role::TelluricRegion => "telluric_region",
            Role::Cursor => "cursor",
            Role::Accepted => "accepted",
            Role::Rejected => "rejected",
            Role::Reobserve => "reobserve",
            Role::Undecided => "undecided",
            Role::Warning => "warning",
            Role::StatusOk => "status_ok",
            Role::StatusError => "status_error",
            Role::Key => "key",
            Role::Popup => "popup",
        }
    }
}

/// A loaded theme.
#[derive(Debug, Clone, PartialEq)]
pub struct Theme {
    /// Theme name (from the file).
    pub name: String,
    /// One-line description.
    pub description: String,
    styles: BTreeMap<Role, Style>,
}

/// Why a theme could not be loaded.
#[derive(Debug, thiserror::Error)]
pub enum ThemeError {
    /// Not valid TOML or not the theme shape.
    #[error("theme {origin}: {message}")]
    Syntax {
        /// File name or built-in name.
        origin: String,
        /// The parser's message (with line and column).
        message: String,
    },
    /// A colour, attribute or role name is unknown.
    #[error("theme {origin}: [styles] {role}: {message}")]
    Value {
        /// File name or built-in name.
        origin: String,
        /// The entry.
        role: String,
        /// What is wrong.
        message: String,
    },
    /// No built-in or user theme has this name.
    #[error("no theme named {0:?} (built in: standard, contrast, mono, night)")]
    Unknown(String),
    /// The user theme file could not be read.
    #[error("theme {path}: {source}")]
    Io {
        /// The file.
        path: String,
        /// The error.
        source: std::io::Error,
    },
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ThemeFile {
    name: String,
    #[serde(default)]
    description: String,
    styles: BTreeMap<String, StyleSpec>,
}

#[derive(Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct StyleSpec {
    fg: Option<String>,
    bg: Option<String>,
    #[serde(default)]
    mods: Vec<String>,
}

/// The built-in themes: (name, TOML text), embedded from `themes/`.
pub const BUILTIN: [(&str, &str); 4] = [
    ("standard", include_str!("../../themes/standard.toml")),
    ("contrast", include_str!("../../themes/contrast.toml")),
    ("mono", include_str!("../../themes/mono.toml")),
    ("night", include_str!("../../themes/night.toml")),
];

fn parse_color(s: &str) -> Option<Color> {
    Some(match s.to_ascii_lowercase().as_str() {
        "default" | "reset" => Color::Reset,
        "black" => Color::Black,
        "red" => Color::Red,
        "green" => Color::Green,
        "yellow" => Color::Yellow,
        "blue" => Color::Blue,
        "magenta" => Color::Magenta,
        "cyan" => Color::Cyan,
        "gray" | "grey" => Color::Gray,
        "darkgray" | "darkgrey" => Color::DarkGray,
        "lightred" => Color::LightRed,
        "lightgreen" => Color::LightGreen,
        "lightyellow" => Color::LightYellow,
        "lightblue" => Color::LightBlue,
        "lightmagenta" => Color::LightMagenta,
        "lightcyan" => Color::LightCyan,
        "white" => Color::White,
        _ => return None,
    })
}

fn parse_modifier(s: &str) -> Option<Modifier> {
    Some(match s.to_ascii_lowercase().as_str() {
        "bold" => Modifier::BOLD,
        "dim" => Modifier::DIM,
        "italic" => Modifier::ITALIC,
        "underlined" => Modifier::UNDERLINED,
        "reversed" => Modifier::REVERSED,
        _ => return None,
    })
}

impl Theme {
    /// Parse a theme from TOML text; `origin` names it in errors.
    pub fn from_toml(text: &str, origin: &str) -> Result<Theme, ThemeError> {
        let file: ThemeFile = toml::from_str(text).map_err(|e| ThemeError::Syntax {
            origin: origin.to_string(),
            message: e.to_string(),
        })?;
        let mut styles = BTreeMap::new();
        for (key, spec) in &file.styles {
            let role = Role::ALL
                .iter()
                .copied()
                .find(|r| r.key() == key)
                .ok_or_else(|| ThemeError::Value {
                    origin: origin.to_string(),
                    role: key.clone(),
                    message: "not a known entry".into(),
                })?;
            let bad = |message: String| ThemeError::Value {
                origin: origin.to_string(),
                role: key.clone(),
                message,
            };
            let mut style = Style::default();
            if let Some(fg) = &spec.fg {
                style = style.fg(parse_color(fg).ok_or_else(|| bad(format!("colour {fg:?}")))?);
            }
            if let Some(bg) = &spec.bg {
                style = style.bg(parse_color(bg).ok_or_else(|| bad(format!("colour {bg:?}")))?);
            }
            for m in &spec.mods {
                style = style
                    .add_modifier(parse_modifier(m).ok_or_else(|| bad(format!("attribute {m:?}")))?);
            }
            styles.insert(role, style);
        }
        Ok(Theme {
            name: crate::text::clean(&file.name),
            description: crate::text::clean(&file.description),
            styles,
        })
    }

    /// A built-in theme by name.
    pub fn builtin(name: &str) -> Result<Theme, ThemeError> {
        let (n, text) = BUILTIN
            .iter()
            .find(|(n, _)| *n == name)
            .ok_or_else(|| ThemeError::Unknown(name.to_string()))?;
        Theme::from_toml(text, &format!("built-in {n}"))
    }

    /// The theme called `name`: a user theme `<dir>/NAME.toml` when `user_dir`
    /// has one, else a built-in one.
    pub fn find(name: &str, user_dir: Option<&Path>) -> Result<Theme, ThemeError> {
        if let Some(dir) = user_dir {
            let stem = crate::text::safe_stem(name);
            let path = dir.join(format!("{stem}.toml"));
            if path.is_file() {
                let text = std::fs::read_to_string(&path).map_err(|source| ThemeError::Io {
                    path: path.display().to_string(),
                    source,
                })?;
                return Theme::from_toml(&text, &path.display().to_string());
            }
        }
        Theme::builtin(name)
    }

    /// The style of a meaning. Entries a theme leaves out fall back to `base`;
    /// every style is patched over `base`, so a theme that sets a background
    /// on `base` keeps it everywhere.
    pub fn style(&self, role: Role) -> Style {
        let base = self.styles.get(&Role::Base).copied().unwrap_or_default();
        match self.styles.get(&role) {
            Some(s) => base.patch(*s),
            None => base,
        }
    }

    /// The style of a line marker of `kind` (emission above the curve,
    /// absorption below), emphasised when `selected`.
    pub fn marker(&self, emission: bool, selected: bool) -> Style {
        if selected {
            self.style(Role::MarkerSelected)
        } else if emission {
            self.style(Role::Emission)
        } else {
            self.style(Role::Absorption)
        }
    }
}

impl Default for Theme {
    fn default() -> Self {
        // The built-in text is part of the binary and covered by tests.
        Theme::builtin("standard").unwrap_or(Theme {
            name: "standard".into(),
            description: String::new(),
            styles: BTreeMap::new(),
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_builtin_theme_parses_and_sets_every_role() {
        for (name, _) in BUILTIN {
            let t = Theme::builtin(name).expect(name);
            assert_eq!(t.name, name);
            for role in Role::ALL {
                if role != Role::Base || name == "contrast" || name == "night" {
                    assert!(t.styles.contains_key(&role), "{name} lacks {}", role.key());
                }
            }
        }
    }

    #[test]
    fn mono_theme_uses_no_colour_at_all() {
        let t = Theme::builtin("mono").expect("mono");
        for role in Role::ALL {
            let s = t.style(role);
            assert!(s.fg.is_none() && s.bg.is_none(), "{} has a colour", role.key());
        }
    }

    #[test]
    fn night_theme_styles_are_red_or_black_only() {
        let t = Theme::builtin("night").expect("night");
        for role in Role::ALL {
            let s = t.style(role);
            for c in [s.fg, s.bg] {
                assert!(
                    matches!(c, Some(Color::Red) | Some(Color::Black)),
                    "{} uses {c:?}",
                    role.key()
                );
            }
        }
    }

    #[test]
    fn unknown_colour_is_reported_with_its_entry() {
        let e = Theme::from_toml("name='x'\n[styles]\nflux={fg='mauve'}\n", "test.toml")
            .expect_err("bad colour");
        let msg = e.to_string();
        assert!(msg.contains("test.toml") && msg.contains("flux") && msg.contains("mauve"));
    }

    #[test]
    fn syntax_error_names_the_file() {
        let e = Theme::from_toml("name = \n", "mine.toml").expect_err("bad toml");
        assert!(e.to_string().contains("mine.toml"));
    }
}
