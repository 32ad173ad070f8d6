//! Delimited text spectra: CSV, TSV and whitespace-separated columns.
//!
//! Rules:
//! - Lines starting with `#` are comments. A comment of the form
//!   `# key: value` (or `# key = value`) is metadata; recognised keys are
//!   `object`/`target`/`name`, `medium` (`air`/`vacuum`), `unit`
//!   (`wave_unit`, `wavelength_unit`), `flux_unit`, `ra`, `dec`, `equinox`,
//!   `date-obs`, `mjd-obs` (`mjd`), `timesys`, `exptime`, `observatory`
//!   (`site`), `longitude`/`latitude`/`height` (`site_lon` ...) and
//!   `obsgeo-x`/`-y`/`-z`.
//! - The delimiter is taken from the first data line: a comma, else a tab,
//!   else runs of blanks.
//! - The first non-comment line is a header when any of its cells is not a
//!   number; column names are matched by meaning and may carry units
//!   (`wavelength_nm`, `lambda (A)`). A last comment line that lists known
//!   column names (`# wave flux err`) also serves as the header.
//! - With no header the columns are wavelength, flux and (if present) error.
//! - `nan`, `inf` cells are read and the pixel masked.

use super::assemble::{self, Raw, Uncertainty};
use super::columns::{self, Role};
use super::{Layout, Medium, Metadata, ReadOptions, Spectrum, SpectrumError};
use std::path::Path;

/// Longest line accepted, in bytes. Real spectra have short lines; a longer
/// one is binary data or a broken export, and is refused before splitting.
pub const MAX_LINE: usize = 64 * 1024;

/// Largest text spectrum accepted (bytes): a million-pixel spectrum is about
/// 40 MB of text; anything larger is not a 1-D spectrum.
pub const MAX_TEXT_BYTES: usize = 64 * 1024 * 1024;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Delim {
    Comma,
    Tab,
    Blank,
}

fn split(line: &str, d: Delim) -> Vec<&str> {
    match d {
        Delim::Comma => line.split(',').map(str::trim).collect(),
        Delim::Tab => line.split('\t').map(str::trim).collect(),
        Delim::Blank => line.split_whitespace().collect(),
    }
}

fn parse_num(cell: &str) -> Option<f64> {
    let c = cell.trim();
    // Fast path: Rust's parser takes decimal and exponent forms, `inf`,
    // `infinity` and `nan` in any case, with an optional sign.
    if let Ok(v) = c.parse::<f64>() {
        return Some(v);
    }
    match c.to_ascii_lowercase().as_str() {
        "-nan" | "+nan" | "null" | "na" | "" => return Some(f64::NAN),
        _ => {}
    }
    // Fortran-style D exponents are common in old exports.
    if c.contains(['d', 'D'])
        && c.bytes()
            .all(|b| b.is_ascii_digit() || matches!(b, b'.' | b'-' | b'+' | b'd' | b'D'))
    {
        return c.replace(['d', 'D'], "e").parse::<f64>().ok();
    }
    None
}

/// True when `cell` is a number (the empty cell and `nan` excluded, so a blank
/// header cell does not look numeric).
fn is_number(cell: &str) -> bool {
    !cell.trim().is_empty() && parse_num(cell).is_some()
}

