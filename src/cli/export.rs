//! `zsift export`: the current state of every target in a decision log, as
//! CSV (formula-safe) or JSON Lines, or a one-screen tally (`--tally`).
//!
//! Exit codes: 0 done; 3 done, but some log lines could not be used (each is
//! reported on standard error with file and line); 2 usage; 1 failure.

use anyhow::Context;
use std::io::Write;
use std::path::{Path, PathBuf};
use zsift::decisions::export::{Tally, rows, write_csv, write_jsonl};
use zsift::decisions::replay;
use zsift::queue::Queue;
use zsift::text::clean;

/// Export format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Comma-separated, one header line; safe to open in a spreadsheet.
    Csv,
    /// One JSON object per line.
    Jsonl,
}

/// Options of `zsift export`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The decision-log folder.
    #[arg(long, value_name = "DIR")]
    pub log: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value = "csv", value_name = "FORMAT")]
    pub format: Format,
    /// Write here (atomically: a temporary file renamed into place) instead
    /// of standard output.
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Print a one-screen tally (decided / undecided / by class / by
    /// observer) instead of the rows.
    #[arg(long)]
    pub tally: bool,
    /// With --tally: count the targets of this queue (queue file, scan output
    /// or folder), so untouched targets count as undecided.
    #[arg(long, value_name = "QUEUE", requires = "tally")]
    pub queue: Option<PathBuf>,
}

/// Run `zsift export`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let state = replay(&args.log)?;
    for p in &state.problems {
        eprintln!("zsift export: warning: {}", clean(&p.to_string()));
    }
    let mut buf: Vec<u8> = Vec::new();
    if args.tally {
        let names: Option<Vec<String>> = match &args.queue {
            Some(q) => Some(
                Queue::open(q)?
                    .items()
                    .iter()
                    .map(|i| i.target.clone())
                    .collect(),
            ),
            None => None,
        };
        let t = Tally::of(&state, names.as_deref());
        write!(buf, "{t}")?;
    } else {
        let rows = rows(&state);
        match args.format {
            Format::Csv => write_csv(&mut buf, &rows)?,
            Format::Jsonl => write_jsonl(&mut buf, &rows)?,
        }
    }
    match &args.out {
        Some(path) => write_atomically(path, &buf)?,
        None => {
            let mut out = std::io::stdout().lock();
            out.write_all(&buf)?;
            out.flush()?;
        }
    }
    Ok(if state.problems.is_empty() { 0 } else { 3 })
}

fn write_atomically(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "export".to_string());
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
    let result = (|| -> std::io::Result<()> {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result.with_context(|| format!("cannot write {}", path.display()))
}
