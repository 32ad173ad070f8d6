//! `zsift lines`: print the line catalogue, the foreground (sky and telluric)
//! features, the fixed ratios, or a computed hydrogen-like series, as a
//! readable table or as CSV.
//!
//! With `--z` every wavelength is also given in the observed frame: the
//! vacuum wavelength is shifted, `obs = rest (1 + z)`, and the observed air
//! wavelength is converted from that (air/vacuum is not linear, so shifting
//! the rest air wavelength would be slightly wrong).

use std::io::Write;
use std::path::PathBuf;

use anyhow::Context;
use zsift::lines::{self, Catalogue, LineKind, ObjectClass, Width, builtin::Annotated};
use zsift::physics::airvac::vacuum_to_air;
use zsift::physics::hydrogen::{Ion, Series};
use zsift::text::clean;

/// Output format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Aligned columns for reading.
    Table,
    /// Comma-separated values with a header row.
    Csv,
}

/// Which object class to keep.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ClassArg {
    /// Lines seen in stars.
    Star,
    /// Lines seen in galaxies.
    Galaxy,
    /// Lines seen in quasars.
    Qso,
}

/// Options of `zsift lines`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table, value_name = "FORMAT")]
    pub format: Format,
    /// Also give observed wavelengths at this redshift.
    #[arg(long, value_name = "Z", allow_negative_numbers = true, value_parser = parse_z)]
    pub z: Option<f64>,
    /// Keep only lines whose wavelength (observed when --z is given, vacuum
    /// Angstrom) lies in LO:HI.
    #[arg(long, value_name = "LO:HI", value_parser = parse_range)]
    pub range: Option<(f64, f64)>,
    /// Print a computed hydrogen-like series instead of the catalogue:
    /// Lyman, Balmer, Paschen, Brackett, Pfund, Humphreys (or Ly, H, Pa, Br,
    /// Pf, Hu).
    #[arg(long, value_name = "NAME", value_parser = parse_series)]
    pub series: Option<Series>,
    /// The ion of --series: H, D or He+.
    #[arg(long, value_name = "ION", default_value = "H", value_parser = parse_ion)]
    pub ion: Ion,
    /// Highest upper level printed for --series.
    #[arg(long, value_name = "N", default_value_t = 20)]
    pub max_n: u32,
    /// Merge a user line list into the catalogue (same names replace
    /// built-in lines). May be given more than once.
    #[arg(long, value_name = "PATH")]
    pub file: Vec<PathBuf>,
    /// Use only this user line list instead of the built-in lines.
    #[arg(long, value_name = "PATH", conflicts_with = "file")]
    pub only_file: Option<PathBuf>,
    /// Keep only lines seen in this class of object.
    #[arg(long, value_enum, value_name = "CLASS")]
    pub class: Option<ClassArg>,
    /// Print the observed-frame sky lines and telluric bands instead.
    #[arg(long, conflicts_with_all = ["series", "ratios"])]
    pub foreground: bool,
    /// Print the fixed line ratios instead.
    #[arg(long, conflicts_with = "series")]
    pub ratios: bool,
}

fn parse_z(s: &str) -> Result<f64, String> {
    let z: f64 = s
        .trim()
        .parse()
        .map_err(|_| format!("'{s}' is not a number"))?;
    if !z.is_finite() || z <= -1.0 {
        return Err(format!("redshift must be finite and > -1 (got {s})"));
    }
    Ok(z)
}

fn parse_range(s: &str) -> Result<(f64, f64), String> {
    let (a, b) = s
        .split_once(':')
        .ok_or_else(|| format!("'{s}' is not LO:HI (e.g. 3800:9200)"))?;
    let lo: f64 = a
        .trim()
        .parse()
        .map_err(|_| format!("'{a}' is not a number"))?;
    let hi: f64 = b
        .trim()
        .parse()
        .map_err(|_| format!("'{b}' is not a number"))?;
    if !(lo.is_finite() && hi.is_finite()) || lo >= hi {
        return Err(format!("range {s}: need finite LO < HI"));
    }
    Ok((lo, hi))
}

fn parse_series(s: &str) -> Result<Series, String> {
    Series::parse(s).map_err(|e| e.to_string())
}

fn parse_ion(s: &str) -> Result<Ion, String> {
    Ion::by_name(s).map_err(|e| e.to_string())
}

/// One output table: header and rows of cells.
struct Table {
    header: Vec<&'static str>,
    rows: Vec<Vec<String>>,
    /// Columns left out of the readable table (they stay in CSV).
    csv_only: Vec<&'static str>,
}

