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
