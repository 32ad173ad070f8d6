//! The per-target, append-only decision log: records, durable append,
//! locking, replay, undo, export and tally.
//!
//! Main types:
//! - [`Record`]: one decision (accept, reject, flag, reclassify, note, undo)
//!   with its solution, observer, host, time, input fingerprint and version;
//!   build one with [`Record::accept`] and friends.
//! - [`Log`]: an open log folder; [`Log::append`] returns only once the record
//!   is on disk.
//! - [`replay`] → [`Replay`]: the current [`TargetState`] of every target,
//!   with conflicts between observers kept visible, and every unusable line
//!   reported as a [`Problem`] with file and line.
//! - [`export`]: one row per target as CSV (formula-safe) or JSON Lines, and
//!   a one-screen [`export::Tally`].
//!
//! ```no_run
//! use zsift::decisions::{Log, Record, Solution, Source, observer_name};
//! # fn main() -> Result<(), zsift::decisions::LogError> {
//! let log = Log::open("night-logs")?;
//! let me = observer_name(None);
//! let sol = Solution { z: Some(0.1234), ..Solution::default() };
//! log.append(&Record::accept("Orla-17", &me, sol, Source::Candidate { rank: 1 }))?;
//! let state = log.target_state("Orla-17")?;
//! println!("{}", state.status.as_str());
//! # Ok(()) }
//! ```

pub mod export;
mod log;
mod record;
mod replay;

pub use log::{LOG_EXTENSION, Log, MARKER, Repair, TORN_SUFFIX, log_file_name};
pub use record::{
    Action, Fingerprint, Record, SCHEMA_VERSION, Solution, Source, host_name, now_utc,
    observer_name, parse_utc,
};
pub use replay::{
    NoteEntry, Problem, ProblemKind, Replay, Status, TargetState, Verdict, Z_AGREEMENT, replay,
    replay_target,
};

use std::path::PathBuf;

/// Why a log operation failed. Every variant names the file or folder.
#[derive(Debug, thiserror::Error)]
pub enum LogError {
    /// The log folder could not be created.
    #[error("cannot create the log folder {dir}: {source}")]
    CreateDir {
        /// The folder.
        dir: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// The log folder path exists but is not a folder.
    #[error("{dir} is not a folder")]
    NotADirectory {
        /// The path.
        dir: PathBuf,
    },
    /// The log folder does not exist.
    #[error("no log folder at {dir}")]
    NoSuchFolder {
        /// The path.
        dir: PathBuf,
    },
    /// The log folder cannot be written (read-only mount, permissions).
    #[error(
        "the log folder {dir} cannot be written ({source}); decisions cannot be saved there (existing logs can still be read and exported)"
    )]
    ReadOnly {
        /// The folder.
        dir: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// Something in the log folder that should be a plain file is not.
    #[error("{path} is not a plain file (a link or device?); refusing to use it as a log")]
    NotAFile {
        /// The path.
        path: PathBuf,
    },
    /// A log file could not be opened.
    #[error("cannot open the log file {path}: {source}")]
    Open {
        /// The file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// The advisory lock could not be taken.
    #[error("cannot lock the log file {path}: {source}")]
    Lock {
        /// The file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// Reading a log file or folder failed.
    #[error("cannot read {path}: {source}")]
    Read {
        /// The file or folder.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// The disk is full; the record was not saved.
    #[error("the disk holding {path} is full: the decision was NOT saved{}; earlier decisions are intact", if *rolled_back { "" } else { " (a partial line may remain and will be set aside on next open)" })]
    DiskFull {
        /// The file.
        path: PathBuf,
        /// True when the partial line was removed again.
        rolled_back: bool,
    },
    /// Writing the record failed; it was not saved.
    #[error("cannot write to {path}: {source}; the decision was NOT saved{}", if *rolled_back { "" } else { " (a partial line may remain and will be set aside on next open)" })]
    Write {
        /// The file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
        /// True when the partial line was removed again.
        rolled_back: bool,
    },
    /// Flushing to disk failed; the record is not known to be saved.
    #[error("cannot flush {path} to disk: {source}; the decision is NOT known to be saved")]
    Sync {
        /// The file or folder.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// Setting a torn last line aside failed.
    #[error("cannot set aside the unfinished last line of {path}: {source}")]
    Repair {
        /// The log file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// The record cannot be written as it is.
    #[error("invalid decision record: {0}")]
    InvalidRecord(String),
}