/// Read a delimited-text spectrum from `bytes` (the content of `path`).
pub fn read_bytes(
    path: &Path,
    bytes: &[u8],
    opts: &ReadOptions,
) -> Result<Spectrum, SpectrumError> {
    let malformed = |place: String, message: String| SpectrumError::Malformed {
        path: path.to_path_buf(),
        place,
        message,
    };
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(malformed("whole file".into(), "the file is empty".into()));
    }
    if bytes.len() > MAX_TEXT_BYTES {
        return Err(malformed(
            "whole file".into(),
            format!(
                "{} bytes is more than the {MAX_TEXT_BYTES} accepted for a text spectrum",
                bytes.len()
            ),
        ));
    }
    let text = match std::str::from_utf8(bytes) {
        Ok(t) => t,
        Err(e) => {
            let off = e.valid_up_to();
            let line = bytes[..off].iter().filter(|b| **b == b'\n').count() + 1;
            return Err(malformed(
                format!("line {line}"),
                format!("not UTF-8 text (invalid byte at offset {off})"),
            ));
        }
    };
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);

    let mut meta = Metadata {
        layout: Some(Layout::Text),
        ..Metadata::default()
    };
    let mut medium: Option<Medium> = None;
    let mut unit: Option<String> = None;
    let mut last_comment: Option<&str> = None;
    // Units declared per column in an ECSV-style YAML header.
    let mut column_units: Vec<(String, String)> = Vec::new();
    let mut header: Option<(usize, Vec<String>)> = None;
    let mut delim: Option<Delim> = None;
    let mut ncol = 0usize;
    let mut first_data_line = 0usize;
    // Cells of all data rows, row after row (`ncol` per row).
    let mut rows: Vec<f64> = Vec::new();
    let mut lines_of_rows: Vec<usize> = Vec::new();

    for (idx, raw_line) in text.split('\n').enumerate() {
        let lineno = idx + 1;
        if raw_line.len() > MAX_LINE {
            return Err(malformed(
                format!("line {lineno}"),
                format!(
                    "line is {} bytes long (at most {MAX_LINE} accepted); not a column file",
                    raw_line.len()
                ),
            ));
        }
        if raw_line.contains('\0') {
            return Err(malformed(
                format!("line {lineno}"),
                "contains NUL bytes: binary data, not text".into(),
            ));
        }
        let line = raw_line.trim_end_matches('\r');
        let t = line.trim();
        if t.is_empty() {
            continue;
        }
        if let Some(c) = t.strip_prefix('#') {
            if rows.is_empty() && header.is_none() {
                let c = c.trim();
                if let Some((name, u)) = ecsv_column_unit(c) {
                    column_units.push((name, u));
                } else if let Some(m) = medium_in_words(c) {
                    medium.get_or_insert(m);
                } else if let Some((k, v)) = split_key_value(c) {
                    apply_meta(&k, v, &mut meta, &mut medium, &mut unit, lineno)?;
                } else {
                    last_comment = Some(c);
                }
            }
            continue;
        }
        let d = *delim.get_or_insert_with(|| {
            if t.contains(',') {
                Delim::Comma
            } else if t.contains('\t') {
                Delim::Tab
            } else {
                Delim::Blank
            }
        });
        let mut cells = split(t, d);
        if d == Delim::Comma && cells.len() > 1 && cells.last().is_some_and(|c| c.is_empty()) {
            // A trailing comma is harmless.
            cells.pop();
        }
        if header.is_none() && rows.is_empty() && cells.iter().any(|c| !is_number(c)) {
            header = Some((lineno, cells.iter().map(|c| c.to_string()).collect()));
            ncol = cells.len();
            continue;
        }
        if rows.is_empty() {
            if ncol == 0 {
                ncol = cells.len();
            }
            first_data_line = lineno;
        }
        if cells.len() != ncol {
            let what = if header.is_some() && rows.is_empty() {
                "the header".to_string()
            } else {
                format!("line {first_data_line}")
            };
            return Err(malformed(
                format!("line {lineno}"),
                format!(
                    "{} columns, but {what} has {ncol}; rows must all have the same columns",
                    cells.len()
                ),
            ));
        }
        for (j, c) in cells.iter().enumerate() {
            match parse_num(c) {
                Some(v) => rows.push(v),
                None => {
                    return Err(malformed(
                        format!("line {lineno}, column {}", j + 1),
                        format!("{:?} is not a number", crate::text::clean(&shorten(c))),
                    ));
                }
            }
        }
        lines_of_rows.push(lineno);
    }

    if let Some(g) = meta.site.geocentric_m
        && g.iter().any(|x| x.is_nan())
    {
        meta.site.geocentric_m = None;
        meta.warnings
            .push("obsgeo-x/y/z incomplete; geocentric position ignored".into());
    }
    if rows.is_empty() {
        let msg = if header.is_some() {
            "a header but no data rows"
        } else {
            "only comments, no data rows"
        };
        return Err(malformed("whole file".into(), msg.into()));
    }
    if ncol < 2 {
        return Err(malformed(
            format!("line {first_data_line}"),
            "only one column; at least wavelength and flux are needed".into(),
        ));
    }

    // Column roles.
    let names: Option<Vec<String>> = header.as_ref().map(|(_, h)| h.clone()).or_else(|| {
        let c = last_comment?;
        let cells: Vec<String> = split(c, delim.unwrap_or(Delim::Blank))
            .into_iter()
            .map(String::from)
            .collect();
        (cells.len() == ncol
            && cells
                .iter()
                .filter(|n| columns::role_of(&columns::split_unit(n).0).is_some())
                .count()
                >= 2)
            .then_some(cells)
    });
    let header_line = header.as_ref().map(|(l, _)| *l).unwrap_or(0);
    let mut wave_col = None;
    let mut flux_col = None;
    let mut unc_col: Option<(usize, Role)> = None;
    let mut sky_col = None;
    let mut wave_unit_from_name: Option<String> = None;
    let mut wave_role = Role::Wave;
    let mut flux_unit_from_name: Option<String> = None;
    match &names {
        Some(names) => {
            for (j, n) in names.iter().enumerate() {
                let (base, u) = columns::split_unit(n);
                let u = u.or_else(|| {
                    column_units
                        .iter()
                        .find(|(c, _)| c.eq_ignore_ascii_case(n.trim()))
                        .map(|(_, u)| u.clone())
                });
                match columns::role_of(&base) {
                    Some(r @ (Role::Wave | Role::WaveAir | Role::WaveVacuum | Role::LogWave))
                        if wave_col.is_none() =>
                    {
                        wave_col = Some(j);
                        wave_role = r;
                        wave_unit_from_name = u;
                    }
                    Some(Role::Flux) if flux_col.is_none() => {
                        flux_col = Some(j);
                        flux_unit_from_name = u;
                    }
                    Some(r @ (Role::Error | Role::Variance | Role::Ivar)) if unc_col.is_none() => {
                        unc_col = Some((j, r))
                    }
                    Some(Role::Sky) if sky_col.is_none() => sky_col = Some(j),
                    _ => {}
                }
            }
            // A header with unknown names: fall back to position, but say so.
            if wave_col.is_none() && flux_col.is_none() {
                meta.warnings.push(format!(
                    "no column names recognised in the header on line {header_line}; taking columns 1, 2{} as wavelength, flux{}",
                    if ncol >= 3 { ", 3" } else { "" },
                    if ncol >= 3 { ", error" } else { "" }
                ));
                wave_col = Some(0);
                flux_col = Some(1);
                if ncol >= 3 {
                    unc_col = Some((2, Role::Error));
                }
            }
            if wave_col.is_none() {
                return Err(malformed(
                    format!("line {header_line}"),
                    "no wavelength column (expected a name like wavelength, wave, lambda)".into(),
                ));
            }
            if flux_col.is_none() {
                return Err(malformed(
                    format!("line {header_line}"),
                    "no flux column (expected a name like flux, f_lambda, counts)".into(),
                ));
            }
        }
        None => {
            wave_col = Some(0);
            flux_col = Some(1);
            if ncol >= 3 {
                unc_col = Some((2, Role::Error));
            }
            if ncol > 3 {
                meta.warnings.push(format!(
                    "no header: took columns 1-3 as wavelength, flux, error and ignored {} more",
                    ncol - 3
                ));
            }
        }
    }
    let (Some(wc), Some(fc)) = (wave_col, flux_col) else {
        return Err(malformed(
            "whole file".into(),
            "no wavelength or flux column".into(),
        ));
    };
    let col = |j: usize| {
        rows.iter()
            .skip(j)
            .step_by(ncol)
            .copied()
            .collect::<Vec<f64>>()
    };

    // Units: the column name wins over a `# unit:` comment.
    let unit_text = wave_unit_from_name.or(unit);
    let log10 = wave_role == Role::LogWave;
    let wave = col(wc);
    let unit_factor = if log10 {
        1.0
    } else {
        match &unit_text {
            Some(u) => columns::wave_unit_factor(u).ok_or_else(|| {
                malformed(
                    if header_line > 0 {
                        format!("line {header_line}, column {}", wc + 1)
                    } else {
                        "unit comment".into()
                    },
                    format!(
                        "unknown wavelength unit {:?} (use Angstrom, nm, um or m)",
                        crate::text::clean(u)
                    ),
                )
            })?,
            None => guess_unit(&wave, &mut meta.warnings),
        }
    };
    meta.wave_unit = Some(
        unit_text
            .map(|u| crate::text::clean(&u))
            .unwrap_or_else(|| {
                if log10 {
                    "log10(Angstrom)".into()
                } else {
                    "Angstrom".into()
                }
            }),
    );
    if let Some(u) = flux_unit_from_name {
        meta.flux_unit.get_or_insert(crate::text::clean(&u));
    }
    let from_name = match wave_role {
        Role::WaveAir => Some(Medium::Air),
        Role::WaveVacuum | Role::LogWave => Some(Medium::Vacuum),
        _ => None,
    };
    let medium_declared = match (from_name, medium) {
        (Some(a), Some(b)) if a != b => {
            meta.warnings.push(format!(
                "the column name says {} but the medium comment says {}; using the column name",
                a.as_str(),
                b.as_str()
            ));
            Some(a)
        }
        (a, b) => a.or(b),
    };
    let uncertainty = unc_col.map(|(j, r)| match r {
        Role::Variance => Uncertainty::Variance(col(j)),
        Role::Ivar => Uncertainty::Ivar(col(j)),
        _ => Uncertainty::Sigma(col(j)),
    });
    let raw = Raw {
        wave,
        unit_factor,
        log10,
        flux: col(fc),
        uncertainty,
        sky: sky_col.map(col),
        bad: None,
        medium_declared,
    };
    let place = |i: usize| {
        if i == usize::MAX {
            "whole file".to_string()
        } else {
            format!("line {}, column {}", lines_of_rows[i], wc + 1)
        }
    };
    assemble::finish(path, raw, meta, opts, &place)
}

