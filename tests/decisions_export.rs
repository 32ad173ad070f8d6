//! Exported catalogues open as CSV, with formula injection neutralised, and
//! target names built to escape the log folder stay inside it.

mod decisions_common;

use decisions_common::zsift;
use proptest::prelude::*;
use zsift::decisions::{
    LOG_EXTENSION, Log, MARKER, Record, Solution, Source, log_file_name, replay,
};

fn hostile_names() -> Vec<String> {
    vec![
        "../x".into(),
        "../../../../etc/passwd".into(),
        "/etc/shadow".into(),
        "C:\\Windows\\system32".into(),
        "..\\..\\up".into(),
        "a\u{0}b".into(),
        "nul\u{0}".into(),
        ".".into(),
        "..".into(),
        ".hidden".into(),
        "x".repeat(4000),
        "Ørla-17 ☉ 北".into(),
        "\u{202E}evil".into(),
        "=HYPERLINK(\"http://x\",\"click\")".into(),
        "+1+2".into(),
        "-3+4".into(),
        "@SUM(A1:A9)".into(),
        "\t=1".into(),
        "\r=1".into(),
        "line\nbreak".into(),
        "comma, \"quote\"".into(),
        "-0.5".into(),
        "CON".into(),
        "Orla-17".into(),
        "orla-17".into(),
    ]
}

fn files_everywhere(root: &std::path::Path) -> Vec<std::path::PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).expect("list").flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p.clone());
            }
            out.push(p);
        }
    }
    out
}

#[test]
fn hostile_target_names_stay_in_the_log_folder_and_replay_exactly() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let dir = tmp.path().join("a").join("log");
    let log = Log::open(&dir).expect("open");
    let names = hostile_names();
    for (i, n) in names.iter().enumerate() {
        let sol = Solution {
            z: Some(0.01 * i as f64),
            ..Solution::default()
        };
        log.append(&Record::accept(n, "ana", sol, Source::Hand))
            .expect("append");
    }
    // Nothing was created anywhere but directly in the log folder.
    for p in files_everywhere(tmp.path()) {
        let inside = p == tmp.path().join("a") || p == dir || p.parent() == Some(dir.as_path());
        assert!(inside, "{} is outside the log folder", p.display());
    }
    let logs: Vec<_> = std::fs::read_dir(&dir)
        .expect("list")
        .flatten()
        .filter(|e| e.path().extension().is_some_and(|x| x == LOG_EXTENSION))
        .collect();
    assert_eq!(logs.len(), names.len(), "one file per distinct name");
    let r = replay(&dir).expect("replay");
    assert!(r.problems.is_empty(), "{:?}", r.problems);
    for n in &names {
        assert!(r.state(n).is_some(), "{n:?} lost");
    }
}

#[test]
fn the_csv_export_parses_back_with_every_formula_cell_neutralised() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let dir = tmp.path().join("log");
    let log = Log::open(&dir).expect("open");
    let names = hostile_names();
    for n in &names {
        let sol = Solution {
            z: Some(-0.00012),
            subclass: Some("=cmd|' /C calc'!A0".into()),
            lines: vec!["@x".into()],
            ..Solution::default()
        };
        log.append(
            &Record::accept(n, "-ana", sol, Source::Candidate { rank: 1 }).with_note("+note"),
        )
        .expect("append");
    }
    let out_file = tmp.path().join("out.csv");
    let out = zsift()
        .args(["export", "--log"])
        .arg(&dir)
        .arg("--out")
        .arg(&out_file)
        .output()
        .expect("run export");
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut rdr = csv::Reader::from_path(&out_file).expect("csv opens");
    let header = rdr.headers().expect("header").clone();
    assert_eq!(&header[0], "target");
    let col = |name: &str| header.iter().position(|h| h == name).expect("column");
    let (tc, zc, sc) = (col("target"), col("z"), col("subclass"));
    let mut got = Vec::new();
    for rec in rdr.records() {
        let rec = rec.expect("row parses");
        assert_eq!(rec.len(), header.len());
        for cell in rec.iter() {
            let first = cell.chars().next();
            let risky = matches!(first, Some('=' | '+' | '@' | '\t' | '\r'))
                || (first == Some('-') && cell.parse::<f64>().is_err());
            assert!(!risky, "unneutralised cell {cell:?}");
        }
        assert_eq!(&rec[zc], "-0.00012", "plain numbers stay numbers");
        assert!(rec[sc].starts_with("'="));
        let t = &rec[tc];
        // Undo the neutralisation to compare with the exact names.
        let orig = match t.strip_prefix('\'') {
            Some(rest) if rest.starts_with(['=', '+', '-', '@', '\t', '\r']) => rest,
            _ => t,
        };
        got.push(orig.to_string());
    }
    let mut want = names.clone();
    want.sort();
    got.sort();
    assert_eq!(got, want);
}

