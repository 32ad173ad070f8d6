//! `zsift decide` from scripts: single records, undo, bulk acceptance by
//! grade with every skip reported, and the exit codes.

mod decisions_common;

use decisions_common::{scan_line, write_lines, zsift};
use zsift::decisions::{Action, Source, Status, replay};
use zsift::identify::Grade;

fn run(args: &[&str], log: &std::path::Path) -> (Option<i32>, String, String) {
    let out = zsift()
        .arg("decide")
        .arg("--log")
        .arg(log)
        .args(args)
        .output()
        .expect("run decide");
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn a_scripted_accept_then_undo_leaves_the_target_undecided_with_both_records_kept() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = tmp.path().join("log");
    let spectrum = tmp.path().join("orla-5.txt");
    std::fs::write(&spectrum, "4000 1.0\n4001 1.1\n").expect("write");
    let (code, out, err) = run(
        &[
            "--target",
            "Orla-5",
            "--action",
            "accept",
            "--z",
            "0.0512",
            "--z-err",
            "0.0001",
            "--class",
            "galaxy",
            "--observer",
            "ana",
            "--input",
        ],
        &log,
    );
    // (--input takes the next argument)
    assert_eq!(
        code,
        Some(2),
        "--input without a file is a usage error: {err}"
    );
    assert!(out.is_empty());
    let (code, out, err) = run(
        &[
            "--target",
            "Orla-5",
            "--action",
            "accept",
            "--z",
            "0.0512",
            "--z-err",
            "0.0001",
            "--class",
            "galaxy",
            "--observer",
            "ana",
            "--input",
            spectrum.to_str().expect("utf-8"),
        ],
        &log,
    );
    assert_eq!(code, Some(0), "{err}");
    assert_eq!(out, "saved Orla-5\n");
    let r = replay(&log).expect("replay");
    let st = r.state("Orla-5").expect("state");
    assert_eq!(st.status, Status::Accepted);
    let rec = &st.records[0];
    assert_eq!(rec.observer, "ana");
    assert_eq!(rec.source, Some(Source::Hand));
    assert_eq!(
        rec.input.as_ref().map(|f| f.bytes),
        Some(18),
        "4000 1.0\\n4001 1.1\\n is 18 bytes"
    );
    assert_eq!(rec.tool_version, zsift::VERSION);

    let (code, out, _) = run(
        &[
            "--target",
            "Orla-5",
            "--action",
            "undo",
            "--observer",
            "ben",
        ],
        &log,
    );
    assert_eq!(code, Some(1), "ben has nothing to undo");
    assert!(out.is_empty());
    let (code, out, err) = run(
        &[
            "--target",
            "Orla-5",
            "--action",
            "undo",
            "--observer",
            "ana",
        ],
        &log,
    );
    assert_eq!(code, Some(0), "{err}");
    assert_eq!(out, "saved Orla-5\n");
    let r = replay(&log).expect("replay");
    let st = r.state("Orla-5").expect("state");
    assert_eq!(st.status, Status::Undecided);
    assert_eq!(st.records.len(), 2);
    assert_eq!(st.records[1].action, Action::Undo);
    assert_eq!(
        st.records[1].undoes.as_deref(),
        Some(st.records[0].id.as_str())
    );
}

#[test]
fn usage_errors_exit_with_2_and_save_nothing() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = tmp.path().join("log");
    for args in [
        vec!["--target", "X", "--action", "note"],
        vec!["--target", "X", "--action", "reclassify"],
        vec!["--target", "X", "--action", "reject", "--z", "0.1"],
        vec!["--target", "X", "--action", "accept", "--z", "-1.5"],
        vec!["--target", "X", "--action", "explode"],
        vec!["--target", "", "--action", "reject"],
        vec!["--from", "scan.jsonl"],
        vec!["--target", "X"],
    ] {
        let (code, out, _) = run(&args, &log);
        assert_eq!(code, Some(2), "{args:?}");
        assert!(out.is_empty(), "{args:?}");
    }
    assert!(!log.exists() || replay(&log).expect("replay").records == 0);
}

