//! `zsift decide`: record decisions from a script, or accept batch answers
//! in bulk.
//!
//! Output contract: one line per record on standard output, `saved <target>`,
//! printed only after the record is on disk; in bulk mode also one line
//! `skipped <target>: <why>` (or `skipped line N: <why>`) per input not
//! accepted. Exit codes: 0 all done; 2 usage error; 3 (bulk mode) some
//! inputs were skipped, the rest saved; 1 any other failure (nothing
//! reported as saved is lost).

use anyhow::Context;
use std::io::Write;
use std::path::PathBuf;
use zsift::decisions::{Action, Fingerprint, Log, Record, Solution, Source, Status, observer_name};
use zsift::identify::Grade;
use zsift::lines::ObjectClass;
use zsift::queue::{ScanEntry, read_scan};
use zsift::text::clean;

/// What to record (`--action`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ActionArg {
    /// Accept the solution given (--z, --class ...).
    Accept,
    /// Reject the target (no usable answer).
    Reject,
    /// Flag the target for re-observation.
    Flag,
    /// Accept a class / redshift set by hand.
    Reclassify,
    /// Record a remark (--note) only.
    Note,
    /// Cancel your own latest record on the target.
    Undo,
}

/// Object class on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ClassArg {
    /// A star.
    Star,
    /// A galaxy.
    Galaxy,
    /// A quasar.
    Qso,
    /// Not classifiable.
    Unknown,
}

impl From<ClassArg> for ObjectClass {
    fn from(c: ClassArg) -> ObjectClass {
        match c {
            ClassArg::Star => ObjectClass::Star,
            ClassArg::Galaxy => ObjectClass::Galaxy,
            ClassArg::Qso => ObjectClass::Qso,
            ClassArg::Unknown => ObjectClass::Unknown,
        }
    }
}

/// Trust grade on the command line (high > good > fair > poor).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum GradeArg {
    /// Many consistent features.
    High,
    /// Several consistent features.
    Good,
    /// Some support.
    Fair,
    /// Little support.
    Poor,
}

impl From<GradeArg> for Grade {
    fn from(g: GradeArg) -> Grade {
        match g {
            GradeArg::High => Grade::High,
            GradeArg::Good => Grade::Good,
            GradeArg::Fair => Grade::Fair,
            GradeArg::Poor => Grade::Poor,
        }
    }
}

/// Options of `zsift decide`.
#[derive(Debug, clap::Args)]
#[command(group(clap::ArgGroup::new("mode").required(true).args(["target", "from"])))]
pub struct Args {
    /// The decision-log folder (created if missing).
    #[arg(long, value_name = "DIR")]
    pub log: PathBuf,
    /// Target to record a decision for.
    #[arg(long, value_name = "NAME", requires = "action")]
    pub target: Option<String>,
    /// What to record.
    #[arg(long, value_enum, value_name = "ACTION")]
    pub action: Option<ActionArg>,
    /// Redshift of the solution.
    #[arg(long, value_name = "Z", allow_negative_numbers = true)]
    pub z: Option<f64>,
    /// 1-sigma error of the redshift.
    #[arg(long, value_name = "ERR")]
    pub z_err: Option<f64>,
    /// Class of the solution.
    #[arg(long, value_enum, value_name = "CLASS")]
    pub class: Option<ClassArg>,
    /// Subclass (free text).
    #[arg(long, value_name = "TEXT")]
    pub subclass: Option<String>,
    /// Grade you give the solution.
    #[arg(long, value_enum, value_name = "GRADE")]
    pub grade: Option<GradeArg>,
    /// The solution is the scan's candidate of this rank (default: set by hand).
    #[arg(long, value_name = "N")]
    pub rank: Option<u32>,
    /// A remark to record (required for --action note).
    #[arg(long, value_name = "TEXT")]
    pub note: Option<String>,
    /// Spectrum file the decision is about (its fingerprint is recorded).
    #[arg(long, value_name = "FILE")]
    pub input: Option<PathBuf>,
    /// Your name (default: the login name).
    #[arg(long, value_name = "NAME")]
    pub observer: Option<String>,
    /// Bulk mode: a `zsift scan` JSON Lines output.
    #[arg(long, value_name = "SCAN.jsonl", requires = "accept_grade", conflicts_with_all = ["target", "action"])]
    pub from: Option<PathBuf>,
    /// Bulk mode: accept rank-1 answers of at least this grade.
    #[arg(long, value_enum, value_name = "GRADE")]
    pub accept_grade: Option<GradeArg>,
    /// Bulk mode: also accept targets that already have a decision.
    #[arg(long)]
    pub include_decided: bool,
}

