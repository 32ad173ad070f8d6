//! User line lists: a small comma-separated text format of zsift's own.
//!
//! ```text
//! # my lines: name, wavelength, medium, kind, strength, group, classes, width, species
//! name, wavelength, medium, kind, strength, group, classes, width, species
//! [Fe X] 6375,   6374.51, air,    emission,   0.2, coronal, galaxy qso
//! "Si II 1260",  1260.42, vacuum, absorption, 0.3, "Si II UV", galaxy qso, narrow, Si II
//! Pa-beta,      12821.59, vacuum, both
//! ```
//!
//! - One line per row; `#` starts a comment (to the end of the row, outside
//!   quotes); blank rows are skipped. An optional header row begins with the
//!   word `name`.
//! - Fields are separated by commas and trimmed; a field may be put in double
//!   quotes to hold commas (`""` is a literal quote inside quotes).
//! - Columns, in this order; the first three are required:
//!   1. `name`: the line's name (no control characters);
//!   2. `wavelength`: Angstrom, positive;
//!   3. `medium`: `air` or `vacuum` (required on purpose: guessing wrong
//!      costs 80 km/s at H-alpha). Air values are converted with the IAU
//!      formula (Morton 2000); below 2000 A air and vacuum are the same;
//!   4. `kind`: `emission`, `absorption` or `both` (default `both`);
//!   5. `strength`: 0..1 (default 0.5);
//!   6. `group`: a doublet / multiplet / series name (default none);
//!   7. `classes`: any of `star`, `galaxy`, `qso`, separated by spaces or `;`
//!      (default all three);
//!   8. `width`: `narrow` or `broad` (default `narrow`);
//!   9. `species`: e.g. `[Fe X]` (default: the name without its trailing
//!      wavelength number).
//! - Empty optional fields take the default. Names must be unique in a file.

use super::{Line, LineKind, ObjectClass, Width};
use crate::physics::airvac::air_to_vacuum;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// Why a line file could not be used. Every variant names the file; parse
/// errors also name the line and the column (1-based, in characters).
#[derive(Debug, Error)]
pub enum LineFileError {
    /// The file could not be read.
    #[error("{}: cannot read line list: {source}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// A field is missing or malformed.
    #[error("{}: line {line}, column {column} ({field}): {message}", path.display())]
    Parse {
        /// The file.
        path: PathBuf,
        /// 1-based line number.
        line: usize,
        /// 1-based column (characters) where the field starts.
        column: usize,
        /// Which field (`name`, `wavelength`, ...).
        field: &'static str,
        /// What is wrong.
        message: String,
    },
    /// The file holds no lines at all.
    #[error("{}: no lines in the file (only comments or blank rows)", path.display())]
    Empty {
        /// The file.
        path: PathBuf,
    },
}

const FIELDS: [&str; 9] = [
    "name",
    "wavelength",
    "medium",
    "kind",
    "strength",
    "group",
    "classes",
    "width",
    "species",
];