fn shorten(s: &str) -> String {
    if s.chars().count() > 40 {
        let mut t: String = s.chars().take(40).collect();
        t.push_str("...");
        t
    } else {
        s.to_string()
    }
}

/// With no unit anywhere: wavelengths below 1e-3 are metres, below 30
/// micrometres, otherwise Angstrom; warn either way.
pub(crate) fn guess_unit(wave: &[f64], warnings: &mut Vec<String>) -> f64 {
    let mid = wave
        .iter()
        .copied()
        .filter(|w| w.is_finite() && *w > 0.0)
        .fold(f64::NAN, f64::max);
    let (factor, name) = if mid < 1e-3 {
        (1.0e10, "metres")
    } else if mid < 30.0 {
        (1.0e4, "micrometres")
    } else {
        (1.0, "Angstrom")
    };
    warnings.push(format!(
        "no wavelength unit given; values up to {mid} taken as {name}"
    ));
    factor
}

/// `- {name: wavelength, unit: nm, datatype: float64}` (an ECSV column
/// description) -> (`wavelength`, `nm`).
fn ecsv_column_unit(c: &str) -> Option<(String, String)> {
    let body = c
        .strip_prefix('-')?
        .trim()
        .strip_prefix('{')?
        .strip_suffix('}')?;
    let mut name = None;
    let mut unit = None;
    for part in body.split(',') {
        if let Some((k, v)) = part.split_once(':') {
            let v = v.trim().trim_matches(['"', '\'']).to_string();
            match k.trim() {
                "name" => name = Some(v),
                "unit" => unit = Some(v),
                _ => {}
            }
        }
    }
    Some((name?, unit?))
}

