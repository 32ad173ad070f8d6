//! The user's review settings: `review.toml` in the platform config folder
//! (`~/.config/zsift/` on Linux, `~/Library/Application Support/zsift/` on
//! macOS, `%APPDATA%\zsift\config\` on Windows), or the file named by the
//! `ZSIFT_CONFIG` environment variable. Every field is optional;
//! [`EXAMPLE`] is the documented example (`zsift review --print-config`).
//!
//! `zsift scan` reads the same file for its `[[sites]]` list (named
//! observatories for the barycentric correction) and ignores the rest.

use crate::physics::bary::NamedSite;
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

# Up/Down move only a highlight in the candidate list; the show key (Enter)
# makes the plot markers, the matched lines and the barycentric values follow
# it, and accept (a) takes the shown candidate (marked > in the list). At
# 100x30 a highlight move sends at most about 210 bytes to the terminal,
# showing a candidate 500-650 (plot markers and both lists), which is felt
# over a slow link (SSH from a telescope). On a fast link, true shows each
# candidate as the cursor reaches it.
follow_cursor = false

# Key bindings: action = [keys]. Keys: a letter or symbol (case matters),
# Enter, Tab, S-Tab, Esc, Space, Backspace, Left, Right, Up, Down, Home,
# End, PageUp, PageDown, F1..F12, and C-x for Ctrl-x. A key given here is
# taken away from any other action. The help overlay (?) shows the result.
[keys]
# accept = ["a"]
# show_candidate = ["Enter"]
# reject = ["r"]
# reobserve = ["f"]
# next_target = ["n", "PageDown"]

# Observatories by name, for the barycentric correction (review and scan):
# used by --site NAME and for files whose OBSERVAT or TELESCOP keyword (or
# `# observatory:` line) names a site without giving its position. Give
# either lon (east, degrees), lat (geodetic, degrees) and height (metres above
# the WGS84 ellipsoid, default 0), or x, y, z (geocentric ITRS, metres).
# Names match without regard to case; aliases are other names for the same
# place (e.g. the telescope's). The site below is the demo night's invented one.
[[sites]]
name = "Cairn Vellan Observatory"
aliases = ["Cairn Vellan 2.2m"]
lon = -113.240
lat = 44.183
height = 2780

# The same place written geocentrically would be:
# [[sites]]
# name = "Cairn Vellan Observatory"
# x = -1808503.004
# y = -4211431.230
# z = 4424633.518
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
    /// Show each candidate as the cursor reaches it (default false: the show
    /// key does it, so a cursor move sends only two list rows).
    pub follow_cursor: Option<bool>,
    /// Key bindings: action name -> keys.
    #[serde(default)]
    pub keys: BTreeMap<String, Vec<String>>,
    /// Named observatories (`[[sites]]`), as written; [`Config::named_sites`]
    /// gives them checked, for the barycentric correction.
    #[serde(default)]
    pub sites: Vec<SiteEntry>,
    /// Where the file was read from (not part of the file).
    #[serde(skip)]
    pub path: Option<PathBuf>,
}

/// One `[[sites]]` entry: a name (and other names) and a position, either
/// geodetic (`lon`, `lat`, `height`) or geocentric (`x`, `y`, `z`).
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SiteEntry {
    /// The site's name, as files or `--site` give it (case does not matter).
    pub name: String,
    /// Other names for the same place (e.g. the telescope's TELESCOP).
    #[serde(default)]
    pub aliases: Vec<String>,
    /// Geodetic east longitude, degrees.
    pub lon: Option<f64>,
    /// Geodetic latitude, degrees.
    pub lat: Option<f64>,
    /// Height above the WGS84 ellipsoid, metres (default 0).
    pub height: Option<f64>,
    /// Geocentric ITRS X, metres.
    pub x: Option<f64>,
    /// Geocentric ITRS Y, metres.
    pub y: Option<f64>,
    /// Geocentric ITRS Z, metres.
    pub z: Option<f64>,
}

impl SiteEntry {
    /// The entry as named sites (one per name and alias), or what is wrong.
    pub fn resolve(&self) -> Result<Vec<NamedSite>, String> {
        let name = crate::text::clean(self.name.trim());
        if name.is_empty() {
            return Err("the site has no name".into());
        }
        let geodetic = self.lon.is_some() || self.lat.is_some() || self.height.is_some();
        let geocentric = self.x.is_some() || self.y.is_some() || self.z.is_some();
        let site = match (geodetic, geocentric) {
            (true, true) => {
                return Err("give lon/lat/height or x/y/z, not both".into());
            }
            (true, false) => match (self.lon, self.lat) {
                (Some(lon), Some(lat)) => {
                    NamedSite::geodetic(&name, lon, lat, self.height.unwrap_or(0.0))?
                }
                _ => return Err("give both lon and lat".into()),
            },
            (false, true) => match (self.x, self.y, self.z) {
                (Some(x), Some(y), Some(z)) => NamedSite::geocentric(&name, [x, y, z])?,
                _ => return Err("give all three of x, y and z".into()),
            },
            (false, false) => {
                return Err("no position: give lon and lat (and height), or x, y and z".into());
            }
        };
        let mut out = vec![site.clone()];
        for a in &self.aliases {
            let a = crate::text::clean(a.trim());
            if !a.is_empty() {
                out.push(NamedSite {
                    name: a,
                    ..site.clone()
                });
            }
        }
        Ok(out)
    }
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
    /// A `[[sites]]` entry does not describe a place on Earth.
    #[error("config {path}: [[sites]] entry {index} ('{name}'): {message}")]
    Site {
        /// The file.
        path: PathBuf,
        /// 1-based position of the entry in the file.
        index: usize,
        /// Its name as written (cleaned).
        name: String,
        /// What is wrong.
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
    config_path
        .and_then(|p| p.parent())
        .map(|d| d.join("themes"))
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
        c.named_sites()?;
        Ok(c)
    }

