//! One decision-log record: what a person (or a script) decided about one
//! target, with enough context to audit it later.
//!
//! Records are built with the constructors ([`Record::accept`],
//! [`Record::reject`], [`Record::flag`], [`Record::reclassify`],
//! [`Record::note`], [`Record::undo`]) and then refined with the `with_*`
//! builders; [`crate::decisions::Log::append`] writes one as a single JSON line.

use crate::identify::Grade;
use crate::lines::ObjectClass;
use serde::{Deserialize, Serialize};
use std::io::Read;
use std::path::Path;
use std::sync::atomic::{AtomicU64, Ordering};
use xxhash_rust::xxh3::Xxh3;

/// The record layout written by this version. Replay refuses (and reports)
/// records with any other number rather than guessing at their meaning.
pub const SCHEMA_VERSION: u32 = 1;

/// What a record does to a target.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Action {
    /// The solution is right: class and redshift accepted.
    Accept,
    /// Nothing usable in this spectrum (junk, wrong target, no signal).
    Reject,
    /// Worth observing again (too faint, ambiguous, instrument trouble).
    Flag,
    /// Accept with a class / redshift the person set, not the proposed one.
    Reclassify,
    /// A remark only; it does not change the decision.
    Note,
    /// Cancel an earlier record (named by its id); nothing is rewritten.
    Undo,
}

impl Action {
    /// Lower-case name as written in the log and accepted on the command line.
    pub fn as_str(self) -> &'static str {
        match self {
            Action::Accept => "accept",
            Action::Reject => "reject",
            Action::Flag => "flag",
            Action::Reclassify => "reclassify",
            Action::Note => "note",
            Action::Undo => "undo",
        }
    }

    /// True for the actions that set a target's verdict (accept, reject,
    /// flag, reclassify); notes and undos do not.
    pub fn is_verdict(self) -> bool {
        matches!(
            self,
            Action::Accept | Action::Reject | Action::Flag | Action::Reclassify
        )
    }
}

/// The chosen answer for a target. Every field is optional: a rejection has
/// none, a hand classification may give a class without a redshift.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct Solution {
    /// Redshift.
    #[serde(default)]
    pub z: Option<f64>,
    /// 1-sigma error of z.
    #[serde(default)]
    pub z_err: Option<f64>,
    /// Object class.
    #[serde(default)]
    pub class: Option<ObjectClass>,
    /// Subclass, free text.
    #[serde(default)]
    pub subclass: Option<String>,
    /// Trust grade of the solution (from the identifier, or the person's).
    #[serde(default)]
    pub grade: Option<Grade>,
    /// Names of the catalogue lines that support the solution.
    #[serde(default)]
    pub lines: Vec<String>,
    /// Barycentric redshift (filled when the correction is known).
    #[serde(default)]
    pub z_bary: Option<f64>,
    /// Barycentric velocity, km/s.
    #[serde(default)]
    pub velocity_bary_kms: Option<f64>,
    /// The barycentric correction applied, km/s.
    #[serde(default)]
    pub barycentric_correction_kms: Option<f64>,
}

/// Where a solution came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Source {
    /// The identifier's candidate of this rank (1 = best).
    Candidate {
        /// Candidate rank, from 1.
        rank: u32,
    },
    /// Set by the person by hand (typed, or nudged on screen).
    Hand,
}

/// Size and content hash of an input file, so replay can tell when the file
/// a decision was made on has since changed.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Fingerprint {
    /// The path as the deciding program saw it (for people; not compared).
    pub path: String,
    /// Size in bytes.
    pub bytes: u64,
    /// XXH3-64 of the whole content, 16 lower-case hex digits.
    pub xxh3: String,
}

impl Fingerprint {
    /// Fingerprint the file at `path` (reads it once, streaming).
    ///
    /// # Errors
    /// Any I/O error opening or reading the file.
    pub fn of_file(path: &Path) -> std::io::Result<Fingerprint> {
        let mut f = std::fs::File::open(path)?;
        let mut h = Xxh3::new();
        let mut buf = vec![0u8; 1 << 16];
        let mut bytes = 0u64;
        loop {
            let n = f.read(&mut buf)?;
            if n == 0 {
                break;
            }
            bytes += n as u64;
            h.update(&buf[..n]);
        }
        Ok(Fingerprint {
            path: path.display().to_string(),
            bytes,
            xxh3: format!("{:016x}", h.digest()),
        })
    }

