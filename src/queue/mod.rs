//! What to review: inputs found on disk, listed in a queue file, or taken from
//! a `scan` output; ordering, filters and progress.
//!
//! A [`Queue`] holds its [`Item`]s in source order and a *view*: the indices
//! of the items currently shown, in the current order. [`Queue::order_by`]
//! reorders the view, [`Queue::filter`] rebuilds it from a
//! [`crate::decisions::Replay`]. The view is a snapshot: deciding an item
//! does not make it vanish from an "undecided" view until it is filtered
//! again, so the cursor never jumps under the observer's hands.
//!
//! # Queue file
//! A CSV file with the header `path,target,priority,note` (column order is
//! free, only `path` is required; lines starting with `#` are comments):
//!
//! ```text
//! path,target,priority,note
//! night1/orla-17.fits,Orla-17,5,check the red end
//! night1/orla-18.txt,,0,
//! ```
//! Relative paths are relative to the queue file's folder. An empty target
//! means the file stem; priority is an integer (larger is more urgent,
//! default 0).

mod scanfile;

pub use scanfile::{
    CandidateSummary, ScanEntry, ScanFile, ScanSummary, parse_class, parse_grade, read_scan,
};

use crate::decisions::{Replay, Status};
use crate::lines::ObjectClass;
use std::path::{Path, PathBuf};

/// File extensions picked up when a folder is given (case-insensitive).
pub const SPECTRUM_EXTENSIONS: [&str; 7] = ["fits", "fit", "fts", "csv", "tsv", "txt", "dat"];

/// Name of the default log folder, created beside the queue's source.
pub const DEFAULT_LOG_FOLDER: &str = "zsift-log";

/// Why a queue could not be built.
#[derive(Debug, thiserror::Error)]
pub enum QueueError {
    /// A file or folder could not be read.
    #[error("cannot read {path}: {source}")]
    Read {
        /// The path.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// A queue file line is not usable.
    #[error("{path}, line {line}: {message}")]
    Line {
        /// The queue file.
        path: PathBuf,
        /// 1-based line number.
        line: usize,
        /// What is wrong.
        message: String,
    },
    /// The queue file's header lacks the `path` column.
    #[error("{path}: the header has no `path` column (expected `path,target,priority,note`)")]
    NoPathColumn {
        /// The queue file.
        path: PathBuf,
    },
}

/// One thing to review.
#[derive(Debug, Clone, PartialEq)]
pub struct Item {
    /// The spectrum file.
    pub path: PathBuf,
    /// The target name decisions are recorded under.
    pub target: String,
    /// Larger is more urgent; 0 unless the queue file says otherwise.
    pub priority: i64,
    /// A note from the queue file.
    pub note: Option<String>,
    /// The batch answer, when the queue came from a scan output.
    pub scan: Option<ScanSummary>,
}

impl Item {
    fn from_path(path: PathBuf) -> Item {
        let target = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| path.display().to_string());
        Item {
            path,
            target,
            priority: 0,
            note: None,
            scan: None,
        }
    }

    fn best(&self) -> Option<&CandidateSummary> {
        self.scan.as_ref().and_then(|s| s.best())
    }
}

/// Orderings of the view. Items without the key (no scan answer) go last;
/// ties keep source order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Order {
    /// As listed in the source.
    Source,
    /// Highest priority first.
    Priority,
    /// By target name (case-insensitive, then exact).
    Name,
    /// Highest S/N first.
    Snr,
    /// Lowest redshift (of the best candidate) first.
    Redshift,
    /// Highest score (of the best candidate) first.
    Score,
}

/// Filters of the view.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Filter {
    /// Everything.
    All,
    /// No standing verdict.
    Undecided,
    /// Accepted.
    Accepted,
    /// Rejected.
    Rejected,
    /// Flagged for re-observation.
    Flagged,
    /// Observers disagree.
    Conflict,
    /// Of this class: the accepted class when accepted, else the scan's
    /// best candidate's class.
    Class(ObjectClass),
}

/// Progress counts over the whole queue.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Progress {
    /// Items in the queue.
    pub total: usize,
    /// Items in the current view.
    pub shown: usize,
    /// Items with a standing verdict (conflicts included).
    pub decided: usize,
    /// Accepted.
    pub accepted: usize,
    /// Rejected.
    pub rejected: usize,
    /// Flagged.
    pub flagged: usize,
    /// In conflict.
    pub conflict: usize,
    /// Without a verdict.
    pub undecided: usize,
}

