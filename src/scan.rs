//! The batch shell: inputs -> identifier core -> JSON Lines / CSV, with
//! worker threads, deterministic shards and a progress bar.
//!
//! Main types:
//! - [`find_inputs`] turns files and directories into the sorted input list;
//!   [`Shard`] picks one contiguous slice of it.
//! - [`Record`] is one output object (the JSON Lines contract, field by
//!   field); [`record_ok`] and [`record_error`] build it from an
//!   [`Analysis`] or a reader error.
//! - [`Analyse`] is what the scan runs per spectrum (the
//!   [`Identifier`](crate::identify::Identifier) in production; tests inject
//!   their own).
//! - [`run`] reads, analyses and writes in input order whatever the number of
//!   threads; [`merge_shards`] joins the outputs of a sharded run.
//!
//! Shards are contiguous: shard K of N holds inputs `floor((K-1)L/N)` up to
//! (not including) `floor(KL/N)` of the sorted list of length L, so the
//! outputs of shards 1..N concatenated in K order equal the output of one
//! unsharded run, byte for byte.

use crate::identify::{Analysis, FeatureFlag, Identifier};
use crate::lines::ObjectClass;
use crate::physics::bary::BaryOverrides;
use crate::spectrum::{self, ReadOptions, Spectrum, SpectrumError};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::mpsc;

/// File extensions (lower case) searched for inside directories.
pub const EXTENSIONS: &[&str] = &["fits", "fit", "fts", "csv", "tsv", "txt", "dat"];

/// Deepest directory nesting searched (guards against pathological trees).
const MAX_DEPTH: usize = 64;

/// Errors of the batch shell itself (not of one input).
#[derive(Debug, thiserror::Error)]
pub enum ScanError {
    /// A `--shard` value that is not `K/N` with 1 <= K <= N.
    #[error("bad shard {0:?}: expected K/N with 1 <= K <= N, e.g. 2/8")]
    BadShard(String),
    /// Writing the output failed.
    #[error("writing output: {0}")]
    Write(#[from] std::io::Error),
    /// Encoding a record failed.
    #[error("encoding output: {0}")]
    Encode(String),
    /// A shard output could not be read while merging.
    #[error("{path}: {message}")]
    Merge {
        /// The shard file.
        path: PathBuf,
        /// What went wrong.
        message: String,
    },
}

/// One of N deterministic slices of the sorted input list (K from 1).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// Which slice, 1-based.
    pub k: usize,
    /// How many slices.
    pub n: usize,
}

impl std::str::FromStr for Shard {
    type Err = ScanError;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let bad = || ScanError::BadShard(crate::text::clean(s));
        let (k, n) = s.split_once('/').ok_or_else(bad)?;
        let k: usize = k.trim().parse().map_err(|_| bad())?;
        let n: usize = n.trim().parse().map_err(|_| bad())?;
        if k == 0 || n == 0 || k > n {
            return Err(bad());
        }
        Ok(Shard { k, n })
    }
}

impl Shard {
    /// The index range of this shard within a list of `len` inputs.
    pub fn range(&self, len: usize) -> std::ops::Range<usize> {
        let lo = (self.k - 1) as u128 * len as u128 / self.n as u128;
        let hi = self.k as u128 * len as u128 / self.n as u128;
        lo as usize..hi as usize
    }

    /// This shard's part of `inputs` (which must already be sorted).
    pub fn select<T: Clone>(&self, inputs: &[T]) -> Vec<T> {
        inputs[self.range(inputs.len())].to_vec()
    }
}

/// Expand files and directories into the sorted, de-duplicated input list.
///
/// Files named explicitly are always taken (their content decides the
/// format). Directories are searched recursively for files whose extension is
/// one of [`EXTENSIONS`] (any case); hidden entries (names starting with `.`)
/// and symbolic links to directories are skipped. A path that does not exist
/// is kept, so that it is reported as a rejected input.
pub fn find_inputs(inputs: &[PathBuf]) -> Vec<PathBuf> {
    let mut out = Vec::new();
    for p in inputs {
        if p.is_dir() {
            walk(p, 0, &mut out);
        } else {
            out.push(p.clone());
        }
    }
    out.sort();
    out.dedup();
    out
}