impl Table {
    fn write(&self, out: &mut dyn Write, format: Format) -> std::io::Result<()> {
        match format {
            Format::Csv => {
                let head: Vec<String> = self.header.iter().map(|h| h.to_string()).collect();
                writeln!(out, "{}", csv_row(&head))?;
                for r in &self.rows {
                    writeln!(out, "{}", csv_row(r))?;
                }
                out.flush()
            }
            Format::Table => {
                let keep: Vec<usize> = (0..self.header.len())
                    .filter(|&i| !self.csv_only.contains(&self.header[i]))
                    .collect();
                let pick = |r: &[String]| keep.iter().map(|&i| r[i].clone()).collect::<Vec<_>>();
                let header: Vec<&str> = keep.iter().map(|&i| self.header[i]).collect();
                let rows: Vec<Vec<String>> = self.rows.iter().map(|r| pick(r)).collect();
                let mut widths: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
                for r in &rows {
                    for (i, c) in r.iter().enumerate() {
                        widths[i] = widths[i].max(c.chars().count());
                    }
                }
                let line = |cells: &[String]| {
                    let mut s = String::new();
                    for (i, c) in cells.iter().enumerate() {
                        let pad = widths[i].saturating_sub(c.chars().count());
                        let numeric = c.parse::<f64>().is_ok();
                        if i > 0 {
                            s.push_str("  ");
                        }
                        if numeric {
                            s.push_str(&" ".repeat(pad));
                            s.push_str(c);
                        } else {
                            s.push_str(c);
                            s.push_str(&" ".repeat(pad));
                        }
                    }
                    s.trim_end().to_string()
                };
                let head: Vec<String> = header.iter().map(|h| h.to_string()).collect();
                writeln!(out, "{}", line(&head))?;
                for r in &rows {
                    writeln!(out, "{}", line(r))?;
                }
                Ok(())
            }
        }
    }
}

/// One CSV row (RFC 4180 quoting: fields with a comma, quote or line break
/// are quoted, quotes doubled).
fn csv_row(cells: &[String]) -> String {
    cells
        .iter()
        .map(|c| {
            if c.contains([',', '"', '\n', '\r']) {
                format!("\"{}\"", c.replace('"', "\"\""))
            } else {
                c.clone()
            }
        })
        .collect::<Vec<_>>()
        .join(",")
}

fn kind_str(k: LineKind) -> &'static str {
    match k {
        LineKind::Emission => "emission",
        LineKind::Absorption => "absorption",
        LineKind::Both => "both",
    }
}

fn width_str(w: Width) -> &'static str {
    match w {
        Width::Narrow => "narrow",
        Width::Broad => "broad",
    }
}

fn class_of(c: ClassArg) -> ObjectClass {
    match c {
        ClassArg::Star => ObjectClass::Star,
        ClassArg::Galaxy => ObjectClass::Galaxy,
        ClassArg::Qso => ObjectClass::Qso,
    }
}

fn f4(x: f64) -> String {
    format!("{x:.4}")
}

fn in_range(args: &Args, observed_vacuum: f64) -> bool {
    args.range
        .is_none_or(|(lo, hi)| observed_vacuum >= lo && observed_vacuum <= hi)
}

/// Build the catalogue the options ask for, with sources where known.
fn catalogue(args: &Args) -> anyhow::Result<(Catalogue, Vec<Annotated>)> {
    let mut cat = lines::builtin();
    let annotated = lines::builtin::annotated();
    if let Some(p) = &args.only_file {
        let user = lines::load_file(p)?;
        cat.replace_lines(user);
    }
    for p in &args.file {
        let user = lines::load_file(p)?;
        cat.merge_lines(user);
    }
    Ok((cat, annotated))
}

