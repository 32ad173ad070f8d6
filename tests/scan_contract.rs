//! The batch scan: output contract field by field, order and shards, broken
//! inputs. The analyser is a hand-made stand-in (see tests/common) so that
//! these tests check the scan's plumbing, not the science.

mod common;

use serde_json::Value;
use std::path::PathBuf;
use zsift::scan::{self, Format, Record, Shard, Writer};

fn analyser() -> impl Fn(&zsift::spectrum::Spectrum) -> zsift::identify::Analysis + Sync {
    common::fake_analysis
}

/// Run the scan and return its JSON Lines output.
fn jsonl(inputs: &[PathBuf], jobs: usize) -> (String, scan::Summary) {
    let buf = std::sync::Arc::new(std::sync::Mutex::new(Vec::<u8>::new()));
    struct Sink(std::sync::Arc<std::sync::Mutex<Vec<u8>>>);
    impl std::io::Write for Sink {
        fn write(&mut self, b: &[u8]) -> std::io::Result<usize> {
            self.0.lock().expect("lock").extend_from_slice(b);
            Ok(b.len())
        }
        fn flush(&mut self) -> std::io::Result<()> {
            Ok(())
        }
    }
    let mut w = Writer::new(Format::Jsonl, Box::new(Sink(buf.clone()))).expect("writer");
    let a = analyser();
    let summary = scan::run(
        inputs,
        &a,
        &scan::Options::default(),
        jobs,
        |r| w.write(r),
        &|_| {},
    )
    .expect("scan runs");
    w.flush().expect("flush");
    let text = String::from_utf8(buf.lock().expect("lock").clone()).expect("utf8");
    (text, summary)
}

#[test]
fn every_contract_field_is_present_with_its_type() {
    let dir = tempfile::tempdir().expect("tmp");
    let inputs = scan::find_inputs(&common::good_corpus(dir.path(), 2));
    let (out, _) = jsonl(&inputs, 1);
    let first: Value = serde_json::from_str(out.lines().next().expect("a line")).expect("json");
    for (k, kind) in [
        ("target", "string"),
        ("path", "string"),
        ("status", "string"),
        ("medium", "string"),
        ("pixels", "number"),
        ("wavelength_min", "number"),
        ("wavelength_max", "number"),
        ("snr", "number"),
        ("barycentric_correction_kms", "null"),
        ("lines", "array"),
        ("candidates", "array"),
        ("warnings", "array"),
    ] {
        let v = first.get(k).unwrap_or_else(|| panic!("missing {k}"));
        assert_eq!(json_kind(v), kind, "{k}");
    }
    assert_eq!(first["status"], "ok");
    assert_eq!(first["medium"], "vacuum");
    assert_eq!(first["pixels"], 64);
    assert_eq!(first["target"], "Orla-0");
    assert_eq!(first["wavelength_min"], 4000.0);
    let line = &first["lines"][0];
    for k in [
        "wavelength",
        "wavelength_err",
        "snr",
        "fwhm_kms",
        "flux",
        "ew",
    ] {
        assert_eq!(json_kind(&line[k]), "number", "lines.{k}");
    }
    assert_eq!(line["kind"], "emission");
    assert!(line["feature"].is_null() || line["feature"] == "sky");
    let c = &first["candidates"][0];
    for k in ["rank", "z", "z_err", "velocity_kms", "score"] {
        assert_eq!(json_kind(&c[k]), "number", "candidates.{k}");
    }
    assert_eq!(c["class"], "galaxy");
    assert_eq!(c["subclass"], "star-forming");
    assert_eq!(c["grade"], "good");
    assert_eq!(json_kind(&c["reason"]), "string");
    assert!(c["z_bary"].is_null() && c["velocity_bary_kms"].is_null());
    let m = &c["matched"][0];
    assert_eq!(m["line"], "H-alpha");
    for k in ["rest_wavelength", "observed_wavelength", "offset_kms"] {
        assert_eq!(json_kind(&m[k]), "number", "matched.{k}");
    }
}

fn json_kind(v: &Value) -> &'static str {
    match v {
        Value::Null => "null",
        Value::Bool(_) => "bool",
        Value::Number(_) => "number",
        Value::String(_) => "string",
        Value::Array(_) => "array",
        Value::Object(_) => "object",
    }
}

#[test]
fn error_records_carry_exactly_target_path_status_and_error() {
    let dir = tempfile::tempdir().expect("tmp");
    let broken = common::broken_corpus(dir.path());
    let (out, summary) = jsonl(&scan::find_inputs(&broken), 2);
    assert_eq!(summary.rejected, broken.len());
    assert_eq!(summary.read, 0);
    for line in out.lines() {
        let v: Value = serde_json::from_str(line).expect("json");
        let obj = v.as_object().expect("object");
        let mut keys: Vec<&str> = obj.keys().map(String::as_str).collect();
        keys.sort();
        assert_eq!(keys, ["error", "path", "status", "target"], "{line}");
        assert_eq!(v["status"], "error");
        let err = v["error"].as_str().expect("error text");
        assert!(!err.is_empty());
        for field in ["target", "path", "error"] {
            let s = v[field].as_str().expect("string");
            assert!(
                !s.chars()
                    .any(|c| c.is_control() || ('\u{202a}'..='\u{202e}').contains(&c)),
                "{field}: {s:?}"
            );
        }
        assert!(!v["target"].as_str().expect("t").contains('/'));
    }
}

