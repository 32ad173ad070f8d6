//! The [`Spectrum`] model every later layer reads, and the readers that build it.
//!
//! Wavelengths are always vacuum Angstrom, strictly increasing. Readers convert
//! units and medium at the edge (see [`crate::physics::airvac`]), record what
//! the file declared in [`Metadata`], and never drop pixels silently: bad ones
//! are masked.

use serde::{Deserialize, Serialize};
use std::io::Read;
use std::path::{Path, PathBuf};

pub mod assemble;
pub mod columns;
pub mod detect;
pub mod fits;
pub mod text;

pub use assemble::MIN_PIXELS;

/// Largest file accepted (bytes). Real 1-D spectra are far smaller; the cap
/// keeps a mistaken input (an image cube, a disk image) from filling memory.
pub const MAX_FILE_BYTES: u64 = 256 * 1024 * 1024;

/// The medium in which wavelengths were measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Medium {
    /// Standard air (IAU convention, Morton 2000).
    Air,
    /// Vacuum.
    Vacuum,
}

impl Medium {
    /// The lower-case name used in output (`air`, `vacuum`).
    pub fn as_str(self) -> &'static str {
        match self {
            Medium::Air => "air",
            Medium::Vacuum => "vacuum",
        }
    }
}

/// What the user asked for files that do not declare their medium.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum MediumChoice {
    /// Use what the file declares; when it declares nothing, use the reader's
    /// documented default (see the contributor guide) and warn.
    #[default]
    Auto,
    /// Treat undeclared files as air wavelengths.
    Air,
    /// Treat undeclared files as vacuum wavelengths.
    Vacuum,
}

/// Options for the readers.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// Medium for files that do not declare one.
    pub medium: MediumChoice,
}

/// The file layout a spectrum was read from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Layout {
    /// FITS image HDU with a spectral WCS (1-D, or 2-D rows of flux/error/sky).
    FitsImage,
    /// FITS binary table HDU.
    FitsTable,
    /// Delimited text (CSV, TSV, whitespace columns).
    Text,
}

/// Where the observatory is, as far as the file (or the user) says.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Site {
    /// Geocentric ITRS position in metres (OBSGEO-X/Y/Z).
    pub geocentric_m: Option<[f64; 3]>,
    /// Geodetic east longitude in degrees.
    pub longitude_deg: Option<f64>,
    /// Geodetic latitude in degrees.
    pub latitude_deg: Option<f64>,
    /// Height above the WGS84 ellipsoid in metres.
    pub height_m: Option<f64>,
    /// A site name, resolved against the user's configured sites.
    pub name: Option<String>,
}

/// Everything known about a spectrum besides its pixels.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Metadata {
    /// Target name, already stripped of control characters.
    pub target: String,
    /// Right ascension in degrees.
    pub ra_deg: Option<f64>,
    /// Declination in degrees.
    pub dec_deg: Option<f64>,
    /// Equinox / epoch of the coordinates in years (e.g. 2000.0).
    pub equinox: Option<f64>,
    /// DATE-OBS as written (ISO 8601), cleaned.
    pub date_obs: Option<String>,
    /// MJD-OBS (start of exposure unless the file says otherwise).
    pub mjd_obs: Option<f64>,
    /// Time scale of the date keywords (TIMESYS), e.g. `UTC`, `TT`.
    pub time_scale: Option<String>,
    /// Exposure time in seconds.
    pub exposure_s: Option<f64>,
    /// Observatory location.
    pub site: Site,
    /// The medium the file declared, if it declared one.
    pub medium_declared: Option<Medium>,
    /// The medium the wavelengths were taken to be in before conversion to vacuum.
    pub medium_used: Option<Medium>,
    /// Wavelength unit as written in the file (e.g. `Angstrom`, `nm`).
    pub wave_unit: Option<String>,
    /// Flux unit as written in the file, if any.
    pub flux_unit: Option<String>,
    /// The file this came from.
    pub source_path: PathBuf,
    /// HDU index (0 = primary) for FITS input.
    pub hdu: Option<usize>,
    /// File layout.
    pub layout: Option<Layout>,
    /// Other header key/value pairs worth showing (cleaned).
    pub header: Vec<(String, String)>,
    /// Warnings raised while reading (cleaned, human-readable).
    pub warnings: Vec<String>,
}

/// A reduced 1-D spectrum.
///
/// Invariants (upheld by every reader and by [`Spectrum::new`]): all vectors
/// have the same length; `wave` is finite and strictly increasing, in vacuum
/// Angstrom; `mask[i]` is `false` for pixels whose flux or sigma is not finite
/// or whose inverse variance was zero.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Spectrum {
    /// Vacuum wavelengths in Angstrom, strictly increasing.
    pub wave: Vec<f64>,
    /// Flux (arbitrary or physical units, see [`Metadata::flux_unit`]).
    pub flux: Vec<f64>,
    /// 1-sigma flux uncertainty, when the file has one.
    pub sigma: Option<Vec<f64>>,
    /// Good-pixel mask: `true` where the pixel may be used.
    pub mask: Vec<bool>,
    /// Sky spectrum, when the file has one.
    pub sky: Option<Vec<f64>>,
    /// Everything else.
    pub meta: Metadata,
}