fn lines_table(args: &Args) -> anyhow::Result<Table> {
    let (cat, annotated) = catalogue(args)?;
    let mut header = vec![
        "name",
        "species",
        "wavelength_vacuum",
        "wavelength_air",
        "kind",
        "strength",
        "width",
        "group",
        "classes",
    ];
    if args.z.is_some() {
        header.extend(["observed_vacuum", "observed_air"]);
    }
    header.push("source");
    let s = 1.0 + args.z.unwrap_or(0.0);
    let mut rows = Vec::new();
    for l in &cat.lines {
        if let Some(c) = args.class {
            if !l.classes.contains(&class_of(c)) {
                continue;
            }
        }
        let obs = l.wavelength * s;
        if !in_range(args, obs) {
            continue;
        }
        // A built-in line keeps its source only if the user did not replace it.
        let source = annotated
            .iter()
            .find(|a| a.line == *l)
            .map_or("user file", |a| a.source);
        let classes: Vec<&str> = l.classes.iter().map(|c| c.as_str()).collect();
        let mut row = vec![
            clean(&l.name),
            clean(&l.species),
            f4(l.wavelength),
            f4(l.wavelength_air()),
            kind_str(l.kind).to_string(),
            format!("{:.2}", l.strength),
            width_str(l.width).to_string(),
            clean(l.group.as_deref().unwrap_or("")),
            classes.join(" "),
        ];
        if args.z.is_some() {
            row.push(f4(obs));
            row.push(f4(vacuum_to_air(obs)));
        }
        row.push(source.to_string());
        rows.push(row);
    }
    Ok(Table {
        header,
        rows,
        csv_only: vec!["species", "classes", "source"],
    })
}

fn series_table(args: &Args, series: Series) -> anyhow::Result<Table> {
    let ion = &args.ion;
    let nl = series.lower();
    let mut header = vec![
        "name",
        "ion",
        "n_lower",
        "n_upper",
        "wavelength_vacuum",
        "wavelength_air",
        "kind",
        "energy_ev",
        "wavenumber_per_cm",
    ];
    if args.z.is_some() {
        header.extend(["observed_vacuum", "observed_air"]);
    }
    let s = 1.0 + args.z.unwrap_or(0.0);
    let mut ts = Vec::new();
    for nu in nl + 1..=args.max_n {
        ts.push(ion.transition(nl, nu).context("computing the series")?);
    }
    ts.push(ion.series_limit(nl).context("computing the series limit")?);
    let mut rows = Vec::new();
    for t in ts {
        let obs = t.vacuum_angstrom * s;
        if !in_range(args, obs) {
            continue;
        }
        let mut row = vec![
            t.name(),
            ion.species.clone(),
            t.n_lower.to_string(),
            t.n_upper.map_or("inf".to_string(), |n| n.to_string()),
            f4(t.vacuum_angstrom),
            f4(t.air_angstrom),
            if t.n_upper.is_some() { "both" } else { "limit" }.to_string(),
            format!("{:.6}", t.energy_ev),
            format!("{:.3}", t.wavenumber_per_cm),
        ];
        if args.z.is_some() {
            row.push(f4(obs));
            row.push(f4(vacuum_to_air(obs)));
        }
        rows.push(row);
    }
    Ok(Table {
        header,
        rows,
        csv_only: vec![],
    })
}

fn foreground_table(args: &Args) -> Table {
    let header = vec![
        "name",
        "kind",
        "lo_vacuum",
        "hi_vacuum",
        "lo_air",
        "hi_air",
        "strength",
        "source",
    ];
    let mut rows = Vec::new();
    for (f, lo_air, hi_air, source) in lines::builtin::foreground_annotated() {
        // Foreground features are observed-frame: --z does not move them.
        if let Some((lo, hi)) = args.range {
            if f.hi < lo || f.lo > hi {
                continue;
            }
        }
        rows.push(vec![
            f.name.clone(),
            match f.kind {
                lines::ForegroundKind::Sky => "sky",
                lines::ForegroundKind::Telluric => "telluric",
            }
            .to_string(),
            f4(f.lo),
            f4(f.hi),
            f4(lo_air),
            f4(hi_air),
            format!("{:.2}", f.strength),
            source.to_string(),
        ]);
    }
    Table {
        header,
        rows,
        csv_only: vec!["source"],
    }
}

fn ratios_table(args: &Args) -> anyhow::Result<Table> {
    let (cat, _) = catalogue(args)?;
    let header = vec!["numerator", "denominator", "value", "min", "max", "source"];
    let rows = cat
        .ratios
        .iter()
        .map(|r| {
            vec![
                r.numerator.clone(),
                r.denominator.clone(),
                format!("{}", r.value),
                format!("{}", r.range.0),
                format!("{}", r.range.1),
                r.source.clone(),
            ]
        })
        .collect();
    Ok(Table {
        header,
        rows,
        csv_only: vec![],
    })
}

/// Run `zsift lines`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let table = if let Some(series) = args.series {
        series_table(args, series)?
    } else if args.foreground {
        foreground_table(args)
    } else if args.ratios {
        ratios_table(args)?
    } else {
        lines_table(args)?
    };
    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    match table.write(&mut out, args.format) {
        Ok(()) => Ok(0),
        // A closed pipe (`zsift lines | head`) is not a failure.
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(0),
        Err(e) => Err(e).context("writing the table"),
    }
}