#[test]
fn the_jsonl_export_has_one_object_per_target_with_numbers_as_numbers() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = Log::open(tmp.path()).expect("open");
    let sol = Solution {
        z: Some(0.5),
        z_err: Some(1e-4),
        ..Solution::default()
    };
    log.append(&Record::accept(
        "Orla-1",
        "ana",
        sol,
        Source::Candidate { rank: 2 },
    ))
    .expect("append");
    log.append(&Record::reject("Orla-2", "ben"))
        .expect("append");
    let out = zsift()
        .args(["export", "--format", "jsonl", "--log"])
        .arg(tmp.path())
        .output()
        .expect("run");
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8(out.stdout).expect("utf-8");
    let rows: Vec<serde_json::Value> = text
        .lines()
        .map(|l| serde_json::from_str(l).expect("json row"))
        .collect();
    assert_eq!(rows.len(), 2);
    assert_eq!(rows[0]["z"], serde_json::json!(0.5));
    assert_eq!(rows[0]["source"], "candidate 2");
    assert_eq!(rows[1]["status"], "rejected");
}

#[test]
fn the_tally_counts_queue_targets_never_touched_as_undecided() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log_dir = tmp.path().join("log");
    for (t, a) in [("Orla-1", "accept"), ("Orla-2", "reject")] {
        let mut c = zsift();
        c.args(["decide", "--log"])
            .arg(&log_dir)
            .args(["--target", t, "--action", a]);
        if a == "accept" {
            c.args(["--class", "star", "--z", "0.0001"]);
        }
        assert!(c.status().expect("run").success());
    }
    let q = tmp.path().join("night.queue");
    std::fs::write(
        &q,
        "path,target\na.fits,Orla-1\nb.fits,Orla-2\nc.fits,Orla-3\n",
    )
    .expect("write");
    let out = zsift()
        .args(["export", "--tally", "--log"])
        .arg(&log_dir)
        .arg("--queue")
        .arg(&q)
        .output()
        .expect("run");
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("targets         3"), "{text}");
    assert!(text.contains("undecided       1"), "{text}");
    assert!(text.contains("star              1"), "{text}");
    assert!(text.lines().count() <= 22, "fits one 80x24 screen");
}

#[test]
fn the_marker_file_is_not_taken_for_a_log() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = Log::open(tmp.path()).expect("open");
    assert!(tmp.path().join(MARKER).exists());
    log.append(&Record::reject("Orla-1", "ana"))
        .expect("append");
    let r = replay(tmp.path()).expect("replay");
    assert_eq!(r.files, 1);
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn any_target_name_maps_to_a_plain_file_name_in_the_folder(name in any::<String>()) {
        let f = log_file_name(&name);
        prop_assert!(!f.contains('/') && !f.contains('\\') && !f.contains('\0'));
        prop_assert!(!f.starts_with('.'));
        prop_assert!(f.len() <= 100);
        let p = std::path::Path::new("/logs").join(&f);
        prop_assert_eq!(p.parent(), Some(std::path::Path::new("/logs")));
        prop_assert_eq!(p.components().count(), 3);
    }
}