fn walk(dir: &Path, depth: usize, out: &mut Vec<PathBuf>) {
    if depth > MAX_DEPTH {
        return;
    }
    let Ok(entries) = std::fs::read_dir(dir) else {
        // An unreadable directory is kept as an input so that it is reported.
        out.push(dir.to_path_buf());
        return;
    };
    for e in entries.flatten() {
        let name = e.file_name();
        if name.to_string_lossy().starts_with('.') {
            continue;
        }
        let path = e.path();
        let Ok(ft) = e.file_type() else { continue };
        if ft.is_dir() {
            walk(&path, depth + 1, out);
        } else if (ft.is_file() || ft.is_symlink() && path.is_file())
            && path
                .extension()
                .and_then(|x| x.to_str())
                .is_some_and(|x| EXTENSIONS.contains(&x.to_ascii_lowercase().as_str()))
        {
            out.push(path);
        }
    }
}

/// What the scan runs on each spectrum.
pub trait Analyse: Sync {
    /// Analyse one spectrum.
    fn analyse(&self, spectrum: &Spectrum) -> Analysis;
}

impl Analyse for Identifier {
    fn analyse(&self, spectrum: &Spectrum) -> Analysis {
        Identifier::analyse(self, spectrum)
    }
}

impl<F: Fn(&Spectrum) -> Analysis + Sync> Analyse for F {
    fn analyse(&self, spectrum: &Spectrum) -> Analysis {
        self(spectrum)
    }
}

/// A detected line in the output (observed frame, vacuum Angstrom).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LineOut {
    /// Fitted centre.
    pub wavelength: f64,
    /// 1-sigma error of the centre.
    pub wavelength_err: f64,
    /// `emission` or `absorption`.
    pub kind: String,
    /// S/N of the fitted line.
    pub snr: f64,
    /// FWHM, km/s.
    pub fwhm_kms: f64,
    /// Integrated flux (flux units x Angstrom).
    pub flux: f64,
    /// Observed-frame equivalent width, Angstrom (negative = emission).
    pub ew: f64,
    /// `null`, or why the feature is not the target's: `sky` (night-sky
    /// line), `telluric` (atmospheric absorption band), `spike` (narrower than
    /// the instrument allows: cosmic ray or bad pixel).
    pub feature: Option<String>,
}

/// A matched catalogue line in the output.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MatchOut {
    /// Catalogue line name.
    pub line: String,
    /// Rest vacuum wavelength, Angstrom.
    pub rest_wavelength: f64,
    /// Observed vacuum wavelength, Angstrom.
    pub observed_wavelength: f64,
    /// Velocity offset from the candidate redshift, km/s.
    pub offset_kms: f64,
}

/// A redshift candidate in the output.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CandidateOut {
    /// 1 = best.
    pub rank: usize,
    /// Redshift (topocentric, as observed).
    pub z: f64,
    /// 1-sigma error of z.
    pub z_err: f64,
    /// Velocity from z, km/s (relativistic).
    pub velocity_kms: f64,
    /// `star`, `galaxy`, `qso` or `unknown`.
    pub class: String,
    /// Subclass, if the evidence supports one.
    pub subclass: Option<String>,
    /// Score (higher is better; comparable within one spectrum).
    pub score: f64,
    /// `high`, `good`, `fair` or `poor`.
    pub grade: String,
    /// Short human-readable reason.
    pub reason: String,
    /// Matched lines.
    pub matched: Vec<MatchOut>,
    /// Barycentric redshift; `null` until the correction is computable.
    pub z_bary: Option<f64>,
    /// Barycentric velocity, km/s; `null` until the correction is computable.
    pub velocity_bary_kms: Option<f64>,
}

