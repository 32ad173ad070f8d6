//! The last step of every reader: raw columns in file units -> a checked
//! [`Spectrum`] in vacuum Angstrom.
//!
//! Readers only parse; the rules that must be the same for every format
//! (ordering, duplicates, units, medium, masking, the target name) live here.

use super::{Medium, MediumChoice, Metadata, ReadOptions, Spectrum, SpectrumError};
use crate::physics::airvac;
use std::path::Path;

/// Fewest pixels a spectrum may have: below this the identifier's continuum
/// and noise estimates are meaningless (a project choice).
pub const MIN_PIXELS: usize = 16;

/// How the uncertainty column was given.
#[derive(Debug, Clone)]
pub enum Uncertainty {
    /// 1-sigma errors.
    Sigma(Vec<f64>),
    /// Variances.
    Variance(Vec<f64>),
    /// Inverse variances (0 = no information: the pixel is masked).
    Ivar(Vec<f64>),
}

impl Uncertainty {
    fn len(&self) -> usize {
        match self {
            Uncertainty::Sigma(v) | Uncertainty::Variance(v) | Uncertainty::Ivar(v) => v.len(),
        }
    }

    fn into_sigma(self) -> Vec<f64> {
        match self {
            Uncertainty::Sigma(v) => v,
            Uncertainty::Variance(v) => v
                .into_iter()
                .map(|x| if x > 0.0 { x.sqrt() } else { f64::NAN })
                .collect(),
            Uncertainty::Ivar(v) => v
                .into_iter()
                .map(|x| {
                    if x > 0.0 && x.is_finite() {
                        1.0 / x.sqrt()
                    } else {
                        f64::INFINITY
                    }
                })
                .collect(),
        }
    }

    fn reverse(&mut self) {
        match self {
            Uncertainty::Sigma(v) | Uncertainty::Variance(v) | Uncertainty::Ivar(v) => v.reverse(),
        }
    }
}

/// Wavelength grid as parsed, before units and medium.
#[derive(Debug, Clone)]
pub struct Raw {
    /// Wavelengths in the file's unit (or log10 Angstrom when `log10` is set).
    pub wave: Vec<f64>,
    /// Multiply by this to get Angstrom.
    pub unit_factor: f64,
    /// The wavelengths are log10(Angstrom) (after `unit_factor` is ignored).
    pub log10: bool,
    /// Flux.
    pub flux: Vec<f64>,
    /// Uncertainty, if any.
    pub uncertainty: Option<Uncertainty>,
    /// Sky, if any.
    pub sky: Option<Vec<f64>>,
    /// Extra pixels to mask (e.g. integer BLANK values), same length as flux.
    pub bad: Option<Vec<bool>>,
    /// The medium the file declared.
    pub medium_declared: Option<Medium>,
}

