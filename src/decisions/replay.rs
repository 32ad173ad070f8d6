//! Replay: read every log line back and work out the current state of each
//! target.
//!
//! Rules: records are taken in the order they were appended; an undo cancels
//! the record it names; each observer's latest standing verdict (accept,
//! reject, flag, reclassify) counts; when the standing verdicts of different
//! observers disagree the target is in [`Status::Conflict`] and every
//! verdict is kept, nothing is picked silently. Lines that cannot be used
//! (garbage, unknown schema, an unfinished last line) are reported as
//! [`Problem`]s with file and line; all other lines are still used.

use super::LogError;
use super::log::{log_file_name, log_files};
use super::record::{Action, Record, SCHEMA_VERSION, Solution, Source, parse_utc};
use fs4::FileExt;
use std::collections::{BTreeMap, HashMap, HashSet};
use std::io::Read;
use std::path::{Path, PathBuf};

/// Two accepted redshifts agree when they differ by at most this much in
/// `(1+z)` units (about 300 km/s; common practice, no source: wider than
/// the errors of a typical low-resolution redshift, narrower than a
/// line mis-identification).
pub const Z_AGREEMENT: f64 = 0.001;

/// The current state of a target.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Status {
    /// No standing verdict.
    Undecided,
    /// Accepted (or reclassified) and, if several observers, they agree.
    Accepted,
    /// Rejected.
    Rejected,
    /// Flagged for re-observation.
    Flagged,
    /// Observers' standing verdicts disagree.
    Conflict,
}

impl Status {
    /// Lower-case name used in exports.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Undecided => "undecided",
            Status::Accepted => "accepted",
            Status::Rejected => "rejected",
            Status::Flagged => "flagged",
            Status::Conflict => "conflict",
        }
    }

    /// True for everything but [`Status::Undecided`].
    pub fn is_decided(self) -> bool {
        self != Status::Undecided
    }
}

/// One observer's standing verdict on a target.
#[derive(Debug, Clone, PartialEq)]
pub struct Verdict {
    /// Who.
    pub observer: String,
    /// Accept, reject, flag or reclassify.
    pub action: Action,
    /// The solution they gave, if any.
    pub solution: Option<Solution>,
    /// Where it came from.
    pub source: Option<Source>,
    /// When.
    pub recorded_utc: String,
    /// Id of the record.
    pub id: String,
    /// Their remark on it.
    pub note: Option<String>,
}

impl Verdict {
    fn status(&self) -> Status {
        match self.action {
            Action::Reject => Status::Rejected,
            Action::Flag => Status::Flagged,
            _ => Status::Accepted,
        }
    }
}

/// A standing remark.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NoteEntry {
    /// Who.
    pub observer: String,
    /// When.
    pub recorded_utc: String,
    /// The text (as recorded; clean it before display).
    pub text: String,
}

/// Everything replay knows about one target.
#[derive(Debug, Clone, PartialEq)]
pub struct TargetState {
    /// The exact target name.
    pub target: String,
    /// Current status.
    pub status: Status,
    /// The agreed solution when accepted (the latest accepting record's).
    pub solution: Option<Solution>,
    /// Each observer's standing verdict, oldest first.
    pub verdicts: Vec<Verdict>,
    /// Standing remarks (note records and remarks on verdicts), oldest first.
    pub notes: Vec<NoteEntry>,
    /// When the latest record was written.
    pub last_change_utc: Option<String>,
    /// Every usable record, in append order (undone ones included).
    pub records: Vec<Record>,
    /// Ids of records cancelled by an undo.
    pub undone: HashSet<String>,
    /// True when records were made on input files of different content.
    pub inputs_differ: bool,
}

impl TargetState {
    /// The state of a target with no records.
    pub fn empty(target: &str) -> TargetState {
        TargetState {
            target: target.to_string(),
            status: Status::Undecided,
            solution: None,
            verdicts: Vec::new(),
            notes: Vec::new(),
            last_change_utc: None,
            records: Vec::new(),
            undone: HashSet::new(),
            inputs_differ: false,
        }
    }

    /// The latest record by `observer` that is not an undo and not undone:
    /// what an undo by that observer cancels.
    pub fn last_standing_by(&self, observer: &str) -> Option<&Record> {
        self.records.iter().rev().find(|r| {
            r.observer == observer && r.action != Action::Undo && !self.undone.contains(&r.id)
        })
    }

    /// Observers with a standing verdict.
    pub fn observers(&self) -> Vec<&str> {
        self.verdicts.iter().map(|v| v.observer.as_str()).collect()
    }

