//! The log folder and durable appends.
//!
//! One file per target, `<safe stem>-<12 hex of XXH3(target)>.jsonl`, holding
//! one JSON record per line. An append takes an exclusive advisory lock on
//! that file, makes sure the file ends on a line boundary (setting a torn
//! tail aside first), writes the whole line with one `write` on a file opened
//! for append, then `fsync`s the data (and the folder, for a new file) before
//! it returns `Ok`. A failed write is rolled back to the previous length.

use super::LogError;
use super::record::Record;
use super::replay::{Replay, TargetState};
use fs4::FileExt;
use std::fs::{File, OpenOptions};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

/// Extension of per-target log files.
pub const LOG_EXTENSION: &str = "jsonl";
/// Suffix added to a log file's name for the side file holding torn tails.
pub const TORN_SUFFIX: &str = ".torn";
/// Marker file created in a log folder (and used to test that it is writable).
pub const MARKER: &str = ".zsift-log";

const MARKER_TEXT: &str = "This folder holds zsift decision logs: one JSON Lines file per target,\n\
append-only. Do not edit the files by hand; use `zsift decide` (an undo is a new record).\n";

/// The file name (no folder) of the log for `target`: the target's
/// [`crate::text::safe_stem`] cut to 80 bytes, a dash, 12 hex digits of the
/// XXH3-64 hash of the exact name (so names that clean to the same stem stay
/// apart), and `.jsonl`. It never contains a path separator and never
/// starts with a dot.
pub fn log_file_name(target: &str) -> String {
    let mut stem = crate::text::safe_stem(target);
    // safe_stem returns ASCII only, so byte truncation is on a char boundary.
    stem.truncate(80);
    let hash = xxhash_rust::xxh3::xxh3_64(target.as_bytes());
    format!("{stem}-{:012x}.{LOG_EXTENSION}", hash >> 16)
}

/// A torn last line that was found and set aside.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Repair {
    /// The log file that had it.
    pub file: PathBuf,
    /// How many bytes were set aside.
    pub bytes: u64,
    /// Where they were copied (appended) before the log was cut back.
    pub side_file: PathBuf,
}

impl std::fmt::Display for Repair {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{}: an unfinished last line ({} bytes, from an interrupted write) was moved to {}",
            self.file.display(),
            self.bytes,
            self.side_file.display()
        )
    }
}

/// An open, writable decision-log folder.
#[derive(Debug)]
pub struct Log {
    dir: PathBuf,
    repairs: Mutex<Vec<Repair>>,
}

impl Log {
    /// Open (creating if needed) the log folder `dir`, check that it can be
    /// written, and set aside the torn last line of any log file in it.
    ///
    /// # Errors
    /// [`LogError::CreateDir`], [`LogError::NotADirectory`],
    /// [`LogError::ReadOnly`] (use [`super::replay`] to read such a folder),
    /// or an I/O error naming the file while checking the logs.
    pub fn open(dir: impl AsRef<Path>) -> Result<Log, LogError> {
        let dir = dir.as_ref().to_path_buf();
        if !dir.exists() {
            std::fs::create_dir_all(&dir).map_err(|source| LogError::CreateDir {
                dir: dir.clone(),
                source,
            })?;
        }
        if !dir.is_dir() {
            return Err(LogError::NotADirectory { dir });
        }
        let marker = dir.join(MARKER);
        let fresh = !marker.exists();
        let mut m = OpenOptions::new()
            .append(true)
            .create(true)
            .open(&marker)
            .map_err(|source| LogError::ReadOnly {
                dir: dir.clone(),
                source,
            })?;
        if fresh {
            // Best effort: the marker only explains the folder to people.
            let _ = m.write_all(MARKER_TEXT.as_bytes());
        }
        let log = Log {
            dir,
            repairs: Mutex::new(Vec::new()),
        };
        for path in log_files(&log.dir)? {
            let file = open_log_file(&path, false)?;
            FileExt::lock(&file).map_err(|source| LogError::Lock {
                path: path.clone(),
                source,
            })?;
            let r = end_on_line_boundary(&file, &path);
            let _ = FileExt::unlock(&file);
            if let Some(rep) = r? {
                log.push_repair(rep);
            }
        }
        Ok(log)
    }

    /// The folder.
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// The log file that holds (or will hold) `target`'s records.
    pub fn file_for(&self, target: &str) -> PathBuf {
        self.dir.join(log_file_name(target))
    }