#[test]
fn output_is_identical_for_one_and_two_jobs() {
    let dir = tempfile::tempdir().expect("tmp");
    common::good_corpus(dir.path(), 30);
    common::broken_corpus(&dir.path().join("night1"));
    let inputs = scan::find_inputs(&[dir.path().to_path_buf()]);
    assert_eq!(inputs.len(), 45);
    let (one, s1) = jsonl(&inputs, 1);
    let (two, s2) = jsonl(&inputs, 2);
    let (four, _) = jsonl(&inputs, 4);
    assert_eq!(one, two);
    assert_eq!(one, four);
    assert_eq!(s1.read, s2.read);
    assert_eq!(s1.rejected, 15);
    assert_eq!(one.lines().count(), 45);
}

#[test]
fn shards_one_two_three_of_three_cover_the_input_exactly_once_and_merge_to_the_whole() {
    let dir = tempfile::tempdir().expect("tmp");
    common::good_corpus(dir.path(), 20);
    let all = scan::find_inputs(&[dir.path().to_path_buf()]);
    let (whole, _) = jsonl(&all, 2);
    let mut seen = Vec::new();
    let mut parts = Vec::new();
    for k in 1..=3 {
        let part = Shard { k, n: 3 }.select(&all);
        seen.extend(part.clone());
        let (out, _) = jsonl(&part, 2);
        let p = dir.path().join(format!("part{k}.jsonl"));
        std::fs::write(&p, &out).expect("write");
        parts.push((k, p));
    }
    let mut sorted = seen.clone();
    sorted.sort();
    sorted.dedup();
    assert_eq!(sorted.len(), seen.len(), "an input was in two shards");
    assert_eq!(sorted, all, "an input was in no shard");
    // Given out of order, the merge still restores shard order.
    parts.swap(0, 2);
    let mut merged = Vec::new();
    let n = scan::merge_shards(&parts, &mut merged).expect("merge");
    assert_eq!(n, 20);
    assert_eq!(String::from_utf8(merged).expect("utf8"), whole);
}

#[test]
fn directories_are_searched_recursively_by_extension_and_sorted() {
    let dir = tempfile::tempdir().expect("tmp");
    let made = common::good_corpus(dir.path(), 6);
    std::fs::write(dir.path().join("notes.md"), "not a spectrum").expect("write");
    std::fs::write(dir.path().join(".hidden.csv"), "x").expect("write");
    std::fs::write(dir.path().join("UPPER.FITS"), "x").expect("write");
    let found = scan::find_inputs(&[dir.path().to_path_buf()]);
    let mut want = made.clone();
    want.push(dir.path().join("UPPER.FITS"));
    want.sort();
    assert_eq!(found, want);
}

#[test]
fn the_csv_form_has_one_row_per_input_with_the_rank_one_answer() {
    let dir = tempfile::tempdir().expect("tmp");
    let mut inputs = common::good_corpus(dir.path(), 3);
    inputs.push(dir.path().join("missing.csv"));
    let inputs = scan::find_inputs(&inputs);
    let a = analyser();
    let mut rows = Vec::new();
    scan::run(
        &inputs,
        &a,
        &scan::Options::default(),
        2,
        |r: &Record| {
            rows.push(scan::csv_row(r));
            Ok(())
        },
        &|_| {},
    )
    .expect("runs");
    assert_eq!(rows.len(), 4);
    let col = |name: &str| {
        scan::CSV_HEADER
            .iter()
            .position(|h| *h == name)
            .expect("column")
    };
    let ok: Vec<_> = rows.iter().filter(|r| r[col("status")] == "ok").collect();
    assert_eq!(ok.len(), 3);
    assert_eq!(ok[0][col("class")], "galaxy");
    assert_eq!(ok[0][col("grade")], "good");
    assert_eq!(ok[0][col("matched")], "H-alpha");
    let bad = rows
        .iter()
        .find(|r| r[col("status")] == "error")
        .expect("error row");
    assert!(bad[col("error")].contains("missing.csv"));
    assert!(rows.iter().all(|r| r.len() == scan::CSV_HEADER.len()));
}

#[test]
fn a_target_with_path_parts_is_reported_cleaned() {
    let dir = tempfile::tempdir().expect("tmp");
    let p = dir.path().join("x.csv");
    std::fs::write(
        &p,
        common::text_spectrum("../../etc/\u{1b}[2Jpasswd", 5000.0, 5),
    )
    .expect("write");
    let (out, _) = jsonl(&[p], 1);
    let v: Value = serde_json::from_str(out.trim()).expect("json");
    let t = v["target"].as_str().expect("target");
    assert!(
        !t.contains('/') && !t.contains("..") && !t.chars().any(char::is_control),
        "{t:?}"
    );
    assert!(
        v["warnings"]
            .as_array()
            .expect("w")
            .iter()
            .any(|w| w.as_str().is_some_and(|w| w.contains("target name")))
    );
}
