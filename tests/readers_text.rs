//! Delimited-text reader: layouts, header names with units, metadata comments.
//! The spectra here are invented (synthetic-truth tests: the numbers written
//! are the check values).

use std::path::Path;
use zsift::physics::airvac::air_to_vacuum;
use zsift::spectrum::{Layout, Medium, MediumChoice, ReadOptions, read_bytes};

/// 40 rows of `wave<sep>flux<sep>error` starting at `w0` with step `dw`.
fn rows(sep: &str, w0: f64, dw: f64, with_err: bool) -> String {
    let mut s = String::new();
    for i in 0..40 {
        let w = w0 + dw * i as f64;
        let f = 1.0 + 0.01 * i as f64;
        if with_err {
            s.push_str(&format!("{w}{sep}{f}{sep}0.1\n"));
        } else {
            s.push_str(&format!("{w}{sep}{f}\n"));
        }
    }
    s
}

fn load(text: &str) -> zsift::spectrum::Spectrum {
    read_bytes(Path::new("t.txt"), text.as_bytes(), &ReadOptions::default())
        .unwrap_or_else(|e| panic!("{e}"))
}

fn load_err(text: &str) -> String {
    match read_bytes(
        Path::new("bad.txt"),
        text.as_bytes(),
        &ReadOptions::default(),
    ) {
        Ok(_) => panic!("accepted: {text:.80}"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn csv_with_a_header_and_units_in_the_names_is_read_in_angstrom() {
    let text = format!(
        "# object: Orla-17\n# medium: vacuum\nwavelength_nm,flux,flux_err\n{}",
        rows(",", 500.0, 0.5, true)
    );
    let s = load(&text);
    assert_eq!(s.len(), 40);
    // 1 nm = 10 Angstrom (SI definition: common practice, no source).
    assert_eq!(s.wave[0], 5000.0);
    assert_eq!(s.wave[39], 5195.0);
    assert_eq!(s.meta.target, "Orla-17");
    assert_eq!(s.meta.medium_declared, Some(Medium::Vacuum));
    assert_eq!(s.meta.layout, Some(Layout::Text));
    assert!(s.sigma.is_some());
}

#[test]
fn tsv_and_whitespace_columns_with_bracketed_units_are_read() {
    let tsv = format!("lambda (A)\tflux\terror\n{}", rows("\t", 6000.0, 1.0, true));
    let s = load(&format!("# medium: vacuum\n{tsv}"));
    assert_eq!(s.wave[0], 6000.0);
    let ws = format!(
        "# medium: vacuum\nwave   flux\n{}",
        rows("   ", 4000.0, 2.0, false)
    );
    let s = load(&ws);
    assert_eq!(s.wave[1], 4002.0);
    assert!(s.sigma.is_none());
}

#[test]
fn a_file_without_a_header_is_wavelength_flux_error() {
    let s = load(&format!(
        "# medium: vacuum\n{}",
        rows(" ", 7000.0, 1.5, true)
    ));
    assert_eq!(s.wave[2], 7003.0);
    assert_eq!(s.flux[2], 1.02);
    assert_eq!(s.sigma.as_ref().expect("error column")[2], 0.1);
}

#[test]
fn a_commented_header_line_names_the_columns() {
    let mut body = String::new();
    for i in 0..30 {
        body.push_str(&format!(
            "{} 0.25 {}\n",
            3.0 + i as f64 * 0.01,
            1.0 + i as f64
        ));
    }
    // Columns in an unusual order: error, then flux, then wavelength in micrometres.
    let s = load(&format!("# medium: vacuum\n# err flux wave_um\n{body}"));
    assert_eq!(s.wave[0], 1.0e4);
    assert_eq!(s.flux[0], 0.25);
    assert_eq!(s.sigma.as_ref().expect("sigma")[0], 3.0);
}

#[test]
fn air_declared_in_a_comment_is_converted_to_vacuum() {
    let s = load(&format!(
        "# medium: air\n# unit: Angstrom\n{}",
        rows(",", 6500.0, 1.0, false)
    ));
    assert_eq!(s.meta.medium_declared, Some(Medium::Air));
    assert_eq!(s.wave[0], air_to_vacuum(6500.0));
    assert!(s.wave[0] > 6501.7 && s.wave[0] < 6501.9);
}

#[test]
fn air_named_in_the_column_is_converted_and_the_medium_choice_covers_silent_files() {
    let s = load(&format!("wave_air,flux\n{}", rows(",", 5000.0, 1.0, false)));
    assert_eq!(s.meta.medium_declared, Some(Medium::Air));
    let silent = rows(",", 5000.0, 1.0, false);
    let auto = load(&silent);
    assert_eq!(auto.meta.medium_used, Some(Medium::Vacuum));
    assert!(
        auto.meta
            .warnings
            .iter()
            .any(|w| w.contains("air or vacuum"))
    );
    let air = read_bytes(
        Path::new("t.csv"),
        silent.as_bytes(),
        &ReadOptions {
            medium: MediumChoice::Air,
        },
    )
    .expect("reads");
    assert_eq!(air.meta.medium_used, Some(Medium::Air));
    assert_eq!(air.wave[0], air_to_vacuum(5000.0));
}

#[test]
fn metadata_comments_fill_coordinates_time_and_site() {
    let text = format!(
        "# object: Orla-17\n# ra: 10:12:33.5\n# dec: -21:04:05\n# date-obs: 2026-03-14T02:11:09\n\
         # mjd-obs: 61113.09\n# exptime: 900\n# timesys: UTC\n# longitude: -31.5\n# latitude: -38.25\n\
         # height: 2150\n# medium: vac\n{}",
        rows(",", 5000.0, 1.0, false)
    );
    let s = load(&text);
    // 15 degrees per hour of right ascension: common practice, no source.
    assert!((s.meta.ra_deg.expect("ra") - 153.139_583_3).abs() < 1e-6);
    assert!((s.meta.dec_deg.expect("dec") + 21.068_055_6).abs() < 1e-6);
    assert_eq!(s.meta.date_obs.as_deref(), Some("2026-03-14T02:11:09"));
    assert_eq!(s.meta.mjd_obs, Some(61113.09));
    assert_eq!(s.meta.exposure_s, Some(900.0));
    assert_eq!(s.meta.site.latitude_deg, Some(-38.25));
    assert_eq!(s.meta.site.height_m, Some(2150.0));
}

#[test]
fn descending_wavelengths_are_reversed_with_a_warning() {
    let mut body = String::from("# medium: vacuum\n");
    for i in 0..30 {
        body.push_str(&format!("{},{}\n", 8000.0 - i as f64, i));
    }
    let s = load(&body);
    assert_eq!(s.wave[0], 7971.0);
    assert_eq!(s.flux[0], 29.0);
    assert!(s.meta.warnings.iter().any(|w| w.contains("descending")));
}

#[test]
fn nan_inf_and_zero_inverse_variance_pixels_are_masked_not_dropped() {
    let mut body = String::from("# medium: vacuum\nwave,flux,ivar\n");
    for i in 0..30 {
        let f = match i {
            3 => "nan".to_string(),
            4 => "inf".to_string(),
            _ => "1.5".to_string(),
        };
        let iv = if i == 5 { "0" } else { "4" };
        body.push_str(&format!("{},{f},{iv}\n", 5000 + i));
    }
    let s = load(&body);
    assert_eq!(s.len(), 30);
    assert!(!s.mask[3] && !s.mask[4] && !s.mask[5]);
    assert!(s.mask[6]);
    // ivar 4 -> sigma 0.5.
    assert_eq!(s.sigma.as_ref().expect("sigma")[6], 0.5);
}

#[test]
fn a_target_name_with_control_characters_or_path_parts_is_cleaned_with_a_warning() {
    let text = format!(
        "# object: ../../etc/\x1b[31mevil\n# medium: vacuum\n{}",
        rows(",", 5000.0, 1.0, false)
    );
    let s = load(&text);
    assert!(!s.meta.target.contains('/'));
    assert!(!s.meta.target.contains(".."));
    assert!(!s.meta.target.chars().any(char::is_control));
    assert!(s.meta.warnings.iter().any(|w| w.contains("target name")));
}

#[test]
fn malformed_text_is_rejected_with_the_place_named() {
    let cases: Vec<(String, &str)> = vec![
        (String::new(), "empty"),
        ("   \n\n".into(), "empty"),
        ("wave,flux\n".into(), "header but no data"),
        ("# only a comment\n".into(), "no data rows"),
        (
            format!("{}5040,abc\n", rows(",", 5000.0, 1.0, false)),
            "line 41, column 2",
        ),
        (
            format!("{}5040,1,2\n", rows(",", 5000.0, 1.0, false)),
            "line 41",
        ),
        (rows(",", 5000.0, 0.0, false), "duplicate"),
        (rows(",", -100.0, 1.0, false), "not positive"),
        ("1,1\n2,1\n3,1\n4,1\n".into(), "only 4 pixels"),
        (
            format!("{}4000,1\n", rows(",", 5000.0, 1.0, false)),
            "smaller than the one before",
        ),
    ];
    for (text, want) in cases {
        let e = load_err(&text);
        assert!(e.contains(want), "{e:?} should mention {want:?}");
        assert!(e.starts_with("bad.txt"), "{e:?} should name the file");
    }
}

#[test]
fn all_nan_and_all_zero_flux_are_rejected() {
    let mut nan = String::new();
    let mut zero = String::new();
    for i in 0..30 {
        nan.push_str(&format!("{},nan\n", 5000 + i));
        zero.push_str(&format!("{},0\n", 5000 + i));
    }
    assert!(load_err(&nan).contains("no flux value is a finite number"));
    assert!(load_err(&zero).contains("every flux value is zero"));
}

#[test]
fn a_two_megabyte_line_is_refused_quickly() {
    let line = "1".repeat(2 * 1024 * 1024);
    let e = load_err(&line);
    assert!(e.contains("line 1") && e.contains("bytes long"), "{e}");
}

#[test]
fn binary_garbage_is_refused_as_not_a_spectrum() {
    let bytes: Vec<u8> = (0..4096u32).map(|i| (i * 37 % 256) as u8).collect();
    let e = read_bytes(Path::new("g.dat"), &bytes, &ReadOptions::default())
        .expect_err("garbage refused")
        .to_string();
    assert!(e.contains("g.dat") && e.contains("binary"), "{e}");
}

#[test]
fn ecsv_style_column_units_and_a_medium_stated_in_words_are_honoured() {
    let text = format!(
        "# %ECSV 1.0\n# ---\n# datatype:\n# - {{name: wave, unit: nm, datatype: float64}}\n\
         # - {{name: flux, datatype: float64}}\n# Wavelengths in air.\nwave flux\n{}",
        rows(" ", 600.0, 0.1, false)
    );
    let s = load(&text);
    assert_eq!(s.meta.medium_declared, Some(Medium::Air));
    assert_eq!(s.wave[0], air_to_vacuum(6000.0));
    assert_eq!(s.meta.wave_unit.as_deref(), Some("nm"));
}
