//! `zsift lines` through the binary: CSV columns and values, redshift,
//! range, computed series, user files and errors.

use std::collections::HashMap;
use std::process::{Command, Output};

fn zsift(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_zsift"))
        .args(args)
        .output()
        .expect("binary runs")
}

/// Parse CSV output (no quoted newlines) into maps keyed by the header.
fn csv(out: &Output) -> Vec<HashMap<String, String>> {
    assert!(
        out.status.success(),
        "stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout.clone()).unwrap();
    let mut rdr = csv::ReaderBuilder::new().from_reader(text.as_bytes());
    let header: Vec<String> = rdr.headers().unwrap().iter().map(String::from).collect();
    rdr.records()
        .map(|r| {
            let r = r.unwrap();
            header
                .iter()
                .cloned()
                .zip(r.iter().map(String::from))
                .collect()
        })
        .collect()
}

fn num(row: &HashMap<String, String>, k: &str) -> f64 {
    row[k]
        .parse()
        .unwrap_or_else(|_| panic!("{k} = {}", row[k]))
}

fn find<'a>(rows: &'a [HashMap<String, String>], name: &str) -> &'a HashMap<String, String> {
    rows.iter()
        .find(|r| r["name"] == name)
        .unwrap_or_else(|| panic!("{name} not in output"))
}

#[test]
fn csv_has_the_promised_columns_and_nist_values() {
    let rows = csv(&zsift(&["lines", "--format", "csv"]));
    for col in [
        "name",
        "species",
        "wavelength_vacuum",
        "wavelength_air",
        "kind",
        "strength",
        "group",
        "classes",
        "source",
    ] {
        assert!(rows[0].contains_key(col), "missing column {col}");
    }
    // NIST ASD (from memory): H-alpha 6564.61 vacuum / 6562.80 air;
    // [O III] 5007 5006.843 air; Ca II K 3933.663 air; Ly-alpha 1215.67.
    let ha = find(&rows, "H-alpha");
    assert!((num(ha, "wavelength_vacuum") - 6564.61).abs() < 0.005);
    assert!((num(ha, "wavelength_air") - 6562.80).abs() < 0.01);
    assert_eq!(ha["kind"], "both");
    assert!((num(find(&rows, "[O III] 5007"), "wavelength_air") - 5006.843).abs() < 0.001);
    assert!((num(find(&rows, "Ca II K"), "wavelength_air") - 3933.663).abs() < 0.001);
    assert_eq!(find(&rows, "Ca II K")["kind"], "absorption");
    assert!((num(find(&rows, "Ly-alpha"), "wavelength_vacuum") - 1215.67).abs() < 0.001);
    // Group names with commas survive CSV quoting.
    assert_eq!(find(&rows, "[O III] 4959")["group"], "[O III] 4959,5007");
}

#[test]
fn a_redshift_adds_observed_columns_and_the_range_applies_to_them() {
    let rows = csv(&zsift(&[
        "lines",
        "--format",
        "csv",
        "--z",
        "0.5",
        "--range",
        "7500:7520",
    ]));
    let o3 = find(&rows, "[O III] 5007");
    // 5008.240 * 1.5 = 7512.36 (NIST vacuum, from memory, times 1 + z).
    assert!((num(o3, "observed_vacuum") - 7512.36).abs() < 0.01);
    assert!(num(o3, "observed_air") < num(o3, "observed_vacuum"));
    for r in &rows {
        let w = num(r, "observed_vacuum");
        assert!((7500.0..=7520.0).contains(&w), "{w}");
    }
}

#[test]
fn an_air_range_selects_by_air_wavelength() {
    // H-alpha is 6562.80 A in air and 6564.61 in vacuum (NIST ASD, from
    // memory): an air window 6562-6563.5 holds it, the same vacuum window not.
    let air = csv(&zsift(&[
        "lines",
        "--format",
        "csv",
        "--range",
        "6562:6563.5",
        "--air",
    ]));
    assert!(air.iter().any(|r| r["name"] == "H-alpha"));
    let vac = csv(&zsift(&[
        "lines",
        "--format",
        "csv",
        "--range",
        "6562:6563.5",
    ]));
    assert!(!vac.iter().any(|r| r["name"] == "H-alpha"));
}