    /// Torn tails set aside since the log was opened (on open, or found by
    /// an append after another process died mid-write), oldest first; the
    /// list is emptied by this call.
    pub fn take_repairs(&self) -> Vec<Repair> {
        match self.repairs.lock() {
            Ok(mut g) => std::mem::take(&mut *g),
            Err(p) => std::mem::take(&mut *p.into_inner()),
        }
    }

    fn push_repair(&self, r: Repair) {
        match self.repairs.lock() {
            Ok(mut g) => g.push(r),
            Err(p) => p.into_inner().push(r),
        }
    }

    /// Append `record` to its target's log. Returns only once the line is
    /// on disk (`fsync`); on error nothing of this record remains in the
    /// log (a partial write is cut back) and earlier lines are untouched.
    ///
    /// # Errors
    /// [`LogError::InvalidRecord`] for an empty target name,
    /// [`LogError::DiskFull`], [`LogError::Write`], [`LogError::Sync`], or
    /// an open / lock error naming the file.
    pub fn append(&self, record: &Record) -> Result<(), LogError> {
        if record.target.is_empty() {
            return Err(LogError::InvalidRecord(
                "the target name is empty".to_string(),
            ));
        }
        let line = record
            .to_line()
            .map_err(|e| LogError::InvalidRecord(e.to_string()))?;
        let path = self.file_for(&record.target);
        let file = open_log_file(&path, true)?;
        FileExt::lock(&file).map_err(|source| LogError::Lock {
            path: path.clone(),
            source,
        })?;
        let result = self.append_locked(&file, &path, line.as_bytes());
        let _ = FileExt::unlock(&file);
        result
    }

    fn append_locked(&self, file: &File, path: &Path, line: &[u8]) -> Result<(), LogError> {
        if let Some(rep) = end_on_line_boundary(file, path)? {
            self.push_repair(rep);
        }
        let before = file
            .metadata()
            .map_err(|source| LogError::Read {
                path: path.to_path_buf(),
                source,
            })?
            .len();
        let mut sink = FileSink(file);
        write_durably(&mut sink, before, line).map_err(|f| f.into_error(path))?;
        if before == 0 {
            // A new file: make its directory entry durable too.
            sync_dir(&self.dir).map_err(|source| LogError::Sync {
                path: self.dir.clone(),
                source,
            })?;
        }
        Ok(())
    }

    /// Replay every target in this folder (see [`super::replay`]).
    ///
    /// # Errors
    /// As [`super::replay`].
    pub fn replay(&self) -> Result<Replay, LogError> {
        super::replay(&self.dir)
    }

    /// Replay one target only (cheap: reads one file).
    ///
    /// # Errors
    /// As [`super::replay_target`].
    pub fn target_state(&self, target: &str) -> Result<TargetState, LogError> {
        let mut r = super::replay_target(&self.dir, target)?;
        Ok(r.targets
            .remove(target)
            .unwrap_or_else(|| TargetState::empty(target)))
    }
}

/// The `.jsonl` files directly in `dir`, sorted by name.
pub(crate) fn log_files(dir: &Path) -> Result<Vec<PathBuf>, LogError> {
    let rd = std::fs::read_dir(dir).map_err(|source| LogError::Read {
        path: dir.to_path_buf(),
        source,
    })?;
    let mut out = Vec::new();
    for entry in rd {
        let entry = entry.map_err(|source| LogError::Read {
            path: dir.to_path_buf(),
            source,
        })?;
        let p = entry.path();
        let is_log = p
            .extension()
            .is_some_and(|e| e.eq_ignore_ascii_case(LOG_EXTENSION));
        let is_file = entry.file_type().map(|t| t.is_file()).unwrap_or(false);
        if is_log && is_file {
            out.push(p);
        }
    }
    out.sort();
    Ok(out)
}

/// Open a log file for reading and appending; refuse anything that is not a
/// plain file (a symbolic link or device planted in the folder).
fn open_log_file(path: &Path, create: bool) -> Result<File, LogError> {
    if let Ok(md) = std::fs::symlink_metadata(path) {
        if !md.file_type().is_file() {
            return Err(LogError::NotAFile {
                path: path.to_path_buf(),
            });
        }
    }
    let file = OpenOptions::new()
        .read(true)
        .append(true)
        .create(create)
        .open(path)
        .map_err(|source| LogError::Open {
            path: path.to_path_buf(),
            source,
        })?;
    let md = file.metadata().map_err(|source| LogError::Open {
        path: path.to_path_buf(),
        source,
    })?;
    if !md.is_file() {
        return Err(LogError::NotAFile {
            path: path.to_path_buf(),
        });
    }
    Ok(file)
}

