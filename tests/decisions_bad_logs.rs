//! Bad logs and bad places: torn last lines, garbage, unknown schema
//! versions, a read-only log folder, a full disk. Each gives a clear error
//! or problem with file and line, and nothing already written is lost.

mod decisions_common;

use decisions_common::{Tmpfs, zsift};
use std::io::Write;
use zsift::decisions::{
    Log, LogError, ProblemKind, Record, Solution, Source, Status, TORN_SUFFIX, log_file_name,
    replay,
};

fn three_records(log: &Log, target: &str) {
    let sol = Solution {
        z: Some(0.25),
        ..Solution::default()
    };
    log.append(&Record::note(target, "ana", "first"))
        .expect("append");
    log.append(&Record::accept(
        target,
        "ana",
        sol,
        Source::Candidate { rank: 1 },
    ))
    .expect("append");
    log.append(&Record::note(target, "ana", "third"))
        .expect("append");
}

fn append_raw(path: &std::path::Path, bytes: &[u8]) {
    let mut f = std::fs::OpenOptions::new()
        .append(true)
        .open(path)
        .expect("open raw");
    f.write_all(bytes).expect("write raw");
}

#[test]
fn a_torn_last_line_is_reported_set_aside_and_the_lines_before_it_kept() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = Log::open(tmp.path()).expect("open");
    three_records(&log, "Orla-17");
    let file = log.file_for("Orla-17");
    let torn = br#"{"schema":1,"id":"00ff","recorded_utc":"2026-12-0"#;
    append_raw(&file, torn);

    // Read-only replay reports it with the line number and uses the rest.
    let r = replay(tmp.path()).expect("replay");
    assert_eq!(r.records, 3);
    assert_eq!(r.problems.len(), 1);
    assert_eq!(r.problems[0].line, Some(4));
    assert_eq!(r.problems[0].kind, ProblemKind::TornTail(torn.len()));
    assert!(r.problems[0].to_string().contains("line 4"));
    assert_eq!(r.status("Orla-17"), Status::Accepted);

    // Opening for writing sets the torn bytes aside, keeping them.
    let log = Log::open(tmp.path()).expect("open again");
    let reps = log.take_repairs();
    assert_eq!(reps.len(), 1);
    assert_eq!(reps[0].bytes, torn.len() as u64);
    let side = std::fs::read(&reps[0].side_file).expect("side file");
    assert!(side.starts_with(torn));
    assert!(reps[0].side_file.to_string_lossy().ends_with(TORN_SUFFIX));

    // The log continues on a fresh line.
    log.append(&Record::reject("Orla-17", "ben"))
        .expect("append after repair");
    let r = replay(tmp.path()).expect("replay");
    assert!(r.problems.is_empty(), "{:?}", r.problems);
    assert_eq!(r.records, 4);
    assert_eq!(r.status("Orla-17"), Status::Conflict);
}

#[test]
fn an_append_after_another_process_died_mid_line_still_starts_a_fresh_line() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = Log::open(tmp.path()).expect("open");
    three_records(&log, "Orla-18");
    // The torn tail appears after this Log was opened (another writer died).
    append_raw(&log.file_for("Orla-18"), b"{\"schema\":1,\"targ");
    log.append(&Record::flag("Orla-18", "ana")).expect("append");
    assert_eq!(log.take_repairs().len(), 1);
    let r = replay(tmp.path()).expect("replay");
    assert!(r.problems.is_empty(), "{:?}", r.problems);
    assert_eq!(r.status("Orla-18"), Status::Flagged);
}

#[test]
fn garbage_lines_and_unknown_schemas_are_named_by_file_and_line_and_the_rest_is_read() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = Log::open(tmp.path()).expect("open");
    log.append(&Record::note("Orla-19", "ana", "before"))
        .expect("append");
    let file = log.file_for("Orla-19");
    append_raw(&file, b"hello, not json\n");
    append_raw(&file, b"[1,2,3]\n");
    append_raw(&file, b"{\"no\":\"schema\"}\n");
    append_raw(&file, b"\xff\xfe\x00binary\n");
    let mut future = serde_json::to_value(Record::reject("Orla-19", "zed")).expect("value");
    future["schema"] = serde_json::json!(7);
    append_raw(&file, format!("{future}\n").as_bytes());
    append_raw(&file, b"{\"schema\":1,\"id\":\"x\"}\n");
    log.append(&Record::reject("Orla-19", "ana"))
        .expect("append");

    let r = replay(tmp.path()).expect("replay");
    assert_eq!(r.records, 2, "the two good lines are read");
    assert_eq!(
        r.status("Orla-19"),
        Status::Rejected,
        "the schema-7 reject by zed is not used"
    );
    let lines: Vec<usize> = r.problems.iter().filter_map(|p| p.line).collect();
    assert_eq!(lines, vec![2, 3, 4, 5, 6, 7]);
    assert!(matches!(r.problems[4].kind, ProblemKind::UnknownSchema(7)));
    for p in &r.problems {
        let msg = p.to_string();
        assert!(msg.contains(&log_file_name("Orla-19")), "{msg}");
    }
    assert!(r.problems[4].to_string().contains("schema version 7"));

    // export still works, says so on stderr and exits 3.
    let out = zsift()
        .args(["export", "--log"])
        .arg(tmp.path())
        .output()
        .expect("run export");
    assert_eq!(out.status.code(), Some(3));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("line 6") && err.contains("schema version 7"),
        "{err}"
    );
    assert!(String::from_utf8_lossy(&out.stdout).contains("Orla-19,rejected"));
}

