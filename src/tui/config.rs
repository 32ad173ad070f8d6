//! The user's review settings: `review.toml` in the platform config folder
//! (`~/.config/zsift/` on Linux, `~/Library/Application Support/zsift/` on
//! macOS, `%APPDATA%\zsift\config\` on Windows), or the file named by the
//! `ZSIFT_CONFIG` environment variable. Every field is optional;
//! [`EXAMPLE`] is the documented example (`zsift review --print-config`).

use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// The documented example config file.
pub const EXAMPLE: &str = r#"# zsift review settings. Put this file at the path `zsift review --print-config`
# prints first (or point ZSIFT_CONFIG at it). Every line is optional.

# Your name or initials, written into every decision you make.
observer = "night assistant"

# Where decision logs go when a command is not given --log
# (default: the platform data folder, e.g. ~/.local/share/zsift/logs).
# log_dir = "/data/run-12/decisions"

# Theme: standard, contrast, mono, night, or the stem of a file in the
# themes/ folder next to this file (e.g. themes/mine.toml -> "mine").
# NO_COLOR in the environment selects mono unless --theme is given.
theme = "standard"

# Plain ASCII plot and labels even when the terminal speaks UTF-8.
ascii = false

# After a decision, go on to the next undecided target.
advance = true

# Key bindings: action = [keys]. Keys: a letter or symbol (case matters),
# Enter, Tab, S-Tab, Esc, Space, Backspace, Left, Right, Up, Down, Home,
# End, PageUp, PageDown, F1..F12, and C-x for Ctrl-x. A key given here is
# taken away from any other action. The help overlay (?) shows the result.
[keys]
# accept = ["a", "Enter"]
# reject = ["r"]
# reobserve = ["f"]
# next_target = ["n", "PageDown"]
"#;

/// Settings read from the config file.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Config {
    /// Observer name written into decisions.
    pub observer: Option<String>,
    /// Folder for decision logs.
    pub log_dir: Option<PathBuf>,
    /// Theme name.
    pub theme: Option<String>,
    /// Force plain ASCII.
    #[serde(default)]
    pub ascii: bool,
    /// Go on to the next undecided target after a decision.
    pub advance: Option<bool>,
    /// Key bindings: action name -> keys.
    #[serde(default)]
    pub keys: BTreeMap<String, Vec<String>>,
    /// Where the file was read from (not part of the file).
    #[serde(skip)]
    pub path: Option<PathBuf>,
}

/// Why the config file could not be used.
#[derive(Debug, thiserror::Error)]
pub enum ConfigError {
    /// The file exists but could not be read.
    #[error("config {path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The error.
        source: std::io::Error,
    },
    /// The file is not valid (the message has line and column).
    #[error("config {path}: {message}")]
    Syntax {
        /// The file.
        path: PathBuf,
        /// The parser's message.
        message: String,
    },
}

/// The project folders of the platform (config, data), if a home is known.
pub fn dirs() -> Option<directories::ProjectDirs> {
    directories::ProjectDirs::from("", "", "zsift")
}

/// The config file path: `ZSIFT_CONFIG`, else `<config folder>/review.toml`.
pub fn default_path() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("ZSIFT_CONFIG") {
        return Some(PathBuf::from(p));
    }
    dirs().map(|d| d.config_dir().join("review.toml"))
}

/// The folder user themes are looked up in: `themes/` beside the config file.
pub fn theme_dir(config_path: Option<&Path>) -> Option<PathBuf> {
    config_path.and_then(|p| p.parent()).map(|d| d.join("themes"))
}

/// The default folder for decision logs: `<data folder>/logs`.
pub fn default_log_dir() -> Option<PathBuf> {
    dirs().map(|d| d.data_dir().join("logs"))
}

impl Config {
    /// Parse config text; `path` names it in errors.
    pub fn parse(text: &str, path: &Path) -> Result<Config, ConfigError> {
        let mut c: Config = toml::from_str(text).map_err(|e| ConfigError::Syntax {
            path: path.to_path_buf(),
            message: e.to_string(),
        })?;
        c.observer = c.observer.map(|o| crate::text::clean(&o));
        c.path = Some(path.to_path_buf());
        Ok(c)
    }

    /// Load `path`; a missing file is an empty config, not an error.
    pub fn load(path: &Path) -> Result<Config, ConfigError> {
        match std::fs::read_to_string(path) {
            Ok(text) => Config::parse(&text, path),
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(Config {
                path: Some(path.to_path_buf()),
                ..Config::default()
            }),
            Err(source) => Err(ConfigError::Io {
                path: path.to_path_buf(),
                source,
            }),
        }
    }
}

/// True when the terminal's locale says UTF-8 (the first of `LC_ALL`,
/// `LC_CTYPE`, `LANG` that is set decides, as POSIX does).
pub fn locale_is_utf8() -> bool {
    locale_is_utf8_from(|k| std::env::var(k).ok())
}

/// [`locale_is_utf8`] over any variable lookup (for tests).
pub fn locale_is_utf8_from(get: impl Fn(&str) -> Option<String>) -> bool {
    for k in ["LC_ALL", "LC_CTYPE", "LANG"] {
        if let Some(v) = get(k).filter(|v| !v.is_empty()) {
            let v = v.to_ascii_lowercase();
            return v.contains("utf-8") || v.contains("utf8");
        }
    }
    false
}

/// True when `NO_COLOR` is set to anything non-empty (no-color.org).
pub fn no_color() -> bool {
    std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::tui::keys::KeyMap;

    #[test]
    fn the_documented_example_parses_and_its_keys_apply() {
        let c = Config::parse(EXAMPLE, Path::new("example.toml")).expect("example parses");
        assert_eq!(c.observer.as_deref(), Some("night assistant"));
        assert_eq!(c.theme.as_deref(), Some("standard"));
        let mut map = KeyMap::default();
        for (a, k) in &c.keys {
            map.rebind(a, k).expect("example keys are valid");
        }
        // Uncommented lines with real keys, to be sure the table form works.
        let c = Config::parse("[keys]\naccept = [\"y\"]\n", Path::new("x.toml")).expect("parses");
        assert_eq!(c.keys["accept"], vec!["y".to_string()]);
    }

    #[test]
    fn unknown_fields_are_an_error_naming_the_file() {
        let e = Config::parse("colour = 3\n", Path::new("/tmp/mine.toml")).expect_err("unknown");
        assert!(e.to_string().contains("/tmp/mine.toml"), "{e}");
    }

    #[test]
    fn a_missing_file_is_an_empty_config() {
        let c = Config::load(Path::new("/nonexistent/zsift/review.toml")).expect("missing is fine");
        assert_eq!(c.observer, None);
    }

    #[test]
    fn locale_follows_lc_all_then_lc_ctype_then_lang() {
        let env = |pairs: &'static [(&'static str, &'static str)]| {
            move |k: &str| pairs.iter().find(|(n, _)| *n == k).map(|(_, v)| v.to_string())
        };
        assert!(locale_is_utf8_from(env(&[("LANG", "en_GB.UTF-8")])));
        assert!(!locale_is_utf8_from(env(&[("LC_ALL", "C"), ("LANG", "en_GB.UTF-8")])));
        assert!(locale_is_utf8_from(env(&[("LC_CTYPE", "de_DE.utf8"), ("LANG", "C")])));
        assert!(!locale_is_utf8_from(env(&[])));
    }
}