/// A review queue.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Queue {
    items: Vec<Item>,
    view: Vec<usize>,
    order: Option<Order>,
    source: Option<PathBuf>,
    /// Unusable lines of the source (scan problems), as `(line, why)`.
    pub problems: Vec<(usize, String)>,
}

impl Queue {
    /// A queue of the given items, in this order.
    pub fn from_items(items: Vec<Item>) -> Queue {
        let view = (0..items.len()).collect();
        Queue {
            items,
            view,
            order: None,
            source: None,
            problems: Vec::new(),
        }
    }

    /// Files and folders on disk: a file is taken as it is; a folder is
    /// searched recursively for files with a [`SPECTRUM_EXTENSIONS`]
    /// extension (sorted by path; hidden entries and the log folder are
    /// skipped). The target is the file stem.
    ///
    /// # Errors
    /// [`QueueError::Read`] for a path that does not exist or a folder that
    /// cannot be listed.
    pub fn from_paths(paths: &[PathBuf]) -> Result<Queue, QueueError> {
        let mut items = Vec::new();
        for p in paths {
            let md = std::fs::metadata(p).map_err(|source| QueueError::Read {
                path: p.clone(),
                source,
            })?;
            if md.is_dir() {
                let mut found = Vec::new();
                walk(p, &mut found)?;
                found.sort();
                items.extend(found.into_iter().map(Item::from_path));
            } else {
                items.push(Item::from_path(p.clone()));
            }
        }
        let mut q = Queue::from_items(items);
        q.source = paths.first().cloned();
        Ok(q)
    }

    /// Read a queue file (see the module docs for the format).
    ///
    /// # Errors
    /// [`QueueError::Read`], [`QueueError::NoPathColumn`], or
    /// [`QueueError::Line`] naming the line of a bad row.
    pub fn from_queue_file(path: &Path) -> Result<Queue, QueueError> {
        let text = std::fs::read(path).map_err(|source| QueueError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        let base = path.parent().unwrap_or(Path::new("")).to_path_buf();
        let mut rdr = csv::ReaderBuilder::new()
            .comment(Some(b'#'))
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(text.as_slice());
        let header = rdr
            .headers()
            .map_err(|e| QueueError::Line {
                path: path.to_path_buf(),
                line: 1,
                message: e.to_string(),
            })?
            .clone();
        let col = |name: &str| header.iter().position(|h| h.eq_ignore_ascii_case(name));
        let pc = col("path").ok_or_else(|| QueueError::NoPathColumn {
            path: path.to_path_buf(),
        })?;
        let (tc, prc, nc) = (col("target"), col("priority"), col("note"));
        let mut items = Vec::new();
        for rec in rdr.records() {
            let rec = rec.map_err(|e| QueueError::Line {
                path: path.to_path_buf(),
                line: e.position().map(|p| p.line() as usize).unwrap_or(0),
                message: e.to_string(),
            })?;
            let line = rec.position().map(|p| p.line() as usize).unwrap_or(0);
            let get = |c: Option<usize>| c.and_then(|c| rec.get(c)).unwrap_or("");
            let p = get(Some(pc));
            if p.is_empty() {
                return Err(QueueError::Line {
                    path: path.to_path_buf(),
                    line,
                    message: "the path is empty".to_string(),
                });
            }
            let full = scanfile::resolve(&base, Path::new(p));
            let mut item = Item::from_path(full);
            let t = get(tc);
            if !t.is_empty() {
                item.target = t.to_string();
            }
            let pr = get(prc);
            if !pr.is_empty() {
                item.priority = pr.parse().map_err(|_| QueueError::Line {
                    path: path.to_path_buf(),
                    line,
                    message: format!(
                        "priority {:?} is not a whole number",
                        crate::text::clean(pr)
                    ),
                })?;
            }
            let n = get(nc);
            if !n.is_empty() {
                item.note = Some(n.to_string());
            }
            items.push(item);
        }
        let mut q = Queue::from_items(items);
        q.source = Some(path.to_path_buf());
        Ok(q)
    }

    /// A queue from a `zsift scan` JSON Lines output: every usable line
    /// (including inputs the scan could not read, so they are not forgotten)
    /// with its answer in [`Item::scan`]; unusable lines go to
    /// [`Queue::problems`].
    ///
    /// # Errors
    /// [`QueueError::Read`] when the file cannot be read.
    pub fn from_scan(path: &Path) -> Result<Queue, QueueError> {
        let sf = read_scan(path)?;
        let items = sf
            .entries
            .into_iter()
            .map(|e| Item {
                path: e.path,
                target: e.target,
                priority: 0,
                note: None,
                scan: Some(e.summary),
            })
            .collect();
        let mut q = Queue::from_items(items);
        q.source = Some(path.to_path_buf());
        q.problems = sf.problems;
        Ok(q)
    }

    /// Build from whatever `path` is: a `.jsonl` file is a scan output, a
    /// `.queue` or `.csv` file whose first line starts with `path` is a
    /// queue file, anything else (a spectrum or a folder) goes to
    /// [`Queue::from_paths`].
    ///
    /// # Errors
    /// As the constructor chosen.
    pub fn open(path: &Path) -> Result<Queue, QueueError> {
        let ext = path
            .extension()
            .map(|e| e.to_string_lossy().to_ascii_lowercase())
            .unwrap_or_default();
        if path.is_file() && ext == "jsonl" {
            return Queue::from_scan(path);
        }
        if path.is_file() && (ext == "queue" || ext == "csv") && looks_like_queue_file(path) {
            return Queue::from_queue_file(path);
        }
        Queue::from_paths(&[path.to_path_buf()])
    }

    /// Where the log goes by default: a [`DEFAULT_LOG_FOLDER`] folder inside
    /// the queue's folder (when built from a folder) or beside its first
    /// file; the working folder when the queue has no source.
    pub fn default_log_dir(&self) -> PathBuf {
        match &self.source {
            Some(s) if s.is_dir() => s.join(DEFAULT_LOG_FOLDER),
            Some(s) => s
                .parent()
                .map(|p| p.join(DEFAULT_LOG_FOLDER))
                .unwrap_or_else(|| PathBuf::from(DEFAULT_LOG_FOLDER)),
            None => PathBuf::from(DEFAULT_LOG_FOLDER),
        }
    }

    /// All items, in source order.
    pub fn items(&self) -> &[Item] {
        &self.items
    }

    /// Number of items in the view.
    pub fn len(&self) -> usize {
        self.view.len()
    }

    /// True when the view is empty.
    pub fn is_empty(&self) -> bool {
        self.view.is_empty()
    }

    /// The `i`-th item of the view.
    pub fn get(&self, i: usize) -> Option<&Item> {
        self.view.get(i).and_then(|&k| self.items.get(k))
    }

    /// The view's items, in order.
    pub fn iter(&self) -> impl Iterator<Item = &Item> + '_ {
        self.view.iter().filter_map(|&k| self.items.get(k))
    }