/// Read a user line list (format in the module docs). Wavelengths come back
/// in vacuum Angstrom, in file order.
pub fn load_file(path: &Path) -> Result<Vec<Line>, LineFileError> {
    let bytes = std::fs::read(path).map_err(|source| LineFileError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let text = String::from_utf8_lossy(&bytes);
    parse(&text, path)
}

/// Parse line-list text; `path` is only used in error messages.
pub fn parse(text: &str, path: &Path) -> Result<Vec<Line>, LineFileError> {
    let mut out: Vec<(Line, usize)> = Vec::new();
    for (i, raw) in text.lines().enumerate() {
        let line_no = i + 1;
        let err = |column: usize, field: &'static str, message: String| LineFileError::Parse {
            path: path.to_path_buf(),
            line: line_no,
            column,
            field,
            message,
        };
        let fields = split(raw).map_err(|(col, msg)| err(col, "row", msg))?;
        if fields.is_empty() || (fields.len() == 1 && fields[0].1.is_empty()) {
            continue;
        }
        if out.is_empty() && fields[0].1.eq_ignore_ascii_case("name") && !fields[0].2 {
            continue; // header row
        }
        if fields.len() > FIELDS.len() {
            let (col, _, _) = fields[FIELDS.len()];
            return Err(err(
                col,
                "row",
                format!(
                    "{} fields; at most {} expected ({})",
                    fields.len(),
                    FIELDS.len(),
                    FIELDS.join(", ")
                ),
            ));
        }
        let get = |k: usize| fields.get(k).map(|(c, s, _)| (*c, s.as_str()));
        let end_col = raw.chars().count() + 1;

        // name
        let (c, name) = get(0).unwrap_or((1, ""));
        if name.is_empty() {
            return Err(err(c, "name", "empty line name".into()));
        }
        if crate::text::needs_cleaning(name) {
            return Err(err(
                c,
                "name",
                "control characters are not allowed in a name".into(),
            ));
        }
        if let Some((_, first)) = out.iter().find(|(l, _)| l.name == name) {
            return Err(err(
                c,
                "name",
                format!("duplicate name '{name}' (first on line {first})"),
            ));
        }
        // wavelength
        let (c, w) = get(1).ok_or_else(|| {
            err(
                end_col,
                "wavelength",
                "missing wavelength (Angstrom)".into(),
            )
        })?;
        let wave: f64 = w.parse().map_err(|_| {
            err(
                c,
                "wavelength",
                format!("'{}' is not a number (Angstrom)", crate::text::clean(w)),
            )
        })?;
        if !wave.is_finite() || wave <= 0.0 {
            return Err(err(
                c,
                "wavelength",
                format!("{w} is not a positive wavelength"),
            ));
        }
        // medium
        let (c, m) = get(2).ok_or_else(|| {
            err(
                end_col,
                "medium",
                "missing medium: write 'air' or 'vacuum'".into(),
            )
        })?;
        let wavelength = match m.to_ascii_lowercase().as_str() {
            "air" => air_to_vacuum(wave),
            "vacuum" | "vac" => wave,
            _ => {
                return Err(err(
                    c,
                    "medium",
                    format!("'{}' is not 'air' or 'vacuum'", crate::text::clean(m)),
                ));
            }
        };
        // kind
        let kind = match get(3) {
            None | Some((_, "")) => LineKind::Both,
            Some((c, k)) => match k.to_ascii_lowercase().as_str() {
                "emission" | "em" => LineKind::Emission,
                "absorption" | "abs" => LineKind::Absorption,
                "both" => LineKind::Both,
                _ => {
                    return Err(err(
                        c,
                        "kind",
                        format!(
                            "'{}' is not emission, absorption or both",
                            crate::text::clean(k)
                        ),
                    ));
                }
            },
        };
        // strength
        let strength = match get(4) {
            None | Some((_, "")) => 0.5,
            Some((c, s)) => {
                let v: f64 = s.parse().map_err(|_| {
                    err(
                        c,
                        "strength",
                        format!("'{}' is not a number", crate::text::clean(s)),
                    )
                })?;
                if !(0.0..=1.0).contains(&v) {
                    return Err(err(c, "strength", format!("{v} is outside 0..1")));
                }
                v
            }
        };
        // group
        let group = match get(5) {
            None | Some((_, "")) => None,
            Some((c, g)) => {
                if crate::text::needs_cleaning(g) {
                    return Err(err(c, "group", "control characters are not allowed".into()));
                }
                Some(g.to_string())
            }
        };
        // classes
        let classes = match get(6) {
            None | Some((_, "")) => vec![ObjectClass::Star, ObjectClass::Galaxy, ObjectClass::Qso],
            Some((c, s)) => {
                let mut v = Vec::new();
                for word in s.split([' ', ';', '|']).filter(|w| !w.is_empty()) {
                    let k = match word.to_ascii_lowercase().as_str() {
                        "star" => ObjectClass::Star,
                        "galaxy" => ObjectClass::Galaxy,
                        "qso" | "quasar" => ObjectClass::Qso,
                        _ => {
                            return Err(err(
                                c,
                                "classes",
                                format!(
                                    "'{}' is not star, galaxy or qso",
                                    crate::text::clean(word)
                                ),
                            ));
                        }
                    };
                    if !v.contains(&k) {
                        v.push(k);
                    }
                }
                v
            }
        };
        // width
        let width = match get(7) {
            None | Some((_, "")) => Width::Narrow,
            Some((c, s)) => match s.to_ascii_lowercase().as_str() {
                "narrow" => Width::Narrow,
                "broad" => Width::Broad,
                _ => {
                    return Err(err(
                        c,
                        "width",
                        format!("'{}' is not narrow or broad", crate::text::clean(s)),
                    ));
                }
            },
        };
        // species
        let species = match get(8) {
            None | Some((_, "")) => species_from_name(name),
            Some((c, s)) => {
                if crate::text::needs_cleaning(s) {
                    return Err(err(
                        c,
                        "species",
                        "control characters are not allowed".into(),
                    ));
                }
                s.to_string()
            }
        };
        out.push((
            Line {
                name: name.to_string(),
                species,
                wavelength,
                kind,
                strength,
                classes,
                width,
                group,
            },
            line_no,
        ));
    }
    if out.is_empty() {
        return Err(LineFileError::Empty {
            path: path.to_path_buf(),
        });
    }
    Ok(out.into_iter().map(|(l, _)| l).collect())
}

