//! Export of the current state (one row per target) and the tally.
//!
//! CSV cells that a spreadsheet would run as a formula (those starting with
//! `=`, `+`, `-`, `@`, tab or carriage return) get a leading apostrophe,
//! except plain numbers such as `-0.00012`, which stay numbers.

use super::replay::{Replay, Status, TargetState};
use serde::Serialize;
use std::borrow::Cow;
use std::collections::BTreeMap;
use std::io::Write;

/// One exported target.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Row {
    /// Exact target name.
    pub target: String,
    /// `undecided`, `accepted`, `rejected`, `flagged` or `conflict`.
    pub status: String,
    /// Class of the agreed solution.
    pub class: Option<String>,
    /// Subclass.
    pub subclass: Option<String>,
    /// Redshift.
    pub z: Option<f64>,
    /// Its error.
    pub z_err: Option<f64>,
    /// Grade of the solution.
    pub grade: Option<String>,
    /// Supporting lines, `; `-separated.
    pub lines: String,
    /// `candidate N` or `hand`.
    pub source: Option<String>,
    /// Observers with a standing verdict, `; `-separated.
    pub observers: String,
    /// Time of the latest standing verdict (UTC, RFC 3339).
    pub decided_utc: Option<String>,
    /// Who said what, when observers disagree.
    pub conflict: Option<String>,
    /// Standing remarks, ` | `-separated, each `observer: text`.
    pub notes: String,
    /// Barycentric redshift.
    pub z_bary: Option<f64>,
    /// Barycentric velocity, km/s.
    pub velocity_bary_kms: Option<f64>,
    /// Barycentric correction, km/s.
    pub barycentric_correction_kms: Option<f64>,
    /// True when decisions were made on differing input files.
    pub input_changed: bool,
    /// Number of records in the log for this target.
    pub records: usize,
}

impl Row {
    /// Build the row of one target.
    pub fn of(t: &TargetState) -> Row {
        let sol = t.solution.as_ref();
        let source = t
            .verdicts
            .last()
            .filter(|_| t.status != Status::Conflict)
            .and_then(|v| v.source)
            .map(|s| match s {
                super::Source::Candidate { rank } => format!("candidate {rank}"),
                super::Source::Hand => "hand".to_string(),
            });
        Row {
            target: t.target.clone(),
            status: t.status.as_str().to_string(),
            class: sol.and_then(|s| s.class).map(|c| c.as_str().to_string()),
            subclass: sol.and_then(|s| s.subclass.clone()),
            z: sol.and_then(|s| s.z),
            z_err: sol.and_then(|s| s.z_err),
            grade: sol.and_then(|s| s.grade).map(|g| g.as_str().to_string()),
            lines: sol.map(|s| s.lines.join("; ")).unwrap_or_default(),
            source,
            observers: t.observers().join("; "),
            decided_utc: t.verdicts.iter().map(|v| v.recorded_utc.clone()).max(),
            conflict: t.conflict_summary(),
            notes: t
                .notes
                .iter()
                .map(|n| format!("{}: {}", n.observer, n.text))
                .collect::<Vec<_>>()
                .join(" | "),
            z_bary: sol.and_then(|s| s.z_bary),
            velocity_bary_kms: sol.and_then(|s| s.velocity_bary_kms),
            barycentric_correction_kms: sol.and_then(|s| s.barycentric_correction_kms),
            input_changed: t.inputs_differ,
            records: t.records.len(),
        }
    }
}

/// One row per target, by target name.
pub fn rows(replay: &Replay) -> Vec<Row> {
    replay.targets.values().map(Row::of).collect()
}

/// The CSV column names, in order.
pub const CSV_HEADER: [&str; 18] = [
    "target",
    "status",
    "class",
    "subclass",
    "z",
    "z_err",
    "grade",
    "lines",
    "source",
    "observers",
    "decided_utc",
    "conflict",
    "notes",
    "z_bary",
    "velocity_bary_kms",
    "barycentric_correction_kms",
    "input_changed",
    "records",
];

/// True for a plain decimal number: optional sign, digits with an optional
/// fraction, optional exponent (`-0.5`, `+3`, `1e-5`). Such cells stay as
/// they are; everything else starting with a formula character does not.
fn is_plain_number(s: &str) -> bool {
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let int_start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    let mut digits = i - int_start;
    if i < b.len() && b[i] == b'.' {
        i += 1;
        let f = i;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        digits += i - f;
    }
    if digits == 0 {
        return false;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        i += 1;
        if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
            i += 1;
        }
        let e = i;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        if i == e {
            return false;
        }
    }
    i == b.len()
}

/// Make a CSV cell safe to open in a spreadsheet: a cell starting with `=`,
/// `+`, `-`, `@`, tab or carriage return gets a leading `'`, unless it is a
/// plain number.
pub fn neutralise(cell: &str) -> Cow<'_, str> {
    match cell.chars().next() {
        Some('=' | '+' | '-' | '@' | '\t' | '\r') if !is_plain_number(cell) => {
            Cow::Owned(format!("'{cell}"))
        }
        _ => Cow::Borrowed(cell),
    }
}

fn num(x: Option<f64>) -> String {
    match x {
        Some(v) if v.is_finite() => format!("{v}"),
        _ => String::new(),
    }
}

