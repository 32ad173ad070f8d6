//! `zsift scan` as a command: exit codes, the broken-file corpus, shards and merge.

mod common;

use std::process::Command;

fn zsift() -> Command {
    Command::new(env!("CARGO_BIN_EXE_zsift"))
}

#[test]
fn a_corpus_of_broken_files_is_all_reported_with_exit_status_3() {
    let dir = tempfile::tempdir().expect("tmp");
    let broken = common::broken_corpus(dir.path());
    let out = zsift()
        .args(["scan", "--jobs", "2"])
        .arg(dir.path())
        .output()
        .expect("runs");
    assert_eq!(
        out.status.code(),
        Some(3),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let stdout = String::from_utf8(out.stdout).expect("utf8");
    assert_eq!(stdout.lines().count(), broken.len());
    for line in stdout.lines() {
        let v: serde_json::Value = serde_json::from_str(line).expect("json");
        assert_eq!(v["status"], "error");
        let t = v["target"].as_str().expect("target");
        assert!(!t.contains('/') && !t.contains('\\'), "{t:?}");
    }
    assert!(
        !stdout.chars().any(|c| c.is_control() && c != '\n'),
        "control characters leaked"
    );
    assert!(!stdout.contains('\u{202e}'));
    let stderr = String::from_utf8(out.stderr).expect("utf8");
    assert!(
        stderr.contains(&format!("0 read, {} rejected", broken.len())),
        "{stderr}"
    );
    assert!(!stderr.contains("panicked"), "{stderr}");
}

#[test]
fn usage_errors_exit_with_status_2() {
    let dir = tempfile::tempdir().expect("tmp");
    for args in [
        vec!["scan", "--shard", "0/3", "x.csv"],
        vec!["scan", "--shard", "4/3", "x.csv"],
        vec!["scan", "--format", "xml", "x.csv"],
        vec!["scan", "--jobs", "0", "x.csv"],
        vec!["scan"],
    ] {
        let out = zsift().args(&args).output().expect("runs");
        assert_eq!(out.status.code(), Some(2), "{args:?}");
    }
    let out = zsift().arg("scan").arg(dir.path()).output().expect("runs");
    assert_eq!(out.status.code(), Some(2), "empty folder");
}

#[test]
fn shard_outputs_written_by_the_command_merge_back_to_the_whole_run() {
    let dir = tempfile::tempdir().expect("tmp");
    let corpus = dir.path().join("corpus");
    std::fs::create_dir(&corpus).expect("mkdir");
    common::broken_corpus(&corpus);
    let whole = zsift().arg("scan").arg(&corpus).output().expect("runs");
    let mut parts = Vec::new();
    for k in 1..=3 {
        let p = dir.path().join(format!("s{k}.jsonl"));
        let o = zsift()
            .args(["scan", "--shard", &format!("{k}/3"), "--out"])
            .arg(&p)
            .arg(&corpus)
            .output()
            .expect("runs");
        assert_eq!(o.status.code(), Some(3));
        parts.push(p);
    }
    let merged = zsift()
        .args(["scan", "--merge"])
        .args(&parts)
        .output()
        .expect("runs");
    assert_eq!(merged.status.code(), Some(0));
    assert_eq!(merged.stdout, whole.stdout);
}

#[test]
fn the_csv_form_writes_a_header_and_one_row_per_input_to_the_out_file() {
    let dir = tempfile::tempdir().expect("tmp");
    let corpus = dir.path().join("c");
    std::fs::create_dir(&corpus).expect("mkdir");
    let broken = common::broken_corpus(&corpus);
    let out_path = dir.path().join("out.csv");
    let out = zsift()
        .args(["scan", "--format", "csv", "--jobs", "1", "--out"])
        .arg(&out_path)
        .arg(&corpus)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(3));
    assert!(out.stdout.is_empty(), "nothing on stdout with --out");
    let mut r = csv::Reader::from_path(&out_path).expect("csv");
    let header: Vec<String> = r
        .headers()
        .expect("header")
        .iter()
        .map(String::from)
        .collect();
    assert_eq!(header, zsift::scan::CSV_HEADER);
    let rows: Vec<csv::StringRecord> = r.records().map(|x| x.expect("row")).collect();
    assert_eq!(rows.len(), broken.len());
    assert!(
        rows.iter()
            .all(|row| &row[2] == "error" && !row[20].is_empty())
    );
}