/// One output record for an input that was read and analysed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OkRecord {
    /// Target name (cleaned: no control characters, no path parts).
    pub target: String,
    /// The input path as given (cleaned).
    pub path: String,
    /// Always `ok`.
    pub status: String,
    /// `air` or `vacuum`: the medium the wavelengths were taken to be in.
    pub medium: String,
    /// Number of pixels.
    pub pixels: usize,
    /// Lowest wavelength, vacuum Angstrom.
    pub wavelength_min: f64,
    /// Highest wavelength, vacuum Angstrom.
    pub wavelength_max: f64,
    /// Median continuum S/N per pixel.
    pub snr: f64,
    /// Barycentric correction, km/s; `null` when not computable.
    pub barycentric_correction_kms: Option<f64>,
    /// Detected lines.
    pub lines: Vec<LineOut>,
    /// Ranked candidates, best first.
    pub candidates: Vec<CandidateOut>,
    /// Reader and identifier warnings.
    pub warnings: Vec<String>,
}

/// One output record for an input that was rejected.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ErrorRecord {
    /// Target name, from the file name (cleaned).
    pub target: String,
    /// The input path as given (cleaned).
    pub path: String,
    /// Always `error`.
    pub status: String,
    /// What is wrong, and where (cleaned).
    pub error: String,
}

/// One output object per input (the JSON Lines contract).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum Record {
    /// Read and analysed.
    Ok(Box<OkRecord>),
    /// Rejected.
    Error(ErrorRecord),
}

impl Record {
    /// True for a rejected input.
    pub fn is_error(&self) -> bool {
        matches!(self, Record::Error(_))
    }

    /// The class of the rank-1 candidate (`None` for errors).
    pub fn class(&self) -> Option<&str> {
        match self {
            Record::Ok(r) => Some(
                r.candidates
                    .first()
                    .map(|c| c.class.as_str())
                    .unwrap_or(ObjectClass::Unknown.as_str()),
            ),
            Record::Error(_) => None,
        }
    }
}

fn display_path(path: &Path) -> String {
    crate::text::clean(&path.to_string_lossy())
}

/// What the scan needs besides the analyser: how to read the files and what
/// the user supplied for the barycentric correction.
#[derive(Debug, Clone, Default)]
pub struct Options {
    /// Reader options (medium of undeclared files).
    pub read: ReadOptions,
    /// Time, coordinates and site supplied by the user, and the configured
    /// named sites (`BaryOverrides::replace` says whether they win over the
    /// files' own values or only fill gaps).
    pub bary: BaryOverrides,
}

/// Build the output record of an analysed spectrum; `bary` is what the user
/// supplied for the barycentric correction (the default: the file alone).
pub fn record_ok(
    path: &Path,
    spectrum: &Spectrum,
    analysis: &Analysis,
    bary: &BaryOverrides,
) -> Record {
    // Barycentric correction from the file's metadata and the user's values;
    // when it cannot be made, the fields stay null and a warning says what is
    // missing.
    let bary = crate::physics::bary::compute(&spectrum.meta, bary);
    let (corr, bary_warning) = match &bary {
        Ok(c) => (Some(c.kms), None),
        Err(e) => (None, Some(e.to_string())),
    };
    let lines = analysis
        .features
        .iter()
        .map(|f| LineOut {
            wavelength: f.wavelength,
            wavelength_err: f.wavelength_err,
            kind: match f.kind {
                crate::identify::FeatureKind::Emission => "emission".into(),
                crate::identify::FeatureKind::Absorption => "absorption".into(),
            },
            snr: f.snr,
            fwhm_kms: f.fwhm_kms,
            flux: f.flux,
            ew: f.ew,
            feature: f.flag.map(|g| {
                match g {
                    FeatureFlag::Sky => "sky",
                    FeatureFlag::Telluric => "telluric",
                    FeatureFlag::Spike => "spike",
                }
                .to_string()
            }),
        })
        .collect();
    let candidates = analysis
        .candidates
        .iter()
        .map(|c| {
            let (z_bary, velocity_bary_kms) = crate::physics::bary::corrected(c.z, corr);
            CandidateOut {
                rank: c.rank,
                z: c.z,
                z_err: c.z_err,
                velocity_kms: c.velocity_kms,
                class: c.class.as_str().into(),
                subclass: c.subclass.as_deref().map(crate::text::clean),
                score: c.score,
                grade: c.grade.as_str().into(),
                reason: crate::text::clean(&c.reason),
                matched: c
                    .matched
                    .iter()
                    .map(|m| MatchOut {
                        line: m.line.clone(),
                        rest_wavelength: m.rest_wavelength,
                        observed_wavelength: m.observed_wavelength,
                        offset_kms: m.offset_kms,
                    })
                    .collect(),
                z_bary,
                velocity_bary_kms,
            }
        })
        .collect();
    let warnings = spectrum
        .meta
        .warnings
        .iter()
        .chain(&analysis.warnings)
        .chain(bary_warning.as_ref())
        .map(|w| crate::text::clean(w))
        .collect();
    Record::Ok(Box::new(OkRecord {
        target: spectrum.meta.target.clone(),
        path: display_path(path),
        status: "ok".into(),
        medium: spectrum
            .meta
            .medium_used
            .unwrap_or(spectrum::Medium::Vacuum)
            .as_str()
            .into(),
        pixels: spectrum.len(),
        wavelength_min: spectrum.wave.first().copied().unwrap_or(f64::NAN),
        wavelength_max: spectrum.wave.last().copied().unwrap_or(f64::NAN),
        snr: analysis.noise.median_snr,
        barycentric_correction_kms: corr,
        lines,
        candidates,
        warnings,
    }))
}