/// A free-text comment that states the medium: "air wavelengths",
/// "wavelengths in vacuum", "vacuum wavelength scale".
fn medium_in_words(c: &str) -> Option<Medium> {
    let l = c.to_ascii_lowercase();
    if l.contains(':') || l.contains('=') {
        return None;
    }
    let said = |m: &str| {
        l.contains(&format!("{m} wavelength"))
            || l.contains(&format!("wavelengths in {m}"))
            || l.contains(&format!("wavelength in {m}"))
    };
    match (said("air"), said("vacuum")) {
        (true, false) => Some(Medium::Air),
        (false, true) => Some(Medium::Vacuum),
        _ => None,
    }
}

fn split_key_value(c: &str) -> Option<(String, &str)> {
    let pos = c.find([':', '='])?;
    let key = c[..pos].trim();
    if key.is_empty() || key.split_whitespace().count() > 2 {
        return None;
    }
    Some((
        key.to_ascii_lowercase().replace([' ', '_'], "-"),
        c[pos + 1..].trim(),
    ))
}

fn apply_meta(
    key: &str,
    value: &str,
    meta: &mut Metadata,
    medium: &mut Option<Medium>,
    unit: &mut Option<String>,
    lineno: usize,
) -> Result<(), SpectrumError> {
    let num = |v: &str| parse_num(v).filter(|x| x.is_finite());
    let v = value.trim().trim_matches(['"', '\'']).trim();
    match key {
        "object" | "target" | "name" | "objname" => meta.target = v.to_string(),
        "medium" | "wave-medium" | "wavelength-medium" | "airorvac" => {
            *medium = parse_medium(v);
            if medium.is_none() {
                meta.warnings.push(format!(
                    "line {lineno}: medium {:?} not understood (air or vacuum); ignored",
                    crate::text::clean(v)
                ));
            }
        }
        "unit" | "units" | "wave-unit" | "wavelength-unit" | "wunit" | "cunit1" => {
            *unit = Some(v.to_string())
        }
        "flux-unit" | "bunit" => meta.flux_unit = Some(crate::text::clean(v)),
        "ra" => meta.ra_deg = super::fits::parse_angle(v, true),
        "dec" => meta.dec_deg = super::fits::parse_angle(v, false),
        "equinox" | "epoch" => meta.equinox = num(v.trim_start_matches(['J', 'B'])),
        "date-obs" | "date" => meta.date_obs = Some(crate::text::clean(v)),
        "mjd-obs" | "mjd" => meta.mjd_obs = num(v),
        "timesys" | "time-scale" => meta.time_scale = Some(crate::text::clean(v)),
        "exptime" | "exposure" => meta.exposure_s = num(v),
        "observatory" | "site" | "telescope" => meta.site.name = Some(crate::text::clean(v)),
        "longitude" | "site-lon" | "site-long" | "lon" | "obsgeo-l" => {
            meta.site.longitude_deg = num(v)
        }
        "latitude" | "site-lat" | "lat" | "obsgeo-b" => meta.site.latitude_deg = num(v),
        "height" | "site-height" | "elevation" | "altitude" | "obsgeo-h" => {
            meta.site.height_m = num(v)
        }
        "obsgeo-x" | "obsgeo-y" | "obsgeo-z" => {
            let k = match key {
                "obsgeo-x" => 0,
                "obsgeo-y" => 1,
                _ => 2,
            };
            if let Some(x) = num(v) {
                let g = meta.site.geocentric_m.get_or_insert([f64::NAN; 3]);
                g[k] = x;
            }
        }
        _ => meta
            .header
            .push((crate::text::clean(key), crate::text::clean(v))),
    }
    Ok(())
}

/// `air`, `vacuum` or `vac` (any case); anything else is `None`.
pub(crate) fn parse_medium(v: &str) -> Option<Medium> {
    match v.trim().to_ascii_lowercase().as_str() {
        "air" | "awav" | "standard air" => Some(Medium::Air),
        "vacuum" | "vac" | "wave" | "vacuo" => Some(Medium::Vacuum),
        _ => None,
    }
}