#[test]
fn the_real_identifier_gives_identical_output_for_one_and_two_jobs() {
    let fixtures = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/fits");
    let files: Vec<_> = [
        "image1d_wave_f64.fits",
        "image2d_rows.fits",
        "table_rows.fits",
        "table_vector.fits",
    ]
    .iter()
    .map(|f| fixtures.join(f))
    .collect();
    let run = |jobs: &str| {
        let o = zsift()
            .args(["scan", "--jobs", jobs])
            .args(&files)
            .output()
            .expect("runs");
        assert_eq!(
            o.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        String::from_utf8(o.stdout).expect("utf8")
    };
    let one = run("1");
    let two = run("2");
    assert_eq!(one, two);
    assert_eq!(one.lines().count(), 4);
    for line in one.lines() {
        let v: serde_json::Value = serde_json::from_str(line).expect("json");
        assert_eq!(v["status"], "ok");
        assert!(
            v["barycentric_correction_kms"].is_null()
                || v["barycentric_correction_kms"].is_number()
        );
        let c = v["candidates"].as_array().expect("candidates");
        for (i, c) in c.iter().enumerate() {
            assert_eq!(c["rank"], i + 1);
            assert!(
                ["high", "good", "fair", "poor"].contains(&c["grade"].as_str().expect("grade"))
            );
            assert!(
                ["star", "galaxy", "qso", "unknown"].contains(&c["class"].as_str().expect("class"))
            );
        }
    }
}

// ---- barycentric correction options (issue 8) -------------------------------

/// The barycentric FITS fixtures and their astropy values
/// (`tests/fixtures/bary_astropy.json`, written by
/// `tests/fixtures/make_bary_fixtures.py`; astropy version in the fixture).
fn bary_fixture() -> (std::path::PathBuf, serde_json::Value) {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures");
    let fx: serde_json::Value =
        serde_json::from_str(include_str!("fixtures/bary_astropy.json")).expect("fixture");
    (dir, fx["fits_headers"].clone())
}

/// The fixture site as `LON,LAT,HEIGHT`.
fn fixture_lonlat(h: &serde_json::Value) -> String {
    format!(
        "{},{},{}",
        h["site_lon_deg"].as_f64().expect("lon"),
        h["site_lat_deg"].as_f64().expect("lat"),
        h["site_height_m"].as_f64().expect("height")
    )
}

/// Scan one file with `args`, with `config` as the config file; the single
/// output record.
fn scan_one(file: &std::path::Path, args: &[&str], config: &std::path::Path) -> serde_json::Value {
    let out = zsift()
        .arg("scan")
        .args(args)
        .arg(file)
        .env("ZSIFT_CONFIG", config)
        .output()
        .expect("runs");
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).expect("utf8");
    assert_eq!(text.lines().count(), 1, "{text}");
    serde_json::from_str(text.trim()).expect("json")
}

/// Every candidate's z_bary / velocity_bary_kms is its z composed with `corr`.
fn assert_candidates_follow(rec: &serde_json::Value, corr: Option<f64>) {
    let cands = rec["candidates"].as_array().expect("candidates");
    assert!(!cands.is_empty(), "the fixture spectrum yields candidates");
    for c in cands {
        let z = c["z"].as_f64().expect("z");
        let (zb, vb) = zsift::physics::bary::corrected(z, corr);
        assert_eq!(c["z_bary"].as_f64(), zb, "{c}");
        assert_eq!(c["velocity_bary_kms"].as_f64(), vb, "{c}");
    }
}

#[test]
fn a_file_without_a_site_gets_a_correction_only_when_the_site_is_given() {
    let (dir, h) = bary_fixture();
    let tmp = tempfile::tempdir().expect("tmp");
    let no_config = tmp.path().join("none.toml");
    let file = dir.join("bary_fits/no_site.fits");

    let rec = scan_one(&file, &[], &no_config);
    assert!(rec["barycentric_correction_kms"].is_null(), "{rec}");
    assert_candidates_follow(&rec, None);
    let warnings = rec["warnings"].to_string();
    assert!(warnings.contains("missing observatory site"), "{warnings}");

    let lonlat = fixture_lonlat(&h);
    let rec = scan_one(&file, &[&format!("--site-lonlat={lonlat}")], &no_config);
    // What the physics gives for the same metadata and the same site.
    let meta = zsift::spectrum::read(&file, &Default::default())
        .expect("reads")
        .meta;
    let ov = zsift::physics::bary::BaryOverrides {
        site: Some(zsift::physics::bary::parse_lonlat(&lonlat).expect("site")),
        ..Default::default()
    };
    let want = zsift::physics::bary::correction_kms(&meta, &ov).expect("computable");
    assert_eq!(rec["barycentric_correction_kms"].as_f64(), Some(want));
    assert_candidates_follow(&rec, Some(want));
    assert!(!rec["warnings"].to_string().contains("barycentric"));
}