    /// True when both fingerprints describe the same content (size and
    /// hash; the path is not compared).
    pub fn same_content(&self, other: &Fingerprint) -> bool {
        self.bytes == other.bytes && self.xxh3 == other.xxh3
    }
}

/// One line of a decision log.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Record {
    /// Layout version; see [`SCHEMA_VERSION`].
    pub schema: u32,
    /// Unique id of this record (16 hex digits), referenced by undo records.
    pub id: String,
    /// When it was recorded, UTC, RFC 3339.
    pub recorded_utc: String,
    /// Who decided.
    pub observer: String,
    /// Machine it was recorded on.
    pub host: String,
    /// The exact target name.
    pub target: String,
    /// What was decided.
    pub action: Action,
    /// The chosen answer (accept, reclassify; may be given on flag).
    #[serde(default)]
    pub solution: Option<Solution>,
    /// Where the solution came from.
    #[serde(default)]
    pub source: Option<Source>,
    /// Fingerprint of the input file the decision was made on.
    #[serde(default)]
    pub input: Option<Fingerprint>,
    /// Free-text remark.
    #[serde(default)]
    pub note: Option<String>,
    /// For undo: the id of the record it cancels.
    #[serde(default)]
    pub undoes: Option<String>,
    /// Which program wrote it (`decide`, `decide-bulk`, `review`, ...).
    #[serde(default)]
    pub via: Option<String>,
    /// zsift version that wrote it.
    pub tool_version: String,
}

static COUNTER: AtomicU64 = AtomicU64::new(0);

impl Record {
    /// A record with the common fields filled: schema, a fresh id, the
    /// current UTC time, the observer, this host and the tool version.
    pub fn new(target: &str, action: Action, observer: &str) -> Record {
        let recorded_utc = now_utc();
        let host = host_name();
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0);
        let seed = format!(
            "{nanos}\u{0}{host}\u{0}{}\u{0}{n}\u{0}{target}\u{0}{observer}",
            std::process::id()
        );
        Record {
            schema: SCHEMA_VERSION,
            id: format!("{:016x}", xxhash_rust::xxh3::xxh3_64(seed.as_bytes())),
            recorded_utc,
            observer: observer.to_string(),
            host,
            target: target.to_string(),
            action,
            solution: None,
            source: None,
            input: None,
            note: None,
            undoes: None,
            via: None,
            tool_version: crate::VERSION.to_string(),
        }
    }

    /// Accept `solution` for `target`.
    pub fn accept(target: &str, observer: &str, solution: Solution, source: Source) -> Record {
        let mut r = Record::new(target, Action::Accept, observer);
        r.solution = Some(solution);
        r.source = Some(source);
        r
    }

    /// Reject `target` (no usable answer).
    pub fn reject(target: &str, observer: &str) -> Record {
        Record::new(target, Action::Reject, observer)
    }

    /// Flag `target` for re-observation.
    pub fn flag(target: &str, observer: &str) -> Record {
        Record::new(target, Action::Flag, observer)
    }

    /// Accept a class / redshift set by the person (source: by hand).
    pub fn reclassify(target: &str, observer: &str, solution: Solution) -> Record {
        let mut r = Record::new(target, Action::Reclassify, observer);
        r.solution = Some(solution);
        r.source = Some(Source::Hand);
        r
    }

    /// A remark on `target`.
    pub fn note(target: &str, observer: &str, text: &str) -> Record {
        let mut r = Record::new(target, Action::Note, observer);
        r.note = Some(text.to_string());
        r
    }

    /// Cancel the record with id `undoes` on `target`.
    pub fn undo(target: &str, observer: &str, undoes: &str) -> Record {
        let mut r = Record::new(target, Action::Undo, observer);
        r.undoes = Some(undoes.to_string());
        r
    }

    /// Attach a remark.
    pub fn with_note(mut self, text: &str) -> Record {
        self.note = Some(text.to_string());
        self
    }

    /// Attach the input file's fingerprint.
    pub fn with_input(mut self, fingerprint: Fingerprint) -> Record {
        self.input = Some(fingerprint);
        self
    }

    /// Attach (or replace) the solution and its source.
    pub fn with_solution(mut self, solution: Solution, source: Source) -> Record {
        self.solution = Some(solution);
        self.source = Some(source);
        self
    }

    /// Name the program that wrote the record.
    pub fn with_via(mut self, via: &str) -> Record {
        self.via = Some(via.to_string());
        self
    }

    /// The record as one JSON line, newline included.
    ///
    /// # Errors
    /// Only if serialisation fails (it cannot for well-formed records; NaN
    /// numbers become `null`).
    pub fn to_line(&self) -> Result<String, serde_json::Error> {
        let mut s = serde_json::to_string(self)?;
        s.push('\n');
        Ok(s)
    }
}