    /// Position in the view of `target`, if shown.
    pub fn position_of(&self, target: &str) -> Option<usize> {
        self.view
            .iter()
            .position(|&k| self.items.get(k).is_some_and(|i| i.target == target))
    }

    /// The ordering last applied (`None`: source order).
    pub fn order(&self) -> Option<Order> {
        self.order
    }

    /// Reorder the view (stable: ties keep source order).
    pub fn order_by(&mut self, order: Order) {
        self.order = Some(order);
        let items = &self.items;
        let key_f = |k: usize, f: &dyn Fn(&Item) -> Option<f64>| items.get(k).and_then(f);
        let by_float = |view: &mut Vec<usize>, f: &dyn Fn(&Item) -> Option<f64>, desc: bool| {
            view.sort_by(|&a, &b| {
                let (ka, kb) = (key_f(a, f), key_f(b, f));
                match (ka, kb) {
                    (Some(x), Some(y)) => {
                        let o = x.total_cmp(&y);
                        let o = if desc { o.reverse() } else { o };
                        o.then(a.cmp(&b))
                    }
                    (Some(_), None) => std::cmp::Ordering::Less,
                    (None, Some(_)) => std::cmp::Ordering::Greater,
                    (None, None) => a.cmp(&b),
                }
            });
        };
        match order {
            Order::Source => self.view.sort_unstable(),
            Order::Priority => self.view.sort_by(|&a, &b| {
                let pa = items.get(a).map(|i| i.priority).unwrap_or(0);
                let pb = items.get(b).map(|i| i.priority).unwrap_or(0);
                pb.cmp(&pa).then(a.cmp(&b))
            }),
            Order::Name => self.view.sort_by(|&a, &b| {
                let na = items.get(a).map(|i| i.target.as_str()).unwrap_or("");
                let nb = items.get(b).map(|i| i.target.as_str()).unwrap_or("");
                na.to_lowercase()
                    .cmp(&nb.to_lowercase())
                    .then(na.cmp(nb))
                    .then(a.cmp(&b))
            }),
            Order::Snr => by_float(
                &mut self.view,
                &|i: &Item| i.scan.as_ref().and_then(|s| s.snr),
                true,
            ),
            Order::Redshift => by_float(&mut self.view, &|i: &Item| i.best().map(|c| c.z), false),
            Order::Score => by_float(
                &mut self.view,
                &|i: &Item| i.best().and_then(|c| c.score),
                true,
            ),
        }
    }