#[test]
fn bulk_acceptance_takes_rank_1_at_or_above_the_grade_and_reports_every_skip() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = tmp.path().join("log");
    let scan = tmp.path().join("scan.jsonl");
    write_lines(
        &scan,
        &[
            scan_line("Orla-1", 0.10, "high", "galaxy"),
            scan_line("Orla-2", 0.20, "good", "galaxy"),
            scan_line("Orla-3", 0.30, "fair", "galaxy"),
            scan_line("Orla-4", 0.40, "poor", "qso"),
            r#"{"target":"Orla-5","path":"x","status":"error","error":"HDU 1 keyword CDELT1 missing"}"#.into(),
            r#"{"target":"Orla-6","path":"x","status":"ok","candidates":[]}"#.into(),
            "{not json".into(),
            scan_line("Orla-1", 0.11, "high", "galaxy"),
        ],
    );
    let s = scan.to_str().expect("utf-8");
    let (code, out, err) = run(
        &["--from", s, "--accept-grade", "good", "--observer", "pipe"],
        &log,
    );
    assert_eq!(code, Some(3), "skips give exit 3: {err}");
    let lines: Vec<&str> = out.lines().collect();
    assert_eq!(
        lines.iter().filter(|l| l.starts_with("saved ")).count(),
        2,
        "{out}"
    );
    assert!(out.contains("saved Orla-1\n") && out.contains("saved Orla-2\n"));
    assert!(
        out.contains("skipped Orla-3: rank-1 grade fair is below good"),
        "{out}"
    );
    assert!(out.contains("skipped Orla-4: rank-1 grade poor is below good"));
    assert!(out.contains(
        "skipped Orla-5: the scan could not use this input (HDU 1 keyword CDELT1 missing)"
    ));
    assert!(out.contains("skipped Orla-6: the scan found no candidate"));
    assert!(out.contains("skipped line 7:"));
    assert!(
        out.contains("skipped Orla-1: already accepted"),
        "a repeat in one file is not re-accepted: {out}"
    );
    assert!(err.contains("2 accepted, 6 skipped"), "{err}");

    let r = replay(&log).expect("replay");
    let st = r.state("Orla-1").expect("state");
    assert_eq!(st.records.len(), 1);
    let sol = st.solution.as_ref().expect("solution");
    assert_eq!(sol.z, Some(0.10));
    assert_eq!(sol.grade, Some(Grade::High));
    assert_eq!(sol.lines, ["H-alpha"]);
    assert_eq!(st.records[0].source, Some(Source::Candidate { rank: 1 }));

    // A second run does not re-accept what is decided, unless asked.
    let (code, out, _) = run(
        &["--from", s, "--accept-grade", "high", "--observer", "pipe"],
        &log,
    );
    assert_eq!(code, Some(3));
    assert!(!out.contains("saved "), "{out}");
    assert!(
        out.contains("skipped Orla-1: already accepted by pipe"),
        "{out}"
    );
    let (code, out, _) = run(
        &[
            "--from",
            s,
            "--accept-grade",
            "high",
            "--observer",
            "pipe2",
            "--include-decided",
        ],
        &log,
    );
    assert_eq!(code, Some(3));
    assert_eq!(out.matches("saved Orla-1\n").count(), 1, "{out}");
    assert_eq!(
        replay(&log)
            .expect("replay")
            .state("Orla-1")
            .map(|s| s.records.len()),
        Some(2)
    );

    // A clean file exits 0.
    let clean = tmp.path().join("clean.jsonl");
    write_lines(&clean, &[scan_line("Orla-9", 0.9, "high", "qso")]);
    let (code, out, _) = run(
        &[
            "--from",
            clean.to_str().expect("utf-8"),
            "--accept-grade",
            "poor",
        ],
        &log,
    );
    assert_eq!((code, out.as_str()), (Some(0), "saved Orla-9\n"));
}