/// `[O III] 5007` -> `[O III]`; `H-alpha` -> `H-alpha`.
fn species_from_name(name: &str) -> String {
    match name.rsplit_once(' ') {
        Some((head, tail)) if tail.parse::<f64>().is_ok() && !head.trim().is_empty() => {
            head.trim().to_string()
        }
        _ => name.to_string(),
    }
}

/// Split one row into (1-based start column, trimmed text, was quoted).
/// Stops at an unquoted `#`. Errors give (column, message).
/// One field of a row: (1-based start column, trimmed text, was quoted).
type Field = (usize, String, bool);

fn split(raw: &str) -> Result<Vec<Field>, (usize, String)> {
    let chars: Vec<char> = raw.chars().collect();
    let mut out = Vec::new();
    let mut i = 0;
    let n = chars.len();
    loop {
        // skip leading blanks
        while i < n && (chars[i] == ' ' || chars[i] == '\t') {
            i += 1;
        }
        let start = i + 1;
        if i < n && chars[i] == '"' {
            let open = i + 1;
            i += 1;
            let mut s = String::new();
            loop {
                if i >= n {
                    return Err((open, "unterminated quoted field".into()));
                }
                if chars[i] == '"' {
                    if i + 1 < n && chars[i + 1] == '"' {
                        s.push('"');
                        i += 2;
                        continue;
                    }
                    i += 1;
                    break;
                }
                s.push(chars[i]);
                i += 1;
            }
            while i < n && (chars[i] == ' ' || chars[i] == '\t') {
                i += 1;
            }
            out.push((start, s, true));
            if i >= n || chars[i] == '#' {
                break;
            }
            if chars[i] != ',' {
                return Err((i + 1, "expected ',' after a quoted field".into()));
            }
            i += 1;
        } else {
            let mut s = String::new();
            while i < n && chars[i] != ',' && chars[i] != '#' {
                s.push(chars[i]);
                i += 1;
            }
            out.push((start, s.trim_end().to_string(), false));
            if i >= n || chars[i] == '#' {
                break;
            }
            i += 1; // the comma
        }
    }
    // A row that is only a comment or blank.
    if out.len() == 1 && out[0].1.is_empty() && !out[0].2 {
        out.clear();
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn species_is_the_name_without_its_wavelength() {
        assert_eq!(species_from_name("[O III] 5007"), "[O III]");
        assert_eq!(species_from_name("H-alpha"), "H-alpha");
    }

    #[test]
    fn quoted_fields_keep_commas_and_report_their_column() {
        let f = split(r#" "a, b" , 12 ,x # c"#).unwrap();
        assert_eq!(f[0], (2, "a, b".to_string(), true));
        assert_eq!(f[1].1, "12");
        assert_eq!(f[2].1, "x");
        assert_eq!(f.len(), 3);
    }
}