/// Turn parsed columns into a [`Spectrum`]. `place(i)` names where pixel `i`
/// came from (e.g. `line 14` or `HDU 1, row 14`) for error messages.
pub fn finish(
    path: &Path,
    mut raw: Raw,
    mut meta: Metadata,
    opts: &ReadOptions,
    place: &dyn Fn(usize) -> String,
) -> Result<Spectrum, SpectrumError> {
    let malformed = |place: String, message: String| SpectrumError::Malformed {
        path: path.to_path_buf(),
        place,
        message,
    };
    let n = raw.wave.len();
    let whole = place(usize::MAX);
    if raw.flux.len() != n
        || raw.uncertainty.as_ref().is_some_and(|u| u.len() != n)
        || raw.sky.as_ref().is_some_and(|s| s.len() != n)
    {
        return Err(malformed(
            whole,
            "wavelength, flux, error and sky columns differ in length".into(),
        ));
    }
    if n == 0 {
        return Err(malformed(whole, "no pixels".into()));
    }
    if n < MIN_PIXELS {
        return Err(malformed(
            whole,
            format!("only {n} pixels; at least {MIN_PIXELS} are needed"),
        ));
    }
    for (i, w) in raw.wave.iter().enumerate() {
        if !w.is_finite() {
            return Err(malformed(
                place(i),
                format!("wavelength is not a finite number ({w})"),
            ));
        }
        if !raw.log10 && *w <= 0.0 {
            return Err(malformed(
                place(i),
                format!("wavelength {w} is not positive"),
            ));
        }
    }
    // Descending input (common from some pipelines) is reversed with a warning;
    // anything else that is not strictly increasing is an error.
    let descending = n >= 2 && raw.wave.windows(2).all(|p| p[1] < p[0]);
    if descending {
        raw.wave.reverse();
        raw.flux.reverse();
        if let Some(u) = raw.uncertainty.as_mut() {
            u.reverse();
        }
        if let Some(s) = raw.sky.as_mut() {
            s.reverse();
        }
        if let Some(b) = raw.bad.as_mut() {
            b.reverse();
        }
        meta.warnings
            .push("wavelengths were in descending order; reversed".into());
    } else {
        for i in 1..n {
            let (a, b) = (raw.wave[i - 1], raw.wave[i]);
            if b == a {
                return Err(malformed(
                    place(i),
                    format!("duplicate wavelength {b} (same as the pixel before)"),
                ));
            }
            if b < a {
                return Err(malformed(
                    place(i),
                    format!(
                        "wavelength {b} is smaller than the one before ({a}); wavelengths must increase"
                    ),
                ));
            }
        }
    }
    // Units.
    let mut wave = if raw.log10 {
        raw.wave.iter().map(|l| 10f64.powf(*l)).collect::<Vec<_>>()
    } else {
        raw.wave.iter().map(|w| w * raw.unit_factor).collect()
    };
    if let Some(i) = wave.iter().position(|w| !w.is_finite() || *w <= 0.0) {
        return Err(malformed(
            place(if descending { n - 1 - i } else { i }),
            "wavelength overflows when converted to Angstrom".into(),
        ));
    }
    // Medium.
    let used = match (raw.medium_declared, opts.medium) {
        (Some(m), _) => m,
        (None, MediumChoice::Air) => Medium::Air,
        (None, MediumChoice::Vacuum) => Medium::Vacuum,
        (None, MediumChoice::Auto) => {
            meta.warnings.push(
                "the file does not say whether wavelengths are in air or vacuum; taken as vacuum (use --medium air if they are air)".into(),
            );
            Medium::Vacuum
        }
    };
    meta.medium_declared = raw.medium_declared;
    meta.medium_used = Some(used);
    if used == Medium::Air {
        airvac::air_to_vacuum_in_place(&mut wave);
    }
    if let Some(i) = (1..n).find(|&i| wave[i] <= wave[i - 1]) {
        return Err(malformed(
            place(if descending { n - 1 - i } else { i }),
            "wavelengths are too close together to tell apart after conversion".into(),
        ));
    }
    // Flux checks.
    if raw.flux.iter().all(|f| !f.is_finite()) {
        return Err(malformed(
            whole,
            "no flux value is a finite number (all NaN or infinite)".into(),
        ));
    }
    if raw.flux.iter().filter(|f| f.is_finite()).all(|f| *f == 0.0) {
        return Err(malformed(whole, "every flux value is zero".into()));
    }
    let sigma = raw.uncertainty.map(Uncertainty::into_sigma);
    let mut spectrum = Spectrum::new(wave, raw.flux, sigma, Metadata::default())?;
    if let Some(bad) = &raw.bad {
        for (m, b) in spectrum.mask.iter_mut().zip(bad) {
            if *b {
                *m = false;
            }
        }
    }
    let good = spectrum.mask.iter().filter(|m| **m).count();
    if good < MIN_PIXELS {
        return Err(malformed(
            whole,
            format!(
                "only {good} usable pixels (finite flux and positive error); at least {MIN_PIXELS} are needed"
            ),
        ));
    }
    let masked = n - good;
    if masked > 0 {
        meta.warnings.push(format!(
            "{masked} of {n} pixels masked (non-finite flux or error, or zero inverse variance)"
        ));
    }
    spectrum.sky = raw.sky;
    meta.target = target_name(&meta.target, path, &mut meta.warnings);
    meta.source_path = path.to_path_buf();
    for w in meta.warnings.iter_mut() {
        *w = crate::text::clean(w);
    }
    spectrum.meta = meta;
    Ok(spectrum)
}

/// The longest target name kept (characters).
const MAX_TARGET: usize = 200;

/// Clean a target name from a file: control characters and bidi overrides
/// removed ([`crate::text::clean`]), path separators and `..` replaced so that
/// a printed name never looks like a path, length capped; falls back to the
/// file stem when the file names no target. Warns when anything changed.
pub fn target_name(raw: &str, path: &Path, warnings: &mut Vec<String>) -> String {
    let from_file = !raw.trim().is_empty();
    let source = if from_file {
        raw.to_string()
    } else {
        path.file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default()
    };
    let mut name = crate::text::clean(&source);
    let mut changed = name != source;
    if name.contains(['/', '\\']) || name.contains("..") {
        name = name.replace(['/', '\\'], "_").replace("..", "_");
        changed = true;
    }
    let trimmed = name.trim().to_string();
    if trimmed.chars().count() > MAX_TARGET {
        name = trimmed.chars().take(MAX_TARGET).collect();
        changed = true;
    } else {
        name = trimmed;
    }
    if name.is_empty() {
        name = "unnamed".into();
    }
    if changed && from_file {
        warnings.push(format!(
            "target name contained control characters, path parts or excess length; shown as {name:?}"
        ));
    }
    name
}
