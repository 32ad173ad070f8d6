//! The identifier core: noise, continuum, line detection and fits, redshift
//! candidates, scoring and classification.
//!
//! Pure, deterministic computation over slices and the catalogue: no I/O, no
//! terminal types, no globals. Build an [`Identifier`] once (it holds the
//! catalogue index and any precomputed plans) and call [`Identifier::analyse`]
//! for each spectrum; the batch shell and the review UI both do exactly this,
//! so their answers are identical.

pub mod continuum;
pub mod detect;
pub mod fit;
pub mod noise;

use crate::lines::{Catalogue, ForegroundKind, LineKind, ObjectClass};
use crate::spectrum::Spectrum;
use serde::{Deserialize, Serialize};

/// Tunable settings of the identifier. `Default` is what `scan` and the
/// review use unless told otherwise.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Settings {
    /// Lowest redshift searched.
    pub z_min: f64,
    /// Highest redshift searched.
    pub z_max: f64,
    /// Largest |velocity| (km/s) for stellar solutions.
    pub star_v_max_kms: f64,
    /// Detection threshold (matched-filter S/N).
    pub detect_snr: f64,
    /// How many candidates to return.
    pub max_candidates: usize,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            z_min: 0.0,
            z_max: 7.0,
            star_v_max_kms: 1000.0,
            detect_snr: 5.0,
            max_candidates: 5,
        }
    }
}

/// Emission or absorption, for a detected feature.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FeatureKind {
    /// Above the continuum.
    Emission,
    /// Below the continuum.
    Absorption,
}

/// Why a detected feature is not evidence about the target.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FeatureFlag {
    /// At a night-sky line: probably a sky-subtraction residual.
    Sky,
    /// Inside a telluric absorption band.
    Telluric,
    /// Narrower than the instrument allows: a cosmic ray or bad pixel.
    Spike,
}

impl From<ForegroundKind> for FeatureFlag {
    fn from(k: ForegroundKind) -> Self {
        match k {
            ForegroundKind::Sky => FeatureFlag::Sky,
            ForegroundKind::Telluric => FeatureFlag::Telluric,
        }
    }
}

/// A detected and fitted line feature (observed frame, vacuum Angstrom).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Feature {
    /// Fitted centre.
    pub wavelength: f64,
    /// 1-sigma error of the centre.
    pub wavelength_err: f64,
    /// Emission or absorption.
    pub kind: FeatureKind,
    /// Signal-to-noise of the fitted line (flux / flux error).
    pub snr: f64,
    /// Full width at half maximum, km/s.
    pub fwhm_kms: f64,
    /// Fitted peak amplitude above (emission, > 0) or below (absorption, < 0)
    /// the continuum, flux units.
    pub amplitude: f64,
    /// Integrated line flux (flux units x Angstrom); negative for absorption.
    pub flux: f64,
    /// 1-sigma error of the integrated flux.
    pub flux_err: f64,
    /// Observed-frame equivalent width in Angstrom, negative for emission
    /// (the astronomical convention: EW = integral of (1 - F/Fc) d lambda).
    pub ew: f64,
    /// Set when the feature is not the target's (sky, telluric, spike).
    pub flag: Option<FeatureFlag>,
}

/// Robust noise summary.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct Noise {
    /// Median continuum S/N per pixel.
    pub median_snr: f64,
    /// Ratio of the robust (MAD of first differences) estimate to the file's
    /// own uncertainties; `None` when the file has none.
    pub error_ratio: Option<f64>,
    /// True when sigma came from the robust estimate rather than the file.
    pub estimated: bool,
}

/// How much a person should trust a candidate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Grade {
    /// Little or no support.
    Poor,
    /// Some support; a person should look.
    Fair,
    /// Several consistent features; probably right.
    Good,
    /// Many consistent features, physics checks pass.
    High,
}

impl Grade {
    /// Lower-case name (`poor`, `fair`, `good`, `high`).
    pub fn as_str(self) -> &'static str {
        match self {
            Grade::Poor => "poor",
            Grade::Fair => "fair",
            Grade::Good => "good",
            Grade::High => "high",
        }
    }
}

/// A catalogue line matched to (or expected at) an observed position.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Match {
    /// Catalogue line name.
    pub line: String,
    /// Rest vacuum wavelength.
    pub rest_wavelength: f64,
    /// Observed vacuum wavelength (the fitted feature's centre).
    pub observed_wavelength: f64,
    /// Velocity offset of the feature from the candidate's redshift, km/s.
    pub offset_kms: f64,
    /// Index into [`Analysis::features`] of the matched feature, if any
    /// (a line measured at the candidate position without a detection has none).
    pub feature: Option<usize>,
    /// Emission or absorption, as seen.
    pub kind: LineKind,
    /// S/N of the measured line.
    pub snr: f64,
    /// FWHM, km/s.
    pub fwhm_kms: f64,
    /// Observed-frame equivalent width, Angstrom (negative = emission).
    pub ew: f64,
}

/// A redshift / velocity solution.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Candidate {
    /// 1 = best.
    pub rank: usize,
    /// Redshift.
    pub z: f64,
    /// 1-sigma error of z.
    pub z_err: f64,
    /// Velocity, km/s (relativistic, from z; see [`crate::physics`]).
    pub velocity_kms: f64,
    /// Class.
    pub class: ObjectClass,
    /// Subclass where the evidence supports one.
    pub subclass: Option<String>,
    /// Score (higher is better; comparable within one spectrum).
    pub score: f64,
    /// Trust grade.
    pub grade: Grade,
    /// A short human-readable reason.
    pub reason: String,
    /// Matched lines.
    pub matched: Vec<Match>,
    /// Derived quantities (line ratios, Balmer decrement, attenuation): name -> value.
    pub derived: Vec<(String, f64)>,
}

/// Everything the identifier found in one spectrum.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Analysis {
    /// Noise summary.
    pub noise: Noise,
    /// Per-pixel sigma used (from the file or estimated).
    pub sigma: Vec<f64>,
    /// Continuum, per pixel.
    pub continuum: Vec<f64>,
    /// Detected features.
    pub features: Vec<Feature>,
    /// Ranked candidates, best first.
    pub candidates: Vec<Candidate>,
    /// Warnings (human-readable).
    pub warnings: Vec<String>,
}

/// The built identifier: catalogue index, settings and precomputed plans.
#[derive(Debug, Clone)]
pub struct Identifier {
    catalogue: Catalogue,
    settings: Settings,
}

impl Identifier {
    /// Build an identifier for `catalogue` with `settings`.
    pub fn new(catalogue: &Catalogue, settings: Settings) -> Identifier {
        Identifier {
            catalogue: catalogue.clone(),
            settings,
        }
    }

    /// The catalogue in use.
    pub fn catalogue(&self) -> &Catalogue {
        &self.catalogue
    }

    /// The settings in use.
    pub fn settings(&self) -> &Settings {
        &self.settings
    }

    /// Analyse one spectrum.
    pub fn analyse(&self, spectrum: &Spectrum) -> Analysis {
        let _ = spectrum;
        todo!("identifier core")
    }

    /// Re-measure a candidate at a redshift the person chose (nudged or typed):
    /// matched and expected lines at `z`, score, grade and class, using the
    /// features already found in `analysis`.
    pub fn candidate_at(&self, spectrum: &Spectrum, analysis: &Analysis, z: f64) -> Candidate {
        let _ = (spectrum, analysis, z);
        todo!("identifier core")
    }
}