    /// The `[[sites]]` list as named sites for the barycentric correction
    /// (an entry with aliases gives one per name), checked.
    pub fn named_sites(&self) -> Result<Vec<NamedSite>, ConfigError> {
        let mut out = Vec::new();
        for (i, e) in self.sites.iter().enumerate() {
            out.extend(e.resolve().map_err(|message| ConfigError::Site {
                path: self.path.clone().unwrap_or_default(),
                index: i + 1,
                name: crate::text::clean(&e.name),
                message,
            })?);
        }
        Ok(out)
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
        assert_eq!(
            c.follow_cursor,
            Some(false),
            "the example states the default"
        );
        let mut map = KeyMap::default();
        for (a, k) in &c.keys {
            map.rebind(a, k).expect("example keys are valid");
        }
        // Uncommented lines with real keys, to be sure the table form works.
        let c = Config::parse("[keys]\naccept = [\"y\"]\n", Path::new("x.toml")).expect("parses");
        assert_eq!(c.keys["accept"], vec!["y".to_string()]);
    }

    #[test]
    fn the_example_configures_the_demo_site_under_its_name_and_alias() {
        let c = Config::parse(EXAMPLE, Path::new("example.toml")).expect("example parses");
        let sites = c.named_sites().expect("sites");
        let names: Vec<&str> = sites.iter().map(|s| s.name.as_str()).collect();
        assert_eq!(names, ["Cairn Vellan Observatory", "Cairn Vellan 2.2m"]);
        // The demo generator's constants (the same invented place).
        assert_eq!(sites[0].longitude_deg, crate::synth::demo::LONGITUDE_DEG);
        assert_eq!(sites[0].latitude_deg, crate::synth::demo::LATITUDE_DEG);
        assert_eq!(sites[0].height_m, crate::synth::demo::HEIGHT_M);
        assert_eq!(sites[1].longitude_deg, sites[0].longitude_deg);
    }

    #[test]
    fn a_geocentric_site_is_kept_as_the_same_place_in_geodetic_form() {
        // The demo's commented x, y, z (mm-rounded) against its lon/lat/height.
        let text =
            "[[sites]]\nname = \"cv\"\nx = -1808503.004\ny = -4211431.230\nz = 4424633.518\n";
        let c = Config::parse(text, Path::new("x.toml")).expect("parses");
        let s = &c.named_sites().expect("sites")[0];
        assert!((s.longitude_deg - crate::synth::demo::LONGITUDE_DEG).abs() < 1e-8);
        assert!((s.latitude_deg - crate::synth::demo::LATITUDE_DEG).abs() < 1e-8);
        assert!((s.height_m - crate::synth::demo::HEIGHT_M).abs() < 1e-3);
    }

    #[test]
    fn a_bad_site_entry_is_an_error_naming_the_file_entry_and_problem() {
        for (body, why) in [
            ("name = \"a\"\nlon = 10.0\n", "both lon and lat"),
            (
                "name = \"a\"\nlon = 10.0\nlat = 95.0\n",
                "not a place on Earth",
            ),
            (
                "name = \"a\"\nx = 1.0\ny = 2.0\nz = 3.0\n",
                "not on the Earth's surface",
            ),
            ("name = \"a\"\nx = 6.3e6\ny = 0.0\n", "all three"),
            (
                "name = \"a\"\nlon = 1.0\nlat = 2.0\nx = 6.3e6\n",
                "not both",
            ),
            ("name = \"a\"\n", "no position"),
            ("name = \" \"\nlon = 1.0\nlat = 2.0\n", "no name"),
            (
                "name = \"a\"\nlon = 1.0\nlat = 2.0\nheight = 90000.0\n",
                "not a ground site",
            ),
        ] {
            let text = format!("[[sites]]\nname = \"ok\"\nlon = 1.0\nlat = 2.0\n[[sites]]\n{body}");
            let e = Config::parse(&text, Path::new("/tmp/sites.toml")).expect_err(why);
            let m = e.to_string();
            assert!(
                m.contains("/tmp/sites.toml") && m.contains("entry 2"),
                "{m}"
            );
            assert!(m.contains(why), "{m} should say {why}");
        }
        let e = Config::parse(
            "[[sites]]\nname = \"a\"\nelevation = 3\n",
            Path::new("s.toml"),
        )
        .expect_err("unknown key");
        assert!(e.to_string().contains("elevation"), "{e}");
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
            move |k: &str| {
                pairs
                    .iter()
                    .find(|(n, _)| *n == k)
                    .map(|(_, v)| v.to_string())
            }
        };
        assert!(locale_is_utf8_from(env(&[("LANG", "en_GB.UTF-8")])));
        assert!(!locale_is_utf8_from(env(&[
            ("LC_ALL", "C"),
            ("LANG", "en_GB.UTF-8")
        ])));
        assert!(locale_is_utf8_from(env(&[
            ("LC_CTYPE", "de_DE.utf8"),
            ("LANG", "C")
        ])));
        assert!(!locale_is_utf8_from(env(&[])));
    }
}