/// Run `zsift decide`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let observer = observer_name(args.observer.as_deref());
    if let Some(from) = &args.from {
        let Some(floor) = args.accept_grade else {
            eprintln!("zsift decide: --from needs --accept-grade");
            return Ok(2);
        };
        return bulk(args, from, floor.into(), &observer);
    }
    let (Some(target), Some(action)) = (args.target.as_deref(), args.action) else {
        eprintln!(
            "zsift decide: give --target NAME --action ACTION, or --from SCAN.jsonl --accept-grade GRADE"
        );
        return Ok(2);
    };
    if target.trim().is_empty() {
        eprintln!("zsift decide: the target name is empty");
        return Ok(2);
    }
    let solution = Solution {
        z: args.z,
        z_err: args.z_err,
        class: args.class.map(Into::into),
        subclass: args.subclass.clone(),
        grade: args.grade.map(Into::into),
        ..Solution::default()
    };
    let has_solution = solution != Solution::default();
    if let Some(z) = args.z {
        if !z.is_finite() || z <= -1.0 {
            eprintln!("zsift decide: --z {z} is not a redshift (must be finite and above -1)");
            return Ok(2);
        }
    }
    let source = match args.rank {
        Some(rank) => Source::Candidate { rank },
        None => Source::Hand,
    };
    let log = open_log(&args.log)?;
    let mut record = match action {
        ActionArg::Accept => Record::accept(target, &observer, solution, source),
        ActionArg::Reclassify => {
            if args.class.is_none() && args.z.is_none() {
                eprintln!("zsift decide: --action reclassify needs --class and/or --z");
                return Ok(2);
            }
            Record::reclassify(target, &observer, solution)
        }
        ActionArg::Reject | ActionArg::Note | ActionArg::Undo if has_solution => {
            eprintln!(
                "zsift decide: --action {} takes no solution (--z, --class, --grade ...)",
                action_name(action)
            );
            return Ok(2);
        }
        ActionArg::Reject => Record::reject(target, &observer),
        ActionArg::Flag => {
            let r = Record::flag(target, &observer);
            if has_solution {
                r.with_solution(solution, source)
            } else {
                r
            }
        }
        ActionArg::Note => match args.note.as_deref() {
            Some(text) if !text.trim().is_empty() => Record::note(target, &observer, text),
            _ => {
                eprintln!("zsift decide: --action note needs --note TEXT");
                return Ok(2);
            }
        },
        ActionArg::Undo => {
            let state = log.target_state(target)?;
            let Some(last) = state.last_standing_by(&observer) else {
                anyhow::bail!(
                    "nothing of yours ({}) to undo on target {}",
                    clean(&observer),
                    clean(target)
                );
            };
            Record::undo(target, &observer, &last.id)
        }
    };
    if let (Some(text), false) = (args.note.as_deref(), action == ActionArg::Note) {
        record = record.with_note(text);
    }
    if let Some(input) = &args.input {
        let fp = Fingerprint::of_file(input)
            .with_context(|| format!("cannot fingerprint the input file {}", input.display()))?;
        record = record.with_input(fp);
    }
    record = record.with_via("decide");
    log.append(&record)?;
    report_repairs(&log);
    saved(target)?;
    Ok(0)
}

fn action_name(a: ActionArg) -> &'static str {
    match a {
        ActionArg::Accept => Action::Accept.as_str(),
        ActionArg::Reject => Action::Reject.as_str(),
        ActionArg::Flag => Action::Flag.as_str(),
        ActionArg::Reclassify => Action::Reclassify.as_str(),
        ActionArg::Note => Action::Note.as_str(),
        ActionArg::Undo => Action::Undo.as_str(),
    }
}

fn open_log(dir: &std::path::Path) -> anyhow::Result<Log> {
    let log = Log::open(dir)?;
    report_repairs(&log);
    Ok(log)
}