    /// Reverse the view's order.
    pub fn reverse(&mut self) {
        self.view.reverse();
    }

    /// Rebuild the view: the items passing `filter` given the decisions in
    /// `replay`, in the current order.
    pub fn filter(&mut self, filter: Filter, replay: &Replay) {
        self.view = (0..self.items.len())
            .filter(|&k| self.items.get(k).is_some_and(|i| passes(i, filter, replay)))
            .collect();
        if let Some(o) = self.order {
            self.order_by(o);
        }
    }

    /// Where to resume in the view for `observer`: the first undecided item
    /// after the one they recorded something on most recently (wrapping
    /// round), else the first undecided item; `None` when every shown item
    /// is decided.
    pub fn resume(&self, replay: &Replay, observer: &str) -> Option<usize> {
        let n = self.view.len();
        if n == 0 {
            return None;
        }
        let start = replay
            .latest_by(observer)
            .and_then(|(t, _)| self.position_of(t))
            .map(|p| p + 1)
            .unwrap_or(0);
        (0..n).map(|d| (start + d) % n).find(|&i| {
            self.get(i)
                .is_some_and(|it| !replay.status(&it.target).is_decided())
        })
    }

    /// Progress counts over the whole queue (each distinct target once).
    pub fn progress(&self, replay: &Replay) -> Progress {
        let mut p = Progress {
            shown: self.view.len(),
            ..Progress::default()
        };
        let mut seen = std::collections::HashSet::new();
        for it in &self.items {
            if !seen.insert(it.target.as_str()) {
                continue;
            }
            p.total += 1;
            match replay.status(&it.target) {
                Status::Undecided => p.undecided += 1,
                Status::Accepted => p.accepted += 1,
                Status::Rejected => p.rejected += 1,
                Status::Flagged => p.flagged += 1,
                Status::Conflict => p.conflict += 1,
            }
        }
        p.decided = p.total - p.undecided;
        p
    }
}

fn passes(item: &Item, filter: Filter, replay: &Replay) -> bool {
    let status = replay.status(&item.target);
    match filter {
        Filter::All => true,
        Filter::Undecided => status == Status::Undecided,
        Filter::Accepted => status == Status::Accepted,
        Filter::Rejected => status == Status::Rejected,
        Filter::Flagged => status == Status::Flagged,
        Filter::Conflict => status == Status::Conflict,
        Filter::Class(c) => {
            let decided = replay
                .state(&item.target)
                .filter(|s| s.status == Status::Accepted)
                .and_then(|s| s.solution.as_ref())
                .and_then(|s| s.class);
            decided.or_else(|| item.best().and_then(|b| b.class)) == Some(c)
        }
    }
}

fn looks_like_queue_file(path: &Path) -> bool {
    use std::io::BufRead;
    let Ok(f) = std::fs::File::open(path) else {
        return false;
    };
    let mut first = String::new();
    for line in std::io::BufReader::new(f).lines().take(20) {
        let Ok(l) = line else { return false };
        let t = l.trim();
        if t.is_empty() || t.starts_with('#') {
            continue;
        }
        first = t.to_ascii_lowercase();
        break;
    }
    first.split(',').any(|c| c.trim() == "path")
}

fn walk(dir: &Path, out: &mut Vec<PathBuf>) -> Result<(), QueueError> {
    let rd = std::fs::read_dir(dir).map_err(|source| QueueError::Read {
        path: dir.to_path_buf(),
        source,
    })?;
    for entry in rd {
        let entry = entry.map_err(|source| QueueError::Read {
            path: dir.to_path_buf(),
            source,
        })?;
        let name = entry.file_name();
        let name = name.to_string_lossy();
        if name.starts_with('.') || name == DEFAULT_LOG_FOLDER {
            continue;
        }
        let p = entry.path();
        let ft = match entry.file_type() {
            Ok(t) => t,
            Err(_) => continue,
        };
        if ft.is_dir() {
            walk(&p, out)?;
        } else if ft.is_file() {
            let ext = p
                .extension()
                .map(|e| e.to_string_lossy().to_ascii_lowercase())
                .unwrap_or_default();
            if SPECTRUM_EXTENSIONS.contains(&ext.as_str()) {
                out.push(p);
            }
        }
    }
    Ok(())
}