/// Build the output record of a rejected input.
pub fn record_error(path: &Path, message: &str) -> Record {
    let mut ignored = Vec::new();
    Record::Error(ErrorRecord {
        target: spectrum::assemble::target_name("", path, &mut ignored),
        path: display_path(path),
        status: "error".into(),
        error: crate::text::clean(message),
    })
}

/// Read and analyse one input; never panics (a panic inside the analysis is
/// caught and reported as an internal error for that input).
pub fn process(path: &Path, analyser: &dyn Analyse, opts: &Options) -> Record {
    let spectrum = match spectrum::read(path, &opts.read) {
        Ok(s) => s,
        Err(e) => return record_error(path, &error_text(&e)),
    };
    match std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| analyser.analyse(&spectrum))) {
        Ok(a) => record_ok(path, &spectrum, &a, &opts.bary),
        Err(_) => record_error(
            path,
            &format!(
                "{}: internal error in the identifier (please report it with this file)",
                path.display()
            ),
        ),
    }
}

fn error_text(e: &SpectrumError) -> String {
    e.to_string()
}

/// Output format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Format {
    /// One JSON object per line.
    #[default]
    Jsonl,
    /// One CSV row per input with the rank-1 answer.
    Csv,
}

/// The columns of the CSV form.
pub const CSV_HEADER: &[&str] = &[
    "target",
    "path",
    "status",
    "medium",
    "pixels",
    "wavelength_min",
    "wavelength_max",
    "snr",
    "class",
    "subclass",
    "z",
    "z_err",
    "velocity_kms",
    "score",
    "grade",
    "matched",
    "lines",
    "candidates",
    "barycentric_correction_kms",
    "z_bary",
    "error",
];

fn num(x: f64) -> String {
    if x.is_finite() {
        x.to_string()
    } else {
        String::new()
    }
}

fn opt(x: Option<f64>) -> String {
    x.map(num).unwrap_or_default()
}

/// The CSV row of a record (see [`CSV_HEADER`]).
pub fn csv_row(r: &Record) -> Vec<String> {
    match r {
        Record::Ok(r) => {
            let c = r.candidates.first();
            vec![
                r.target.clone(),
                r.path.clone(),
                r.status.clone(),
                r.medium.clone(),
                r.pixels.to_string(),
                num(r.wavelength_min),
                num(r.wavelength_max),
                num(r.snr),
                c.map(|c| c.class.clone())
                    .unwrap_or_else(|| "unknown".into()),
                c.and_then(|c| c.subclass.clone()).unwrap_or_default(),
                c.map(|c| num(c.z)).unwrap_or_default(),
                c.map(|c| num(c.z_err)).unwrap_or_default(),
                c.map(|c| num(c.velocity_kms)).unwrap_or_default(),
                c.map(|c| num(c.score)).unwrap_or_default(),
                c.map(|c| c.grade.clone()).unwrap_or_default(),
                c.map(|c| {
                    c.matched
                        .iter()
                        .map(|m| m.line.as_str())
                        .collect::<Vec<_>>()
                        .join(";")
                })
                .unwrap_or_default(),
                r.lines.len().to_string(),
                r.candidates.len().to_string(),
                opt(r.barycentric_correction_kms),
                c.map(|c| opt(c.z_bary)).unwrap_or_default(),
                String::new(),
            ]
        }
        Record::Error(e) => {
            let mut row = vec![String::new(); CSV_HEADER.len()];
            row[0] = e.target.clone();
            row[1] = e.path.clone();
            row[2] = e.status.clone();
            row[CSV_HEADER.len() - 1] = e.error.clone();
            row
        }
    }
}