    /// One line describing a conflict (`ana: accept galaxy z=0.12340; ben:
    /// reject`), or `None` when there is none.
    pub fn conflict_summary(&self) -> Option<String> {
        if self.status != Status::Conflict {
            return None;
        }
        let parts: Vec<String> = self
            .verdicts
            .iter()
            .map(|v| {
                let mut s = format!("{}: {}", v.observer, v.action.as_str());
                if let Some(sol) = &v.solution {
                    if let Some(c) = sol.class {
                        s.push(' ');
                        s.push_str(c.as_str());
                    }
                    if let Some(z) = sol.z {
                        s.push_str(&format!(" z={z:.5}"));
                    }
                }
                s
            })
            .collect();
        Some(parts.join("; "))
    }

    /// Whether the latest fingerprinted record was made on content equal to
    /// `now` (`None` when no record carries a fingerprint).
    pub fn input_matches(&self, now: &super::Fingerprint) -> Option<bool> {
        self.records
            .iter()
            .rev()
            .find_map(|r| r.input.as_ref())
            .map(|f| f.same_content(now))
    }

    fn settle(&mut self) {
        self.undone.clear();
        let ids: HashMap<&str, Action> = self
            .records
            .iter()
            .map(|r| (r.id.as_str(), r.action))
            .collect();
        for r in &self.records {
            if r.action == Action::Undo {
                if let Some(t) = &r.undoes {
                    if matches!(ids.get(t.as_str()), Some(a) if *a != Action::Undo) {
                        self.undone.insert(t.clone());
                    }
                }
            }
        }
        let mut latest: HashMap<&str, usize> = HashMap::new();
        let mut order: Vec<&str> = Vec::new();
        self.notes.clear();
        for (i, r) in self.records.iter().enumerate() {
            if self.undone.contains(&r.id) || r.action == Action::Undo {
                continue;
            }
            if let Some(text) = &r.note {
                self.notes.push(NoteEntry {
                    observer: r.observer.clone(),
                    recorded_utc: r.recorded_utc.clone(),
                    text: text.clone(),
                });
            }
            if r.action.is_verdict() && latest.insert(r.observer.as_str(), i).is_none() {
                order.push(r.observer.as_str());
            }
        }
        let mut idx: Vec<usize> = order
            .iter()
            .filter_map(|o| latest.get(o).copied())
            .collect();
        idx.sort_unstable();
        self.verdicts = idx
            .iter()
            .map(|&i| {
                let r = &self.records[i];
                Verdict {
                    observer: r.observer.clone(),
                    action: r.action,
                    solution: r.solution.clone(),
                    source: r.source,
                    recorded_utc: r.recorded_utc.clone(),
                    id: r.id.clone(),
                    note: r.note.clone(),
                }
            })
            .collect();
        self.last_change_utc = self.records.last().map(|r| r.recorded_utc.clone());
        let prints: Vec<_> = self
            .records
            .iter()
            .filter_map(|r| r.input.as_ref())
            .collect();
        self.inputs_differ = prints.windows(2).any(|w| !w[0].same_content(w[1]));

        self.solution = None;
        self.status = match self.verdicts.first() {
            None => Status::Undecided,
            Some(first) => {
                let s = first.status();
                let same_kind = self.verdicts.iter().all(|v| v.status() == s);
                let agree = same_kind && (s != Status::Accepted || solutions_agree(&self.verdicts));
                if agree { s } else { Status::Conflict }
            }
        };
        if self.status == Status::Accepted {
            self.solution = self.verdicts.last().and_then(|v| v.solution.clone());
        }
    }
}

fn solutions_agree(verdicts: &[Verdict]) -> bool {
    let sols: Vec<&Solution> = verdicts
        .iter()
        .filter_map(|v| v.solution.as_ref())
        .collect();
    for (i, a) in sols.iter().enumerate() {
        for b in &sols[i + 1..] {
            if let (Some(ca), Some(cb)) = (a.class, b.class) {
                if ca != cb {
                    return false;
                }
            }
            if let (Some(za), Some(zb)) = (a.z, b.z) {
                let scale = 1.0 + 0.5 * (za + zb);
                // NaN compares false, so a NaN redshift never agrees.
                let close = (za - zb).abs() <= Z_AGREEMENT * scale.abs();
                if !close {
                    return false;
                }
            }
        }
    }
    true
}