/// Write `rows` as CSV with a header, every text cell neutralised.
///
/// # Errors
/// Any write error.
pub fn write_csv<W: Write>(out: W, rows: &[Row]) -> Result<(), csv::Error> {
    let mut w = csv::WriterBuilder::new()
        .quote_style(csv::QuoteStyle::Necessary)
        .from_writer(out);
    w.write_record(CSV_HEADER)?;
    for r in rows {
        let opt = |s: &Option<String>| s.clone().unwrap_or_default();
        let cells = [
            r.target.clone(),
            r.status.clone(),
            opt(&r.class),
            opt(&r.subclass),
            num(r.z),
            num(r.z_err),
            opt(&r.grade),
            r.lines.clone(),
            opt(&r.source),
            r.observers.clone(),
            opt(&r.decided_utc),
            opt(&r.conflict),
            r.notes.clone(),
            num(r.z_bary),
            num(r.velocity_bary_kms),
            num(r.barycentric_correction_kms),
            if r.input_changed { "yes" } else { "no" }.to_string(),
            r.records.to_string(),
        ];
        w.write_record(cells.iter().map(|c| neutralise(c).into_owned()))?;
    }
    w.flush()?;
    Ok(())
}

/// Write `rows` as JSON Lines (one object per target; numbers stay numbers,
/// absent values are `null`).
///
/// # Errors
/// Any write or encoding error.
pub fn write_jsonl<W: Write>(mut out: W, rows: &[Row]) -> std::io::Result<()> {
    for r in rows {
        let line = serde_json::to_string(r).map_err(std::io::Error::other)?;
        out.write_all(line.as_bytes())?;
        out.write_all(b"\n")?;
    }
    out.flush()
}

/// Counts for the one-screen summary.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Tally {
    /// Targets counted (the queue's when one was given, else the log's).
    pub targets: usize,
    /// Targets with a decision (including conflicts).
    pub decided: usize,
    /// Targets without.
    pub undecided: usize,
    /// By status name.
    pub by_status: BTreeMap<&'static str, usize>,
    /// Accepted targets by class.
    pub by_class: BTreeMap<String, usize>,
    /// Targets on which each observer has a standing verdict.
    pub by_observer: BTreeMap<String, usize>,
}

impl Tally {
    /// Count `replay`; when `queue` (target names) is given, count those
    /// targets, so targets never touched count as undecided.
    pub fn of(replay: &Replay, queue: Option<&[String]>) -> Tally {
        let mut t = Tally::default();
        let names: Vec<&str> = match queue {
            Some(q) => {
                let mut v: Vec<&str> = q.iter().map(String::as_str).collect();
                v.sort_unstable();
                v.dedup();
                v
            }
            None => replay.targets.keys().map(String::as_str).collect(),
        };
        for name in names {
            t.targets += 1;
            let st = replay.state(name);
            let status = st.map(|s| s.status).unwrap_or(Status::Undecided);
            *t.by_status.entry(status.as_str()).or_default() += 1;
            if status.is_decided() {
                t.decided += 1;
            } else {
                t.undecided += 1;
            }
            if let Some(s) = st {
                if status == Status::Accepted {
                    let class = s
                        .solution
                        .as_ref()
                        .and_then(|x| x.class)
                        .map(|c| c.as_str())
                        .unwrap_or("(no class)");
                    *t.by_class.entry(class.to_string()).or_default() += 1;
                }
                for o in s.observers() {
                    *t.by_observer.entry(o.to_string()).or_default() += 1;
                }
            }
        }
        t
    }
}

impl std::fmt::Display for Tally {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let pct = |n: usize| {
            if self.targets == 0 {
                0.0
            } else {
                100.0 * n as f64 / self.targets as f64
            }
        };
        writeln!(f, "targets    {:>6}", self.targets)?;
        writeln!(
            f,
            "decided    {:>6}  ({:.0}%)",
            self.decided,
            pct(self.decided)
        )?;
        writeln!(f, "undecided  {:>6}", self.undecided)?;
        writeln!(f, "by status")?;
        for (k, v) in &self.by_status {
            writeln!(f, "  {k:<12} {v:>6}")?;
        }
        writeln!(f, "accepted, by class")?;
        for (k, v) in &self.by_class {
            writeln!(f, "  {:<12} {v:>6}", crate::text::clean(k))?;
        }
        writeln!(f, "by observer (targets with a standing verdict)")?;
        for (k, v) in self.by_observer.iter().take(10) {
            writeln!(f, "  {:<12} {v:>6}", crate::text::clean(k))?;
        }
        if self.by_observer.len() > 10 {
            writeln!(f, "  ... and {} more", self.by_observer.len() - 10)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formula_cells_get_an_apostrophe_and_plain_numbers_do_not() {
        assert_eq!(neutralise("=1+1"), "'=1+1");
        assert_eq!(neutralise("+cmd"), "'+cmd");
        assert_eq!(neutralise("-2+3"), "'-2+3");
        assert_eq!(neutralise("@SUM(A1)"), "'@SUM(A1)");
        assert_eq!(neutralise("\t=x"), "'\t=x");
        assert_eq!(neutralise("\r=x"), "'\r=x");
        assert_eq!(neutralise("-0.00012"), "-0.00012");
        assert_eq!(neutralise("+3"), "+3");
        assert_eq!(neutralise("-1.5e-3"), "-1.5e-3");
        assert_eq!(neutralise("-"), "'-");
        assert_eq!(neutralise("-e5"), "'-e5");
        assert_eq!(neutralise("Orla-17"), "Orla-17");
    }
}