/// Writes records in one of the formats.
pub enum Writer {
    /// JSON Lines.
    Jsonl(Box<dyn Write>),
    /// CSV (header written on creation).
    Csv(Box<csv::Writer<Box<dyn Write>>>),
}

impl Writer {
    /// A writer of `format` into `out`; the CSV form writes its header row at once.
    pub fn new(format: Format, out: Box<dyn Write>) -> Result<Writer, ScanError> {
        Ok(match format {
            Format::Jsonl => Writer::Jsonl(out),
            Format::Csv => {
                let mut w = csv::Writer::from_writer(out);
                w.write_record(CSV_HEADER)
                    .map_err(|e| ScanError::Encode(e.to_string()))?;
                Writer::Csv(Box::new(w))
            }
        })
    }

    /// Write one record.
    pub fn write(&mut self, r: &Record) -> Result<(), ScanError> {
        match self {
            Writer::Jsonl(out) => {
                let line =
                    serde_json::to_string(r).map_err(|e| ScanError::Encode(e.to_string()))?;
                out.write_all(line.as_bytes())?;
                out.write_all(b"\n")?;
            }
            Writer::Csv(w) => w
                .write_record(csv_row(r))
                .map_err(|e| ScanError::Encode(e.to_string()))?,
        }
        Ok(())
    }

    /// Flush everything written so far.
    pub fn flush(&mut self) -> Result<(), ScanError> {
        match self {
            Writer::Jsonl(out) => out.flush()?,
            Writer::Csv(w) => w.flush()?,
        }
        Ok(())
    }
}

/// Totals of one run.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Summary {
    /// Inputs read and analysed.
    pub read: usize,
    /// Inputs rejected.
    pub rejected: usize,
    /// Rank-1 class -> count, for the read inputs.
    pub by_class: BTreeMap<String, usize>,
    /// Wall-clock seconds.
    pub seconds: f64,
}

impl Summary {
    /// The one-line summary printed at the end of a run.
    pub fn line(&self) -> String {
        let classes: Vec<String> = self
            .by_class
            .iter()
            .map(|(k, v)| format!("{k} {v}"))
            .collect();
        let total = self.read + self.rejected;
        let rate = if self.seconds > 0.0 {
            total as f64 / self.seconds
        } else {
            0.0
        };
        format!(
            "scanned {total}: {} read, {} rejected{}{} in {:.1} s ({rate:.0} spectra/s)",
            self.read,
            self.rejected,
            if classes.is_empty() { "" } else { "; " },
            classes.join(", "),
            self.seconds
        )
    }
}

