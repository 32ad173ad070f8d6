//! `zsift scan`: the identifier headless over many spectra.
//!
//! Exit status: 0 when every input was read; 3 when one or more were rejected
//! (the rest are still processed and reported); 2 for a usage error
//! (including no inputs found); 1 when the output cannot be written.

use std::io::{IsTerminal, Write};
use std::path::PathBuf;
use zsift::identify::{Identifier, Settings};
use zsift::scan::{self, Format, Shard, Writer};
use zsift::spectrum::{MediumChoice, ReadOptions};

/// Output format of `zsift scan`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FormatArg {
    /// One JSON object per input, one line each.
    Jsonl,
    /// One CSV row per input with the rank-1 answer and key figures.
    Csv,
}

/// Medium assumed for files that do not declare theirs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum MediumArg {
    /// Use what the file declares; undeclared files are taken as vacuum, with a warning.
    Auto,
    /// Undeclared files are in air (converted to vacuum).
    Air,
    /// Undeclared files are in vacuum.
    Vacuum,
}

/// Options of `zsift scan`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Spectrum files, or directories searched recursively for
    /// .fits .fit .fts .csv .tsv .txt .dat (content-checked).
    #[arg(value_name = "INPUT", required = true)]
    pub inputs: Vec<PathBuf>,
    /// Output format.
    #[arg(long, value_enum, default_value = "jsonl", value_name = "FORMAT")]
    pub format: FormatArg,
    /// Write here instead of standard output.
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Medium for files that do not declare it.
    #[arg(long, value_enum, default_value = "auto", value_name = "MEDIUM")]
    pub medium: MediumArg,
    /// Worker threads (default: all cores).
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u32).range(1..=1024))]
    pub jobs: Option<u32>,
    /// Only the K-th of N contiguous slices of the sorted input list (K from 1).
    #[arg(long, value_name = "K/N", value_parser = parse_shard)]
    pub shard: Option<Shard>,
    /// Join shard outputs instead of scanning: the INPUTs are the JSON Lines
    /// (or CSV) outputs of shards 1/N..N/N, given in shard order.
    #[arg(long, conflicts_with_all = ["shard", "medium", "jobs"])]
    pub merge: bool,
    /// What the barycentric correction needs, for files that lack it.
    #[command(flatten)]
    pub bary: super::bary_opts::BaryOpts,
}

fn parse_shard(s: &str) -> Result<Shard, String> {
    s.parse::<Shard>().map_err(|e| e.to_string())
}

fn output(args: &Args) -> anyhow::Result<Box<dyn Write>> {
    Ok(match &args.out {
        Some(p) => Box::new(std::io::BufWriter::new(
            std::fs::File::create(p)
                .map_err(|e| anyhow::anyhow!("cannot create {}: {e}", p.display()))?,
        )),
        None => Box::new(std::io::BufWriter::new(std::io::stdout().lock())),
    })
}

/// Run `zsift scan`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    if args.merge {
        return merge(args);
    }
    let all = scan::find_inputs(&args.inputs);
    if all.is_empty() {
        eprintln!("zsift scan: no spectrum files found in the inputs given");
        return Ok(2);
    }
    let inputs = match args.shard {
        Some(s) => s.select(&all),
        None => all,
    };
    let opts = scan::Options {
        read: ReadOptions {
            medium: match args.medium {
                MediumArg::Auto => MediumChoice::Auto,
                MediumArg::Air => MediumChoice::Air,
                MediumArg::Vacuum => MediumChoice::Vacuum,
            },
        },
        bary: match args.bary.overrides(super::bary_opts::configured_sites()?) {
            Ok(b) => b,
            Err(e) => {
                // A bad --obs-time, --exptime or --site is a usage error.
                eprintln!("zsift scan: {}", zsift::text::clean(&format!("{e:#}")));
                return Ok(2);
            }
        },
    };
    let jobs = args.jobs.map(|j| j as usize).unwrap_or_else(|| {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
    });
    let identifier = Identifier::new(&zsift::lines::builtin(), Settings::default());
    let format = match args.format {
        FormatArg::Jsonl => Format::Jsonl,
        FormatArg::Csv => Format::Csv,
    };
    let mut writer = Writer::new(format, output(args)?)?;
    let bar = if std::io::stderr().is_terminal() {
        let b = indicatif::ProgressBar::new(inputs.len() as u64);
        if let Ok(style) = indicatif::ProgressStyle::with_template(
            "{bar:30} {pos}/{len} spectra  {per_sec}  {eta} left",
        ) {
            b.set_style(style);
        }
        Some(b)
    } else {
        None
    };
    let tick = |_: &scan::Record| {
        if let Some(b) = &bar {
            b.inc(1);
        }
    };
    let summary = scan::run(
        &inputs,
        &identifier,
        &opts,
        jobs,
        |r| writer.write(r),
        &tick,
    )?;
    writer.flush()?;
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    eprintln!("zsift scan: {}", summary.line());
    Ok(if summary.rejected > 0 { 3 } else { 0 })
}

fn merge(args: &Args) -> anyhow::Result<u8> {
    let mut out = output(args)?;
    let csv = args.format == FormatArg::Csv;
    let parts: Vec<(usize, PathBuf)> = args
        .inputs
        .iter()
        .enumerate()
        .map(|(i, p)| (i + 1, p.clone()))
        .collect();
    let n = if csv {
        let mut n = 0;
        for (k, p) in &parts {
            let text =
                std::fs::read_to_string(p).map_err(|e| anyhow::anyhow!("{}: {e}", p.display()))?;
            let mut lines = text.lines();
            let header = lines.next().unwrap_or_default();
            if *k == 1 {
                writeln!(out, "{header}")?;
            }
            for l in lines {
                writeln!(out, "{l}")?;
                n += 1;
            }
        }
        n
    } else {
        scan::merge_shards(&parts, &mut out)?
    };
    out.flush()?;
    eprintln!(
        "zsift scan --merge: {n} records from {} shard outputs",
        parts.len()
    );
    Ok(0)
}