#[test]
fn the_computed_balmer_series_comes_out_with_its_limit() {
    let rows = csv(&zsift(&[
        "lines", "--series", "Balmer", "--ion", "H", "--format", "csv", "--max-n", "10",
    ]));
    assert_eq!(rows.len(), 9, "H-alpha .. H10 and the limit");
    let ha = find(&rows, "H-alpha");
    // Bohr + reduced mass: within 2e-5 of NIST 6562.79 air (from memory).
    assert!(((num(ha, "wavelength_air") - 6562.79) / 6562.79).abs() < 2e-5);
    assert!((num(ha, "energy_ev") - 1.8887).abs() < 1e-3);
    let lim = find(&rows, "Balmer limit");
    assert_eq!(lim["n_upper"], "inf");
    assert_eq!(lim["kind"], "limit");
    assert!((num(lim, "wavelength_air") - 3646.0).abs() < 0.5); // common practice, no source
}

#[test]
fn series_of_other_ions_are_available() {
    let rows = csv(&zsift(&[
        "lines", "--series", "Paschen", "--ion", "He+", "--format", "csv", "--max-n", "5",
    ]));
    // He II 4-3 = 4685.71 A air (NIST ASD, from memory), to 1e-4 (fine
    // structure grows as Z^2).
    let r = find(&rows, "He II 4-3");
    assert!(((num(r, "wavelength_air") - 4685.71) / 4685.71).abs() < 1e-4);
    let rows = csv(&zsift(&[
        "lines", "--series", "Ly", "--ion", "D", "--format", "csv", "--max-n", "3",
    ]));
    // D Ly-alpha 1215.3394 A (NIST ASD, from memory).
    assert!((num(find(&rows, "D Ly-alpha"), "wavelength_vacuum") - 1215.3394).abs() < 0.03);
}

#[test]
fn a_user_file_merges_with_or_replaces_the_catalogue() {
    let dir = std::env::temp_dir().join(format!("zsift-lines-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let f = dir.join("coronal.lines");
    std::fs::write(&f, "[Fe VII] 6087, 6087.0, air, emission, 0.2, coronal, galaxy qso\nH-alpha, 6564.61, vacuum, both, 0.9\n").unwrap();
    let fs = f.to_str().unwrap();
    let merged = csv(&zsift(&["lines", "--format", "csv", "--file", fs]));
    let fe = find(&merged, "[Fe VII] 6087");
    assert_eq!(fe["source"], "user file");
    assert!((num(fe, "wavelength_air") - 6087.0).abs() < 1e-4);
    assert!(merged.len() > 100);
    assert_eq!(find(&merged, "H-alpha")["strength"], "0.90");
    let only = csv(&zsift(&["lines", "--format", "csv", "--only-file", fs]));
    assert_eq!(only.len(), 2);

    let bad = dir.join("bad.lines");
    std::fs::write(&bad, "H-alpha, 6564.61, vacuum\nH-beta, 4862.7x, vacuum\n").unwrap();
    let out = zsift(&["lines", "--file", bad.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("bad.lines") && err.contains("line 2") && err.contains("column 9"),
        "{err}"
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn usage_errors_exit_with_code_2() {
    assert_eq!(
        zsift(&["lines", "--range", "9000:3000"]).status.code(),
        Some(2)
    );
    assert_eq!(
        zsift(&["lines", "--series", "Sharp"]).status.code(),
        Some(2)
    );
    assert_eq!(zsift(&["lines", "--z", "-1.5"]).status.code(), Some(2));
    assert_eq!(zsift(&["lines", "--ion", "Li"]).status.code(), Some(2));
}

#[test]
fn the_readable_table_lists_lines_foreground_and_ratios() {
    let out = zsift(&["lines", "--range", "6500:6600"]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.lines().next().unwrap().starts_with("name"));
    assert!(text.contains("H-alpha") && text.contains("[N II] 6584"));
    assert!(!text.contains("[O III] 5007"));
    let fg =
        String::from_utf8(zsift(&["lines", "--foreground", "--format", "csv"]).stdout).unwrap();
    assert!(fg.contains("O2 A band,telluric"));
    let ratios =
        String::from_utf8(zsift(&["lines", "--ratios", "--format", "csv"]).stdout).unwrap();
    assert!(ratios.contains("[O III] 5007,[O III] 4959,2.98"));
}

#[test]
fn every_catalogue_line_appears_in_the_csv_with_its_library_values() {
    let rows = csv(&zsift(&["lines", "--format", "csv"]));
    let cat = zsift::lines::builtin();
    assert_eq!(rows.len(), cat.lines.len());
    for (row, line) in rows.iter().zip(&cat.lines) {
        assert_eq!(row["name"], line.name);
        assert!((num(row, "wavelength_vacuum") - line.wavelength).abs() < 6e-5);
        assert!((num(row, "wavelength_air") - line.wavelength_air()).abs() < 6e-5);
        assert!((num(row, "strength") - line.strength).abs() < 0.006);
    }
}