/// Under the caller's exclusive lock: if the file does not end with a
/// newline, copy the unfinished tail to the side file (synced), then cut the
/// log back to just after its last newline (synced).
fn end_on_line_boundary(file: &File, path: &Path) -> Result<Option<Repair>, LogError> {
    let read_err = |source| LogError::Read {
        path: path.to_path_buf(),
        source,
    };
    let len = file.metadata().map_err(read_err)?.len();
    if len == 0 {
        return Ok(None);
    }
    let mut f = file;
    let mut last = [0u8; 1];
    f.seek(SeekFrom::Start(len - 1)).map_err(read_err)?;
    f.read_exact(&mut last).map_err(read_err)?;
    if last[0] == b'\n' {
        return Ok(None);
    }
    // Find the last newline, reading backwards in blocks.
    let mut keep = 0u64;
    let mut end = len;
    let mut buf = vec![0u8; 1 << 14];
    while end > 0 {
        let start = end.saturating_sub(buf.len() as u64);
        let n = (end - start) as usize;
        f.seek(SeekFrom::Start(start)).map_err(read_err)?;
        f.read_exact(&mut buf[..n]).map_err(read_err)?;
        if let Some(i) = buf[..n].iter().rposition(|&b| b == b'\n') {
            keep = start + i as u64 + 1;
            break;
        }
        end = start;
    }
    let mut tail = Vec::with_capacity((len - keep) as usize);
    f.seek(SeekFrom::Start(keep)).map_err(read_err)?;
    f.take(len - keep)
        .read_to_end(&mut tail)
        .map_err(read_err)?;

    let mut side_name = path.file_name().unwrap_or_default().to_os_string();
    side_name.push(TORN_SUFFIX);
    let side_file = path.with_file_name(side_name);
    let repair_err = |source| LogError::Repair {
        path: path.to_path_buf(),
        source,
    };
    let mut side = OpenOptions::new()
        .append(true)
        .create(true)
        .open(&side_file)
        .map_err(repair_err)?;
    tail.push(b'\n');
    side.write_all(&tail).map_err(repair_err)?;
    side.sync_data().map_err(repair_err)?;
    // Only now that the bytes are safe elsewhere is the log cut back.
    file.set_len(keep).map_err(repair_err)?;
    file.sync_data().map_err(repair_err)?;
    Ok(Some(Repair {
        file: path.to_path_buf(),
        bytes: len - keep,
        side_file,
    }))
}

#[cfg(unix)]
fn sync_dir(dir: &Path) -> std::io::Result<()> {
    File::open(dir)?.sync_all()
}

#[cfg(not(unix))]
fn sync_dir(_dir: &Path) -> std::io::Result<()> {
    // Windows has no directory fsync; NTFS journals the entry itself.
    Ok(())
}

/// What an append needs from the file; a trait so the failure paths
/// (short writes, full disk, failed fsync) can be exercised in unit tests.
pub(crate) trait Sink {
    /// Append bytes at the end (one `write` call; may be short).
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize>;
    /// Flush data to stable storage.
    fn sync(&mut self) -> std::io::Result<()>;
    /// Cut the file back to `len` bytes.
    fn truncate(&mut self, len: u64) -> std::io::Result<()>;
}

struct FileSink<'a>(&'a File);

impl Sink for FileSink<'_> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let mut f = self.0;
        f.write(buf)
    }
    fn sync(&mut self) -> std::io::Result<()> {
        self.0.sync_data()
    }
    fn truncate(&mut self, len: u64) -> std::io::Result<()> {
        self.0.set_len(len)?;
        self.0.sync_data()
    }
}

/// Why a durable write failed, and whether the log was restored.
#[derive(Debug)]
pub(crate) struct WriteFailure {
    pub(crate) during_sync: bool,
    pub(crate) source: std::io::Error,
    pub(crate) rolled_back: bool,
}

impl WriteFailure {
    fn into_error(self, path: &Path) -> LogError {
        let path = path.to_path_buf();
        let full = self.source.kind() == std::io::ErrorKind::StorageFull
            || self.source.raw_os_error() == Some(28);
        if full {
            LogError::DiskFull {
                path,
                rolled_back: self.rolled_back,
            }
        } else if self.during_sync {
            LogError::Sync {
                path,
                source: self.source,
            }
        } else {
            LogError::Write {
                path,
                source: self.source,
                rolled_back: self.rolled_back,
            }
        }
    }
}