#[cfg(unix)]
#[test]
fn a_symbolic_link_planted_in_the_log_folder_is_refused() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let dir = tmp.path().join("log");
    let log = Log::open(&dir).expect("open");
    let outside = tmp.path().join("outside.txt");
    std::fs::write(&outside, "precious\n").expect("write");
    std::os::unix::fs::symlink(&outside, log.file_for("Orla-20")).expect("symlink");
    let e = log
        .append(&Record::reject("Orla-20", "ana"))
        .expect_err("must refuse");
    assert!(matches!(e, LogError::NotAFile { .. }), "{e}");
    assert_eq!(
        std::fs::read_to_string(&outside).expect("read"),
        "precious\n"
    );
}

#[test]
fn a_full_disk_gives_a_clear_error_and_keeps_every_earlier_decision() {
    let Some(fs) = Tmpfs::mount("64k") else {
        eprintln!(
            "SKIPPED: cannot mount a tmpfs here (needs root); covered by the unit tests of the write path"
        );
        return;
    };
    let dir = fs.path().join("log");
    let log = Log::open(&dir).expect("open");
    let note = "n".repeat(900);
    let mut ok = 0usize;
    let err = loop {
        match log.append(&Record::note("Orla-21", "ana", &note)) {
            Ok(()) => ok += 1,
            Err(e) => break e,
        }
        assert!(ok < 1000, "a 64 KiB disk cannot take 1000 records");
    };
    assert!(
        matches!(
            err,
            LogError::DiskFull {
                rolled_back: true,
                ..
            }
        ),
        "{err}"
    );
    assert!(err.to_string().contains("full") && err.to_string().contains("NOT saved"));
    let r = replay(&dir).expect("replay");
    assert!(
        r.problems.is_empty(),
        "no partial line left: {:?}",
        r.problems
    );
    assert_eq!(r.records, ok);

    // The command line says so and exits 1, printing no `saved`.
    let out = zsift()
        .args(["decide", "--log"])
        .arg(&dir)
        .args(["--target", "Orla-21", "--action", "note", "--note"])
        .arg(&note)
        .output()
        .expect("run decide");
    assert_eq!(out.status.code(), Some(1));
    assert!(out.stdout.is_empty());
    assert!(String::from_utf8_lossy(&out.stderr).contains("full"));
    assert_eq!(replay(&dir).expect("replay").records, ok);
}

#[test]
fn a_read_only_log_folder_refuses_writes_clearly_and_still_replays_and_exports() {
    let Some(fs) = Tmpfs::mount("1m") else {
        eprintln!("SKIPPED: cannot mount a tmpfs here (needs root)");
        return;
    };
    let dir = fs.path().join("log");
    let log = Log::open(&dir).expect("open");
    three_records(&log, "Orla-22");
    drop(log);
    assert!(fs.remount_read_only(), "remount read-only");

    let e = Log::open(&dir).expect_err("read-only must be refused");
    assert!(matches!(e, LogError::ReadOnly { .. }), "{e}");
    assert!(e.to_string().contains("cannot be written"));

    let r = replay(&dir).expect("replay works read-only");
    assert_eq!(r.records, 3);
    assert_eq!(r.status("Orla-22"), Status::Accepted);

    let out = zsift()
        .args(["decide", "--log"])
        .arg(&dir)
        .args(["--target", "Orla-22", "--action", "reject"])
        .output()
        .expect("run decide");
    assert_eq!(out.status.code(), Some(1));
    assert!(out.stdout.is_empty());
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot be written"));

    let out = zsift()
        .args(["export", "--log"])
        .arg(&dir)
        .output()
        .expect("run export");
    assert_eq!(out.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&out.stdout).contains("Orla-22,accepted"));
}

#[test]
fn a_scripted_decide_on_a_target_with_a_torn_line_reports_the_repair_and_saves() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = Log::open(tmp.path()).expect("open");
    three_records(&log, "Orla-23");
    append_raw(&log.file_for("Orla-23"), b"{\"schema\":1,\"id\":\"ab");
    let out = zsift()
        .args(["decide", "--log"])
        .arg(tmp.path())
        .args([
            "--target",
            "Orla-23",
            "--action",
            "flag",
            "--observer",
            "ana",
        ])
        .output()
        .expect("run decide");
    assert_eq!(out.status.code(), Some(0));
    assert_eq!(String::from_utf8_lossy(&out.stdout), "saved Orla-23\n");
    assert!(String::from_utf8_lossy(&out.stderr).contains("unfinished last line"));
    let r = replay(tmp.path()).expect("replay");
    assert!(r.problems.is_empty(), "{:?}", r.problems);
    assert_eq!(r.records, 4);
    assert_eq!(r.status("Orla-23"), Status::Flagged);
}
