//! Reading a `zsift scan` JSON Lines output, tolerantly: only the fields the
//! queue and bulk acceptance need are read, extra fields are ignored, and a
//! bad line is reported with its number while the rest is still used.

use super::QueueError;
use crate::identify::Grade;
use crate::lines::ObjectClass;
use serde::Deserialize;
use std::io::BufRead;
use std::path::{Path, PathBuf};

/// One candidate as the scan reported it.
#[derive(Debug, Clone, PartialEq)]
pub struct CandidateSummary {
    /// Rank (1 = best).
    pub rank: u32,
    /// Redshift.
    pub z: f64,
    /// Its error.
    pub z_err: Option<f64>,
    /// Velocity, km/s.
    pub velocity_kms: Option<f64>,
    /// Class (`None` when the scan named one this version does not know).
    pub class: Option<ObjectClass>,
    /// Subclass.
    pub subclass: Option<String>,
    /// Score.
    pub score: Option<f64>,
    /// Trust grade (`None` when absent or unknown).
    pub grade: Option<Grade>,
    /// The scan's reason text.
    pub reason: Option<String>,
    /// Names of the matched lines.
    pub lines: Vec<String>,
    /// Barycentric redshift.
    pub z_bary: Option<f64>,
    /// Barycentric velocity, km/s.
    pub velocity_bary_kms: Option<f64>,
}

/// The batch answer for one input.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ScanSummary {
    /// True when the scan read and analysed the file (`"status": "ok"`).
    pub ok: bool,
    /// The scan's error text when it did not.
    pub error: Option<String>,
    /// Median continuum S/N.
    pub snr: Option<f64>,
    /// Candidates, best first.
    pub candidates: Vec<CandidateSummary>,
    /// Warnings.
    pub warnings: Vec<String>,
    /// Barycentric correction, km/s.
    pub barycentric_correction_kms: Option<f64>,
}

impl ScanSummary {
    /// The rank-1 candidate.
    pub fn best(&self) -> Option<&CandidateSummary> {
        self.candidates.iter().min_by_key(|c| c.rank)
    }
}

/// One usable line of a scan file.
#[derive(Debug, Clone, PartialEq)]
pub struct ScanEntry {
    /// 1-based line number in the scan file.
    pub line: usize,
    /// Target name (the scan's, else the file stem).
    pub target: String,
    /// Input path, resolved (see [`read_scan`]).
    pub path: PathBuf,
    /// The answer.
    pub summary: ScanSummary,
}

/// A scan file read back.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ScanFile {
    /// Usable lines, in file order.
    pub entries: Vec<ScanEntry>,
    /// Unusable lines: (1-based line number, why).
    pub problems: Vec<(usize, String)>,
}

#[derive(Deserialize)]
struct RawLine {
    #[serde(default)]
    target: Option<String>,
    #[serde(default)]
    path: Option<String>,
    #[serde(default)]
    status: Option<String>,
    #[serde(default)]
    error: Option<String>,
    #[serde(default)]
    snr: Option<f64>,
    #[serde(default)]
    candidates: Option<Vec<RawCandidate>>,
    #[serde(default)]
    warnings: Option<Vec<String>>,
    #[serde(default)]
    barycentric_correction_kms: Option<f64>,
}

#[derive(Deserialize)]
struct RawCandidate {
    #[serde(default)]
    rank: Option<u32>,
    #[serde(default)]
    z: Option<f64>,
    #[serde(default)]
    z_err: Option<f64>,
    #[serde(default)]
    velocity_kms: Option<f64>,
    #[serde(default)]
    class: Option<String>,
    #[serde(default)]
    subclass: Option<String>,
    #[serde(default)]
    score: Option<f64>,
    #[serde(default)]
    grade: Option<String>,
    #[serde(default)]
    reason: Option<String>,
    #[serde(default)]
    matched: Option<Vec<RawMatch>>,
    #[serde(default)]
    z_bary: Option<f64>,
    #[serde(default)]
    velocity_bary_kms: Option<f64>,
}

#[derive(Deserialize)]
struct RawMatch {
    #[serde(default)]
    line: Option<String>,
}

/// Parse a grade name (`high`, `good`, `fair`, `poor`, any case).
pub fn parse_grade(s: &str) -> Option<Grade> {
    match s.trim().to_ascii_lowercase().as_str() {
        "high" => Some(Grade::High),
        "good" => Some(Grade::Good),
        "fair" => Some(Grade::Fair),
        "poor" => Some(Grade::Poor),
        _ => None,
    }
}