fn report_repairs(log: &Log) {
    for r in log.take_repairs() {
        eprintln!("zsift decide: note: {}", clean(&r.to_string()));
    }
}

/// Print `saved <target>` and flush, so a reader of the pipe sees it at once.
fn saved(target: &str) -> anyhow::Result<()> {
    let mut out = std::io::stdout().lock();
    writeln!(out, "saved {}", clean(target))?;
    out.flush()?;
    Ok(())
}

fn skipped(what: &str, why: &str) -> anyhow::Result<()> {
    let mut out = std::io::stdout().lock();
    writeln!(out, "skipped {}: {}", clean(what), clean(why))?;
    out.flush()?;
    Ok(())
}

/// Why a scan entry is not accepted in bulk, or `None` to accept it.
fn skip_reason(
    e: &ScanEntry,
    floor: Grade,
    status: Status,
    by: &[&str],
    include_decided: bool,
) -> Option<String> {
    let s = &e.summary;
    if !s.ok {
        return Some(format!(
            "the scan could not use this input ({})",
            s.error.as_deref().unwrap_or("no reason given")
        ));
    }
    let Some(best) = s.best() else {
        return Some("the scan found no candidate".to_string());
    };
    let Some(grade) = best.grade else {
        return Some("the rank-1 candidate has no grade".to_string());
    };
    if grade < floor {
        return Some(format!(
            "rank-1 grade {} is below {}",
            grade.as_str(),
            floor.as_str()
        ));
    }
    if status.is_decided() && !include_decided {
        let who = if by.is_empty() {
            String::new()
        } else {
            format!(" by {}", by.join(", "))
        };
        return Some(format!(
            "already {}{who} (use --include-decided to accept anyway)",
            status.as_str()
        ));
    }
    None
}

fn bulk(args: &Args, from: &std::path::Path, floor: Grade, observer: &str) -> anyhow::Result<u8> {
    let scan = read_scan(from)?;
    let log = open_log(&args.log)?;
    let replay = log.replay()?;
    for p in &replay.problems {
        eprintln!("zsift decide: warning: {}", clean(&p.to_string()));
    }
    let mut saved_n = 0usize;
    let mut skipped_n = 0usize;
    for (line, why) in &scan.problems {
        skipped(&format!("line {line}"), why)?;
        skipped_n += 1;
    }
    let mut done_now: std::collections::HashSet<String> = std::collections::HashSet::new();
    for e in &scan.entries {
        let (status, by) = if done_now.contains(&e.target) {
            (Status::Accepted, vec![observer])
        } else {
            match replay.state(&e.target) {
                Some(st) => (st.status, st.observers()),
                None => (Status::Undecided, Vec::new()),
            }
        };
        let include = args.include_decided && !done_now.contains(&e.target);
        if let Some(why) = skip_reason(e, floor, status, &by, include) {
            skipped(&e.target, &why)?;
            skipped_n += 1;
            continue;
        }
        let Some(best) = e.summary.best() else {
            continue;
        };
        let solution = Solution {
            z: Some(best.z),
            z_err: best.z_err,
            class: best.class,
            subclass: best.subclass.clone(),
            grade: best.grade,
            lines: best.lines.clone(),
            z_bary: best.z_bary,
            velocity_bary_kms: best.velocity_bary_kms,
            barycentric_correction_kms: e.summary.barycentric_correction_kms,
        };
        let mut record = Record::accept(
            &e.target,
            observer,
            solution,
            Source::Candidate { rank: best.rank },
        )
        .with_via("decide-bulk");
        if let Ok(fp) = Fingerprint::of_file(&e.path) {
            record = record.with_input(fp);
        }
        if let Err(err) = log.append(&record) {
            eprintln!(
                "zsift decide: stopped at {} (line {}): {}; {saved_n} saved before it",
                clean(&e.target),
                e.line,
                clean(&err.to_string())
            );
            return Ok(1);
        }
        report_repairs(&log);
        saved(&e.target)?;
        saved_n += 1;
        done_now.insert(e.target.clone());
    }
    eprintln!(
        "zsift decide: {saved_n} accepted, {skipped_n} skipped (from {})",
        clean(&from.display().to_string())
    );
    Ok(if skipped_n > 0 { 3 } else { 0 })
}