/// Run the scan over `inputs` (already expanded and sharded) with `jobs`
/// worker threads, handing each record to `emit` in input order whatever the
/// thread count, and calling `tick` once per finished input (for progress).
pub fn run(
    inputs: &[PathBuf],
    analyser: &dyn Analyse,
    opts: &Options,
    jobs: usize,
    mut emit: impl FnMut(&Record) -> Result<(), ScanError>,
    tick: &(dyn Fn(&Record) + Sync),
) -> Result<Summary, ScanError> {
    let start = std::time::Instant::now();
    let mut summary = Summary::default();
    let account = |r: &Record, summary: &mut Summary| {
        if r.is_error() {
            summary.rejected += 1;
        } else {
            summary.read += 1;
            if let Some(c) = r.class() {
                *summary.by_class.entry(c.to_string()).or_default() += 1;
            }
        }
    };
    let jobs = jobs.clamp(1, inputs.len().max(1));
    if jobs == 1 {
        for p in inputs {
            let r = process(p, analyser, opts);
            tick(&r);
            account(&r, &mut summary);
            emit(&r)?;
        }
    } else {
        let next = AtomicUsize::new(0);
        let (tx, rx) = mpsc::sync_channel::<(usize, Record)>(jobs * 4);
        let result = std::thread::scope(|scope| -> Result<(), ScanError> {
            for _ in 0..jobs {
                let tx = tx.clone();
                let next = &next;
                scope.spawn(move || {
                    loop {
                        let i = next.fetch_add(1, Ordering::Relaxed);
                        if i >= inputs.len() {
                            break;
                        }
                        let r = process(&inputs[i], analyser, opts);
                        tick(&r);
                        if tx.send((i, r)).is_err() {
                            break;
                        }
                    }
                });
            }
            drop(tx);
            // Re-order: write record i as soon as all before it are written.
            let mut pending: BTreeMap<usize, Record> = BTreeMap::new();
            let mut want = 0usize;
            let mut failure = None;
            for (i, r) in rx.iter() {
                pending.insert(i, r);
                while let Some(r) = pending.remove(&want) {
                    account(&r, &mut summary);
                    if failure.is_none()
                        && let Err(e) = emit(&r)
                    {
                        failure = Some(e);
                        // Stop the workers: they see the index past the end.
                        next.store(inputs.len(), Ordering::Relaxed);
                    }
                    want += 1;
                }
            }
            match failure {
                Some(e) => Err(e),
                None => Ok(()),
            }
        });
        result?;
    }
    summary.seconds = start.elapsed().as_secs_f64();
    Ok(summary)
}

/// Join the JSON Lines outputs of shards 1..N (given in any order as
/// `(K, path)` pairs) into `out`, in shard order; fails unless the shard
/// numbers are exactly 1..N. Because shards are contiguous slices of the
/// sorted input list, the result equals one unsharded run.
pub fn merge_shards(parts: &[(usize, PathBuf)], out: &mut dyn Write) -> Result<usize, ScanError> {
    let mut sorted: Vec<&(usize, PathBuf)> = parts.iter().collect();
    sorted.sort_by_key(|(k, _)| *k);
    for (i, (k, p)) in sorted.iter().enumerate() {
        if *k != i + 1 {
            return Err(ScanError::Merge {
                path: p.clone(),
                message: format!("shard numbers must be 1..{} with none missing", parts.len()),
            });
        }
    }
    let mut lines = 0;
    for (_, p) in sorted {
        let text = std::fs::read_to_string(p).map_err(|e| ScanError::Merge {
            path: p.clone(),
            message: e.to_string(),
        })?;
        for (n, line) in text.lines().enumerate() {
            if line.trim().is_empty() {
                continue;
            }
            serde_json::from_str::<serde_json::Value>(line).map_err(|e| ScanError::Merge {
                path: p.clone(),
                message: format!("line {}: not a JSON record ({e})", n + 1),
            })?;
            out.write_all(line.as_bytes())?;
            out.write_all(b"\n")?;
            lines += 1;
        }
    }
    Ok(lines)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shards_partition_any_list_exactly_once() {
        for len in 0..40 {
            for n in 1..9 {
                let mut seen = vec![0; len];
                for k in 1..=n {
                    for i in (Shard { k, n }).range(len) {
                        seen[i] += 1;
                    }
                }
                assert!(seen.iter().all(|c| *c == 1), "len {len} n {n}");
            }
        }
    }

    #[test]
    fn shard_values_are_parsed_strictly() {
        assert_eq!("2/3".parse::<Shard>().ok(), Some(Shard { k: 2, n: 3 }));
        for bad in ["0/3", "4/3", "3", "a/b", "1/0", ""] {
            assert!(bad.parse::<Shard>().is_err(), "{bad}");
        }
    }
}