/// The observer name to record: `configured` when given and not blank, else
/// the login name from `USER` or `LOGNAME`, else `unknown`. Control
/// characters are removed.
pub fn observer_name(configured: Option<&str>) -> String {
    let pick = |s: &str| {
        let c = crate::text::clean(s).trim().to_string();
        if c.is_empty() { None } else { Some(c) }
    };
    if let Some(name) = configured.and_then(pick) {
        return name;
    }
    for var in ["USER", "LOGNAME"] {
        if let Some(name) = std::env::var(var).ok().as_deref().and_then(pick) {
            return name;
        }
    }
    "unknown".to_string()
}

/// This machine's host name (cleaned), or `unknown`.
pub fn host_name() -> String {
    let h = gethostname::gethostname();
    let c = crate::text::clean(&h.to_string_lossy()).trim().to_string();
    if c.is_empty() {
        "unknown".to_string()
    } else {
        c
    }
}

/// The current UTC time in RFC 3339 (`2026-12-01T03:12:45.123456Z`), to the
/// microsecond.
pub fn now_utc() -> String {
    let now = time::OffsetDateTime::now_utc();
    let micros = now.microsecond();
    let now = now.replace_microsecond(micros).unwrap_or(now);
    now.format(&time::format_description::well_known::Rfc3339)
        .unwrap_or_else(|_| "1970-01-01T00:00:00Z".to_string())
}

/// Parse an RFC 3339 time as written by [`now_utc`] into nanoseconds since
/// 1970 (for ordering); `None` if it does not parse.
pub fn parse_utc(s: &str) -> Option<i128> {
    time::OffsetDateTime::parse(s, &time::format_description::well_known::Rfc3339)
        .ok()
        .map(|t| t.unix_timestamp_nanos())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn records_get_distinct_ids_even_when_made_in_the_same_instant() {
        let ids: std::collections::HashSet<String> = (0..1000)
            .map(|_| Record::reject("Orla-17", "ana").id)
            .collect();
        assert_eq!(ids.len(), 1000);
    }

    #[test]
    fn a_record_survives_a_round_trip_through_its_json_line() {
        let sol = Solution {
            z: Some(0.1234),
            z_err: Some(2e-5),
            class: Some(ObjectClass::Galaxy),
            lines: vec!["H-alpha".into(), "[O III] 5008".into()],
            ..Solution::default()
        };
        let r = Record::accept("Orla-17\n\"x\"", "ana", sol, Source::Candidate { rank: 2 })
            .with_note("tab\there");
        let line = r.to_line().expect("serialises");
        assert_eq!(line.matches('\n').count(), 1, "one line only: {line}");
        let back: Record = serde_json::from_str(line.trim_end()).expect("parses");
        assert_eq!(back, r);
    }

    #[test]
    fn the_recorded_time_is_rfc3339_utc_and_parses_back() {
        let t = now_utc();
        assert!(t.ends_with('Z'), "{t}");
        assert!(parse_utc(&t).is_some(), "{t}");
    }

    #[test]
    fn a_configured_observer_name_wins_and_blank_ones_fall_back() {
        assert_eq!(observer_name(Some("  ana \u{1b}")), "ana");
        assert!(!observer_name(Some("   ")).is_empty());
    }
}