/// What was wrong with a line (or a file) of a log.
#[derive(Debug, Clone, PartialEq)]
pub enum ProblemKind {
    /// Not a record: not JSON, not an object, or fields missing or wrong.
    Garbage(String),
    /// A record of a schema version this program does not know.
    UnknownSchema(u64),
    /// The file ends in an unfinished line of this many bytes (an
    /// interrupted write; `Log::open` sets it aside).
    TornTail(usize),
    /// The record is for another target than the file is named for (kept).
    WrongFile(String),
    /// An undo names a record that does not exist or is itself an undo.
    DanglingUndo(String),
    /// Two different records share an id (the first one is used).
    DuplicateId(String),
    /// The file could not be read at all.
    Unreadable(String),
}

/// A problem found while replaying, with its place.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// The log file.
    pub file: PathBuf,
    /// 1-based line number, when the problem is on a line.
    pub line: Option<usize>,
    /// What.
    pub kind: ProblemKind,
}

impl std::fmt::Display for Problem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", self.file.display())?;
        if let Some(l) = self.line {
            write!(f, ", line {l}")?;
        }
        match &self.kind {
            ProblemKind::Garbage(m) => write!(f, ": not a decision record ({m}); line skipped"),
            ProblemKind::UnknownSchema(v) => write!(
                f,
                ": record of schema version {v}, this zsift reads version {SCHEMA_VERSION}; line skipped (a newer zsift wrote it?)"
            ),
            ProblemKind::TornTail(n) => write!(
                f,
                ": unfinished last line ({n} bytes, an interrupted write); skipped"
            ),
            ProblemKind::WrongFile(t) => write!(
                f,
                ": record for target {:?} in another target's file (used anyway)",
                crate::text::clean(t)
            ),
            ProblemKind::DanglingUndo(id) => {
                write!(
                    f,
                    ": undo of record {id}, which is not an undoable record here; ignored"
                )
            }
            ProblemKind::DuplicateId(id) => {
                write!(
                    f,
                    ": a different record with the same id {id}; the first is used"
                )
            }
            ProblemKind::Unreadable(m) => write!(f, ": cannot be read ({m})"),
        }
    }
}

/// The state of every target in a log folder.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Replay {
    /// Per target, by exact name.
    pub targets: BTreeMap<String, TargetState>,
    /// Everything that could not be used, with its place.
    pub problems: Vec<Problem>,
    /// Log files read.
    pub files: usize,
    /// Usable records read.
    pub records: usize,
}

impl Replay {
    /// The state of `target`, if it has any record.
    pub fn state(&self, target: &str) -> Option<&TargetState> {
        self.targets.get(target)
    }

    /// The status of `target` ([`Status::Undecided`] when it has no record).
    pub fn status(&self, target: &str) -> Status {
        self.targets
            .get(target)
            .map(|t| t.status)
            .unwrap_or(Status::Undecided)
    }

    /// The target `observer` recorded something on most recently, and when.
    pub fn latest_by(&self, observer: &str) -> Option<(&str, &str)> {
        let mut best: Option<(i128, &str, &str)> = None;
        for t in self.targets.values() {
            for r in t.records.iter().filter(|r| r.observer == observer) {
                let at = parse_utc(&r.recorded_utc).unwrap_or(i128::MIN);
                if best.is_none_or(|(b, _, _)| at >= b) {
                    best = Some((at, t.target.as_str(), r.recorded_utc.as_str()));
                }
            }
        }
        best.map(|(_, t, at)| (t, at))
    }
}

/// Replay every log file in `dir` (read-only: nothing is repaired, so this
/// works on a read-only folder or a copy). Each file is read under a shared
/// lock, so a concurrent append is either wholly seen or not at all.
///
/// # Errors
/// [`LogError::NoSuchFolder`] when `dir` does not exist, or
/// [`LogError::Read`] when it cannot be listed. Bad lines and unreadable
/// files are [`Problem`]s, not errors.
pub fn replay(dir: impl AsRef<Path>) -> Result<Replay, LogError> {
    let dir = dir.as_ref();
    if !dir.is_dir() {
        return Err(LogError::NoSuchFolder {
            dir: dir.to_path_buf(),
        });
    }
    let files = log_files(dir)?;
    Ok(replay_files(&files))
}

/// Replay only `target`'s own log file in `dir` (the state is
/// [`Status::Undecided`] with no records when there is none).
///
/// # Errors
/// As [`replay`].
pub fn replay_target(dir: impl AsRef<Path>, target: &str) -> Result<Replay, LogError> {
    let dir = dir.as_ref();
    if !dir.is_dir() {
        return Err(LogError::NoSuchFolder {
            dir: dir.to_path_buf(),
        });
    }
    let path = dir.join(log_file_name(target));
    let files = if path.is_file() {
        vec![path]
    } else {
        Vec::new()
    };
    let mut r = replay_files(&files);
    r.targets.retain(|k, _| k == target);
    Ok(r)
}