/// Write `line` (normally in one `write`), then sync. On any failure, cut
/// the file back to `before` so no partial record stays behind.
pub(crate) fn write_durably<S: Sink>(
    sink: &mut S,
    before: u64,
    line: &[u8],
) -> Result<(), WriteFailure> {
    let mut done = 0usize;
    while done < line.len() {
        match sink.write(&line[done..]) {
            Ok(0) => {
                let source = std::io::Error::new(
                    std::io::ErrorKind::WriteZero,
                    "the file system accepted no more bytes",
                );
                return Err(fail(sink, before, source, false));
            }
            Ok(n) => done += n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(fail(sink, before, e, false)),
        }
    }
    if let Err(e) = sink.sync() {
        return Err(fail(sink, before, e, true));
    }
    Ok(())
}

fn fail<S: Sink>(
    sink: &mut S,
    before: u64,
    source: std::io::Error,
    during_sync: bool,
) -> WriteFailure {
    let rolled_back = sink.truncate(before).is_ok();
    WriteFailure {
        during_sync,
        source,
        rolled_back,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An in-memory file that accepts `room` more bytes, then fails like a
    /// full disk; optionally fails its fsync.
    struct Tight {
        data: Vec<u8>,
        room: usize,
        sync_fails: bool,
    }

    impl Sink for Tight {
        fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
            if self.room == 0 {
                return Err(std::io::Error::from_raw_os_error(28));
            }
            let n = buf.len().min(self.room);
            self.room -= n;
            self.data.extend_from_slice(&buf[..n]);
            Ok(n)
        }
        fn sync(&mut self) -> std::io::Result<()> {
            if self.sync_fails {
                Err(std::io::Error::other("I/O error during fsync"))
            } else {
                Ok(())
            }
        }
        fn truncate(&mut self, len: u64) -> std::io::Result<()> {
            self.data.truncate(len as usize);
            Ok(())
        }
    }

    #[test]
    fn a_short_write_on_a_full_disk_is_cut_back_to_the_earlier_lines() {
        let mut s = Tight {
            data: b"{\"a\":1}\n".to_vec(),
            room: 5,
            sync_fails: false,
        };
        let err = write_durably(&mut s, 8, b"{\"b\":2222222}\n").expect_err("must fail");
        assert!(err.rolled_back);
        assert_eq!(err.source.raw_os_error(), Some(28));
        assert_eq!(s.data, b"{\"a\":1}\n");
        let e = err.into_error(Path::new("x.jsonl"));
        assert!(
            matches!(
                e,
                LogError::DiskFull {
                    rolled_back: true,
                    ..
                }
            ),
            "{e}"
        );
    }

    #[test]
    fn a_failed_fsync_is_reported_and_the_unsynced_line_removed() {
        let mut s = Tight {
            data: Vec::new(),
            room: 1000,
            sync_fails: true,
        };
        let err = write_durably(&mut s, 0, b"{\"b\":2}\n").expect_err("must fail");
        assert!(err.during_sync && err.rolled_back);
        assert!(s.data.is_empty());
    }

    #[test]
    fn log_file_names_never_leave_the_folder_and_keep_distinct_names_apart() {
        let long = "x".repeat(5000);
        let names = [
            "../x",
            "../../etc/passwd",
            "/abs/path",
            "C:\\Windows\\x",
            "a\u{0}b",
            ".",
            "..",
            "",
            long.as_str(),
            "Ørla-17 ☉",
            "orla-17",
            "ORLA-17",
            "Orla 17",
            "Orla_17",
        ];
        let mut seen = std::collections::HashSet::new();
        for n in names {
            let f = log_file_name(n);
            assert!(
                !f.contains('/') && !f.contains('\\') && !f.contains('\0'),
                "{n:?} -> {f}"
            );
            assert!(!f.starts_with('.'), "{n:?} -> {f}");
            assert!(f.len() <= 100, "{n:?} -> {} bytes", f.len());
            let p = Path::new("/logs").join(&f);
            assert_eq!(p.parent(), Some(Path::new("/logs")), "{n:?} -> {f}");
            assert!(seen.insert(f), "{n:?} collides");
        }
    }
}