/// Why a spectrum could not be built or read.
#[derive(Debug, thiserror::Error)]
pub enum SpectrumError {
    /// The file could not be opened or read.
    #[error("{path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
    /// The content is malformed; `place` says where (line/column, HDU/keyword).
    #[error("{path}: {place}: {message}")]
    Malformed {
        /// The file.
        path: PathBuf,
        /// Where in the file, e.g. `line 12, column 3` or `HDU 1, keyword CDELT1`.
        place: String,
        /// What is wrong.
        message: String,
    },
    /// The file is not in any format zsift reads.
    #[error("{path}: not a spectrum zsift can read: {message}")]
    Unsupported {
        /// The file.
        path: PathBuf,
        /// Why.
        message: String,
    },
    /// The arrays violate the model's invariants (e.g. from a caller building one).
    #[error("invalid spectrum: {0}")]
    Invalid(String),
}

impl Spectrum {
    /// Number of pixels.
    pub fn len(&self) -> usize {
        self.wave.len()
    }

    /// True when there are no pixels.
    pub fn is_empty(&self) -> bool {
        self.wave.is_empty()
    }

    /// Build a spectrum from vacuum wavelengths and flux (and optional sigma),
    /// checking the invariants and masking non-finite pixels.
    pub fn new(
        wave: Vec<f64>,
        flux: Vec<f64>,
        sigma: Option<Vec<f64>>,
        meta: Metadata,
    ) -> Result<Spectrum, SpectrumError> {
        if wave.len() != flux.len() {
            return Err(SpectrumError::Invalid(format!(
                "{} wavelengths but {} flux values",
                wave.len(),
                flux.len()
            )));
        }
        if let Some(s) = &sigma
            && s.len() != wave.len()
        {
            return Err(SpectrumError::Invalid(format!(
                "{} wavelengths but {} sigma values",
                wave.len(),
                s.len()
            )));
        }
        for (i, w) in wave.iter().enumerate() {
            if !w.is_finite() {
                return Err(SpectrumError::Invalid(format!(
                    "wavelength {i} is not finite"
                )));
            }
            if i > 0 && *w <= wave[i - 1] {
                return Err(SpectrumError::Invalid(format!(
                    "wavelength {i} ({w}) is not greater than the one before ({})",
                    wave[i - 1]
                )));
            }
        }
        let mask = (0..wave.len())
            .map(|i| {
                flux[i].is_finite()
                    && sigma
                        .as_ref()
                        .is_none_or(|s| s[i].is_finite() && s[i] > 0.0)
            })
            .collect();
        Ok(Spectrum {
            wave,
            flux,
            sigma,
            mask,
            sky: None,
            meta,
        })
    }
}

/// Read a spectrum from `path`, detecting the format by content.
///
/// Files larger than [`MAX_FILE_BYTES`] are refused before reading.
pub fn read(path: &Path, opts: &ReadOptions) -> Result<Spectrum, SpectrumError> {
    let io = |source| SpectrumError::Io {
        path: path.to_path_buf(),
        source,
    };
    let file = std::fs::File::open(path).map_err(io)?;
    let len = file.metadata().map_err(io)?.len();
    if len > MAX_FILE_BYTES {
        return Err(SpectrumError::Unsupported {
            path: path.to_path_buf(),
            message: format!(
                "{len} bytes is larger than the {MAX_FILE_BYTES} bytes accepted for one spectrum"
            ),
        });
    }
    let mut bytes = Vec::with_capacity(len as usize);
    file.take(MAX_FILE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(io)?;
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(SpectrumError::Unsupported {
            path: path.to_path_buf(),
            message: format!("larger than the {MAX_FILE_BYTES} bytes accepted for one spectrum"),
        });
    }
    read_bytes(path, &bytes, opts)
}

/// Read a spectrum from the bytes of a file; `path` is only used to name the
/// source (in errors, in [`Metadata::source_path`], and as the fallback target
/// name).
pub fn read_bytes(
    path: &Path,
    bytes: &[u8],
    opts: &ReadOptions,
) -> Result<Spectrum, SpectrumError> {
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(SpectrumError::Malformed {
            path: path.to_path_buf(),
            place: "whole file".into(),
            message: "the file is empty".into(),
        });
    }
    match detect::detect(bytes) {
        Ok(detect::Format::Fits) => fits::read_bytes(path, bytes, opts),
        Ok(detect::Format::Text) => text::read_bytes(path, bytes, opts),
        Err(message) => Err(SpectrumError::Unsupported {
            path: path.to_path_buf(),
            message,
        }),
    }
}