fn replay_files(files: &[PathBuf]) -> Replay {
    let mut out = Replay::default();
    // target -> (records, files contributing)
    let mut per: BTreeMap<String, (Vec<Record>, HashSet<usize>)> = BTreeMap::new();
    let mut seen: HashMap<(String, String), Record> = HashMap::new();
    for (fi, path) in files.iter().enumerate() {
        let bytes = match read_shared(path) {
            Ok(b) => b,
            Err(e) => {
                out.problems.push(Problem {
                    file: path.clone(),
                    line: None,
                    kind: ProblemKind::Unreadable(e.to_string()),
                });
                continue;
            }
        };
        out.files += 1;
        let file_name = path.file_name().map(|n| n.to_string_lossy().into_owned());
        let mut lines: Vec<&[u8]> = bytes.split(|&b| b == b'\n').collect();
        // split leaves one trailing piece: empty when the file ends in '\n'.
        let tail = lines.pop().unwrap_or(&[]);
        if !tail.is_empty() {
            out.problems.push(Problem {
                file: path.clone(),
                line: Some(lines.len() + 1),
                kind: ProblemKind::TornTail(tail.len()),
            });
        }
        for (li, raw) in lines.iter().enumerate() {
            let place = |kind| Problem {
                file: path.clone(),
                line: Some(li + 1),
                kind,
            };
            if raw.iter().all(|b| b.is_ascii_whitespace()) {
                continue;
            }
            let rec = match parse_line(raw) {
                Ok(r) => r,
                Err(kind) => {
                    out.problems.push(place(kind));
                    continue;
                }
            };
            if file_name.as_deref() != Some(log_file_name(&rec.target).as_str()) {
                out.problems
                    .push(place(ProblemKind::WrongFile(rec.target.clone())));
            }
            let key = (rec.target.clone(), rec.id.clone());
            if let Some(prev) = seen.get(&key) {
                if *prev != rec {
                    out.problems
                        .push(place(ProblemKind::DuplicateId(rec.id.clone())));
                }
                continue;
            }
            seen.insert(key, rec.clone());
            out.records += 1;
            let e = per.entry(rec.target.clone()).or_default();
            e.1.insert(fi);
            e.0.push(rec);
        }
    }
    for (target, (mut records, from)) in per {
        if from.len() > 1 {
            // Appends to one file are ordered by the lock; across files only
            // the clock can order them.
            records.sort_by_key(|r| parse_utc(&r.recorded_utc).unwrap_or(i128::MAX));
        }
        let mut st = TargetState::empty(&target);
        st.records = records;
        st.settle();
        for r in &st.records {
            if r.action == Action::Undo {
                if let Some(t) = &r.undoes {
                    if !st.undone.contains(t) {
                        out.problems.push(Problem {
                            file: files
                                .iter()
                                .find(|p| {
                                    p.file_name().is_some_and(|n| {
                                        n.to_string_lossy() == log_file_name(&target)
                                    })
                                })
                                .cloned()
                                .unwrap_or_default(),
                            line: None,
                            kind: ProblemKind::DanglingUndo(t.clone()),
                        });
                    }
                }
            }
        }
        out.targets.insert(target, st);
    }
    out
}

fn read_shared(path: &Path) -> std::io::Result<Vec<u8>> {
    let mut f = std::fs::File::open(path)?;
    // Best effort: a file system without locks is still read.
    let locked = FileExt::lock_shared(&f).is_ok();
    let mut buf = Vec::new();
    let r = f.read_to_end(&mut buf);
    if locked {
        let _ = FileExt::unlock(&f);
    }
    r.map(|_| buf)
}

/// Parse one log line into a record, or say why it is not one.
pub(crate) fn parse_line(raw: &[u8]) -> Result<Record, ProblemKind> {
    let v: serde_json::Value =
        serde_json::from_slice(raw).map_err(|e| ProblemKind::Garbage(format!("not JSON: {e}")))?;
    let obj = v
        .as_object()
        .ok_or_else(|| ProblemKind::Garbage("not a JSON object".to_string()))?;
    let schema = obj
        .get("schema")
        .and_then(|s| s.as_u64())
        .ok_or_else(|| ProblemKind::Garbage("no schema version number".to_string()))?;
    if schema != u64::from(SCHEMA_VERSION) {
        return Err(ProblemKind::UnknownSchema(schema));
    }
    serde_json::from_value::<Record>(v).map_err(|e| ProblemKind::Garbage(e.to_string()))
}
