//! The line catalogue: rest-frame lines of the targets (with groups and the
//! ratios atomic physics fixes) and observed-frame features that are not the
//! target (night-sky emission, telluric absorption bands).
//!
//! All wavelengths are vacuum Angstrom.
//!
//! - [`builtin()`]: the built-in [`Catalogue`] ([`builtin`] module: the
//!   tables, each value with its source).
//! - [`load_file`]: a user line list ([`file`] module: the format), merged
//!   into a catalogue with [`Catalogue::merge_lines`] or used alone with
//!   [`Catalogue::replace_lines`].

use serde::{Deserialize, Serialize};

pub mod builtin;
pub mod file;

pub use builtin::builtin;
pub use file::{LineFileError, load_file};

/// Whether a line is seen in emission, absorption, or either.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum LineKind {
    /// Seen in emission.
    Emission,
    /// Seen in absorption.
    Absorption,
    /// Seen in either, depending on the object.
    Both,
}

/// Object classes, as used by the catalogue (where a line shows) and by the
/// identifier (what an object is).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ObjectClass {
    /// A star (|v| up to about 1000 km/s).
    Star,
    /// A galaxy.
    Galaxy,
    /// A quasar / broad-line AGN.
    Qso,
    /// Not known / not classifiable.
    Unknown,
}

impl ObjectClass {
    /// Lower-case name used in output (`star`, `galaxy`, `qso`, `unknown`).
    pub fn as_str(self) -> &'static str {
        match self {
            ObjectClass::Star => "star",
            ObjectClass::Galaxy => "galaxy",
            ObjectClass::Qso => "qso",
            ObjectClass::Unknown => "unknown",
        }
    }
}

/// Typical width class of a line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Width {
    /// Narrow (nebular, stellar photospheric): up to a few hundred km/s.
    Narrow,
    /// Broad (quasar broad-line region): thousands of km/s.
    Broad,
}

/// One rest-frame line of a target.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Line {
    /// Name in the trade's notation, e.g. `H-alpha`, `[O III] 5007`, `Ca II K`.
    pub name: String,
    /// Species, e.g. `H I`, `[O III]`, `Ca II`.
    pub species: String,
    /// Vacuum wavelength, Angstrom.
    pub wavelength: f64,
    /// Emission, absorption or both.
    pub kind: LineKind,
    /// Typical relative strength (0..1, 1 = the strongest lines of its class);
    /// used to weight votes and to penalise absence.
    pub strength: f64,
    /// Classes of object in which it shows.
    pub classes: Vec<ObjectClass>,
    /// Typical width.
    pub width: Width,
    /// Group (doublet / multiplet / series) this line belongs to, if any.
    pub group: Option<String>,
}

impl Line {
    /// The line's wavelength in standard air (IAU, Morton 2000), Angstrom;
    /// equal to the vacuum wavelength below 2000 A.
    pub fn wavelength_air(&self) -> f64 {
        crate::physics::airvac::vacuum_to_air(self.wavelength)
    }
}

/// A fixed intensity ratio between two lines of a group.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Ratio {
    /// Name of the numerator line.
    pub numerator: String,
    /// Name of the denominator line.
    pub denominator: String,
    /// The expected flux ratio numerator / denominator.
    pub value: f64,
    /// Allowed range (physically allowed spread, e.g. density / temperature),
    /// as (min, max).
    pub range: (f64, f64),
    /// Where the number comes from.
    pub source: String,
}

/// What an observed-frame (not-the-target) feature is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ForegroundKind {
    /// Night-sky emission line (residuals of sky subtraction).
    Sky,
    /// Telluric absorption band.
    Telluric,
}

/// An observed-frame feature: a sky line (`lo == hi` is allowed, the width of
/// the feature is then the instrument's) or a telluric band `[lo, hi]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Foreground {
    /// Name, e.g. `[O I] 5577 sky` or `O2 A band`.
    pub name: String,
    /// Kind.
    pub kind: ForegroundKind,
    /// Lower edge, vacuum Angstrom (observed frame).
    pub lo: f64,
    /// Upper edge, vacuum Angstrom (observed frame).
    pub hi: f64,
    /// Typical strength (0..1).
    pub strength: f64,
}

/// The catalogue: target lines, fixed ratios, and foreground features.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Catalogue {
    /// Rest-frame lines, sorted by wavelength.
    pub lines: Vec<Line>,
    /// Fixed ratios between lines of the same group.
    pub ratios: Vec<Ratio>,
    /// Observed-frame sky lines and telluric bands, sorted by `lo`.
    pub foreground: Vec<Foreground>,
}

impl Catalogue {
    /// Lines whose wavelength, shifted to redshift `z`, falls in `[lo, hi]`
    /// (observed, vacuum Angstrom).
    pub fn in_range(&self, z: f64, lo: f64, hi: f64) -> impl Iterator<Item = &Line> {
        let s = 1.0 + z;
        self.lines
            .iter()
            .filter(move |l| l.wavelength * s >= lo && l.wavelength * s <= hi)
    }

    /// Merge user lines into the catalogue: a user line replaces the built-in
    /// line of the same name, the others are added; lines stay sorted.
    pub fn merge_lines(&mut self, user: Vec<Line>) {
        for l in user {
            match self.lines.iter_mut().find(|x| x.name == l.name) {
                Some(x) => *x = l,
                None => self.lines.push(l),
            }
        }
        self.lines
            .sort_by(|a, b| a.wavelength.total_cmp(&b.wavelength));
    }

    /// Replace all target lines by `user` (sorted). Ratios whose lines are no
    /// longer both present are dropped; the foreground features (sky lines,
    /// telluric bands) are kept, since they describe the site, not the target.
    pub fn replace_lines(&mut self, user: Vec<Line>) {
        self.lines = user;
        self.lines
            .sort_by(|a, b| a.wavelength.total_cmp(&b.wavelength));
        let names: Vec<&str> = self.lines.iter().map(|l| l.name.as_str()).collect();
        self.ratios.retain(|r| {
            names.contains(&r.numerator.as_str()) && names.contains(&r.denominator.as_str())
        });
    }

    /// The lines of a group, in wavelength order.
    pub fn group<'a>(&'a self, group: &'a str) -> impl Iterator<Item = &'a Line> + 'a {
        self.lines
            .iter()
            .filter(move |l| l.group.as_deref() == Some(group))
    }

    /// The fixed ratio with `numerator` over `denominator`, if tabulated.
    pub fn ratio(&self, numerator: &str, denominator: &str) -> Option<&Ratio> {
        self.ratios
            .iter()
            .find(|r| r.numerator == numerator && r.denominator == denominator)
    }

    /// A line by exact name.
    pub fn line(&self, name: &str) -> Option<&Line> {
        self.lines.iter().find(|l| l.name == name)
    }

    /// The foreground features overlapping `[lo, hi]` (observed, vacuum Angstrom),
    /// each widened by `pad` Angstrom on both sides.
    pub fn foreground_near(&self, lo: f64, hi: f64, pad: f64) -> impl Iterator<Item = &Foreground> {
        self.foreground
            .iter()
            .filter(move |f| f.hi + pad >= lo && f.lo - pad <= hi)
    }
}