#[test]
fn a_site_named_in_the_header_or_by_option_is_found_in_the_configured_sites() {
    let (dir, h) = bary_fixture();
    let tmp = tempfile::tempdir().expect("tmp");
    let config = tmp.path().join("review.toml");
    std::fs::write(
        &config,
        format!(
            "[[sites]]\nname = \"{}\"\nlon = {}\nlat = {}\nheight = {}\n",
            h["site_name"].as_str().expect("name").to_uppercase(),
            h["site_lon_deg"],
            h["site_lat_deg"],
            h["site_height_m"]
        ),
    )
    .expect("config");
    // The header's OBSERVAT names the site; the config knows it (any case).
    let rec = scan_one(&dir.join("bary_fits/site_by_name.fits"), &[], &config);
    // Check value: astropy SkyCoord.radial_velocity_correction (fixture).
    let case = h["cases"]
        .as_array()
        .expect("cases")
        .iter()
        .find(|c| c["file"] == "bary_fits/site_by_name.fits")
        .expect("case");
    let astropy = case["correction_kms"].as_f64().expect("value");
    let got = rec["barycentric_correction_kms"]
        .as_f64()
        .expect("computed");
    assert!(
        (got - astropy).abs() < 0.001,
        "{got} vs astropy {astropy} km/s"
    );
    assert_candidates_follow(&rec, Some(got));

    // --site NAME for a file without any site: the same as giving the
    // configured coordinates by hand.
    let file = dir.join("bary_fits/no_site.fits");
    let by_name = scan_one(&file, &["--site", "kestrel hill"], &config);
    let by_hand = scan_one(
        &file,
        &[&format!("--site-lonlat={}", fixture_lonlat(&h))],
        &config,
    );
    assert!(by_name["barycentric_correction_kms"].is_number());
    assert_eq!(
        by_name["barycentric_correction_kms"],
        by_hand["barycentric_correction_kms"]
    );

    // An unknown name is a usage error naming the config file.
    let out = zsift()
        .args(["scan", "--site", "Nowhere Peak"])
        .arg(&file)
        .env("ZSIFT_CONFIG", &config)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("Nowhere Peak") && err.contains(&config.display().to_string()),
        "{err}"
    );
    // A broken site entry is an error naming the file and the entry.
    std::fs::write(&config, "[[sites]]\nname = \"x\"\nlon = 3\n").expect("config");
    let out = zsift()
        .arg("scan")
        .arg(&file)
        .env("ZSIFT_CONFIG", &config)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("entry 1") && err.contains("lat"), "{err}");
}

#[test]
fn options_fill_gaps_and_replace_the_files_values_only_with_bary_replace() {
    let (dir, h) = bary_fixture();
    let tmp = tempfile::tempdir().expect("tmp");
    let no_config = tmp.path().join("none.toml");
    // This file has its own OBSGEO-X/Y/Z.
    let name = "bary_fits/iso_start_exptime_xyz.fits";
    let file = dir.join(name);
    let lonlat = format!("--site-lonlat={}", fixture_lonlat(&h));
    let filling = scan_one(&file, &[&lonlat], &no_config);
    let case = h["cases"]
        .as_array()
        .expect("cases")
        .iter()
        .find(|c| c["file"] == name)
        .expect("case");
    // Check value: astropy, with the file's own site (fixture).
    let astropy = case["correction_kms"].as_f64().expect("value");
    let got = filling["barycentric_correction_kms"]
        .as_f64()
        .expect("computed");
    assert!((got - astropy).abs() < 0.001, "{got} vs {astropy}");

    // The file's site is the fixture site itself; replace it with another
    // (the demo's invented one, 52 degrees west and 16 north of it).
    use zsift::synth::demo::{HEIGHT_M, LATITUDE_DEG, LONGITUDE_DEG};
    let other = format!("{LONGITUDE_DEG},{LATITUDE_DEG},{HEIGHT_M}");
    let replaced = scan_one(
        &file,
        &[&format!("--site-lonlat={other}"), "--bary-replace"],
        &no_config,
    );
    let meta = zsift::spectrum::read(&file, &Default::default())
        .expect("reads")
        .meta;
    let ov = zsift::physics::bary::BaryOverrides {
        site: Some(zsift::physics::bary::parse_lonlat(&other).expect("site")),
        replace: true,
        ..Default::default()
    };
    let want = zsift::physics::bary::correction_kms(&meta, &ov).expect("computable");
    assert_eq!(replaced["barycentric_correction_kms"].as_f64(), Some(want));
    assert!(
        (want - got).abs() > 0.05,
        "another site changes the rotational part: {want} vs {got}"
    );

    // A usage error in the time option exits 2.
    let out = zsift()
        .args(["scan", "--obs-time", "2026-13-40T00:00:00"])
        .arg(&file)
        .env("ZSIFT_CONFIG", &no_config)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--obs-time"));
}