/// Parse a class name (`star`, `galaxy`, `qso`, `unknown`, any case).
pub fn parse_class(s: &str) -> Option<ObjectClass> {
    match s.trim().to_ascii_lowercase().as_str() {
        "star" => Some(ObjectClass::Star),
        "galaxy" => Some(ObjectClass::Galaxy),
        "qso" => Some(ObjectClass::Qso),
        "unknown" => Some(ObjectClass::Unknown),
        _ => None,
    }
}

/// Parse one scan line; `Err` says why it is unusable.
pub(crate) fn parse_scan_line(text: &str, base: &Path) -> Result<ScanEntry, String> {
    let raw: RawLine = serde_json::from_str(text).map_err(|e| format!("not a scan record: {e}"))?;
    let path_text = raw.path.filter(|p| !p.is_empty());
    let stem = path_text
        .as_deref()
        .and_then(|p| Path::new(p).file_stem())
        .map(|s| s.to_string_lossy().into_owned());
    let target = raw
        .target
        .filter(|t| !t.trim().is_empty())
        .or(stem)
        .ok_or_else(|| "neither \"target\" nor \"path\" is given".to_string())?;
    let path = path_text
        .map(|p| resolve(base, Path::new(&p)))
        .unwrap_or_default();
    let ok = raw.status.as_deref().map(|s| s == "ok").unwrap_or(false);
    let mut candidates: Vec<CandidateSummary> = Vec::new();
    for (i, c) in raw.candidates.unwrap_or_default().into_iter().enumerate() {
        let Some(z) = c.z.filter(|z| z.is_finite()) else {
            continue;
        };
        candidates.push(CandidateSummary {
            rank: c.rank.unwrap_or(i as u32 + 1),
            z,
            z_err: c.z_err,
            velocity_kms: c.velocity_kms,
            class: c.class.as_deref().and_then(parse_class),
            subclass: c.subclass,
            score: c.score,
            grade: c.grade.as_deref().and_then(parse_grade),
            reason: c.reason,
            lines: c
                .matched
                .unwrap_or_default()
                .into_iter()
                .filter_map(|m| m.line)
                .collect(),
            z_bary: c.z_bary,
            velocity_bary_kms: c.velocity_bary_kms,
        });
    }
    candidates.sort_by_key(|c| c.rank);
    Ok(ScanEntry {
        line: 0,
        target,
        path,
        summary: ScanSummary {
            ok,
            error: raw.error,
            snr: raw.snr.filter(|s| s.is_finite()),
            candidates,
            warnings: raw.warnings.unwrap_or_default(),
            barycentric_correction_kms: raw.barycentric_correction_kms,
        },
    })
}

/// Relative input paths are taken relative to the scan (or queue) file's
/// folder when a file exists there, else left as they are (relative to the
/// working folder, where the scan most likely ran).
pub(crate) fn resolve(base: &Path, p: &Path) -> PathBuf {
    if p.is_absolute() {
        return p.to_path_buf();
    }
    let beside = base.join(p);
    if beside.exists() || !p.exists() {
        beside
    } else {
        p.to_path_buf()
    }
}

/// Read a scan JSON Lines file. Blank lines are skipped; a line that is not
/// a scan record is listed in [`ScanFile::problems`] with its number.
///
/// # Errors
/// [`QueueError::Read`] when the file cannot be opened or read.
pub fn read_scan(path: &Path) -> Result<ScanFile, QueueError> {
    let f = std::fs::File::open(path).map_err(|source| QueueError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    let base = path.parent().unwrap_or(Path::new("")).to_path_buf();
    let mut out = ScanFile::default();
    let mut reader = std::io::BufReader::new(f);
    let mut buf = Vec::new();
    let mut n = 0usize;
    loop {
        buf.clear();
        let got = reader
            .read_until(b'\n', &mut buf)
            .map_err(|source| QueueError::Read {
                path: path.to_path_buf(),
                source,
            })?;
        if got == 0 {
            break;
        }
        n += 1;
        let text = String::from_utf8_lossy(&buf);
        let text = text.trim();
        if text.is_empty() {
            continue;
        }
        match parse_scan_line(text, &base) {
            Ok(mut e) => {
                e.line = n;
                out.entries.push(e);
            }
            Err(why) => out.problems.push((n, why)),
        }
    }
    Ok(out)
}
