//! Several writers recording to the same targets at once: no line lost, no
//! line interleaved, and disagreement shows as a conflict.

mod decisions_common;

use decisions_common::{scan_line, write_lines, zsift};
use std::process::Stdio;
use zsift::decisions::{Log, Record, Status, replay};

#[test]
fn four_processes_deciding_the_same_targets_lose_and_interleave_nothing() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log_dir = tmp.path().join("log");
    let targets: Vec<String> = (0..20).map(|i| format!("Orla-{i}")).collect();
    let observers = ["ana", "ben", "cai", "dee"];
    let mut children = Vec::new();
    for (k, who) in observers.iter().enumerate() {
        let scan = tmp.path().join(format!("{who}.jsonl"));
        // Each observer's answers differ by 0.05 in z: they disagree.
        let lines: Vec<String> = targets
            .iter()
            .map(|t| scan_line(t, 0.1 + 0.05 * k as f64, "high", "galaxy"))
            .collect();
        write_lines(&scan, &lines);
        children.push(
            zsift()
                .args(["decide", "--log"])
                .arg(&log_dir)
                .arg("--from")
                .arg(&scan)
                .args([
                    "--accept-grade",
                    "good",
                    "--include-decided",
                    "--observer",
                    who,
                ])
                .stdout(Stdio::piped())
                .stderr(Stdio::piped())
                .spawn()
                .expect("spawn"),
        );
    }
    for c in children {
        let out = c.wait_with_output().expect("wait");
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let saved = String::from_utf8_lossy(&out.stdout)
            .lines()
            .filter(|l| l.starts_with("saved "))
            .count();
        assert_eq!(saved, targets.len());
    }
    let r = replay(&log_dir).expect("replay");
    assert!(r.problems.is_empty(), "{:?}", r.problems);
    assert_eq!(r.records, targets.len() * observers.len());
    for t in &targets {
        let st = r.state(t).expect("target present");
        assert_eq!(st.records.len(), observers.len(), "{t}");
        let mut who: Vec<&str> = st.observers();
        who.sort_unstable();
        assert_eq!(who, observers, "{t}");
        assert_eq!(st.status, Status::Conflict, "{t}: four different redshifts");
        assert!(
            st.conflict_summary()
                .is_some_and(|s| s.contains("ben: accept"))
        );
    }
}

#[test]
fn eight_threads_appending_long_records_to_three_files_never_interleave() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let dir = tmp.path().join("log");
    Log::open(&dir).expect("open");
    let per_thread = 40;
    let threads: Vec<_> = (0..8)
        .map(|k| {
            let dir = dir.clone();
            std::thread::spawn(move || {
                // Each thread opens its own Log: its own file handles, so
                // the advisory lock is what keeps the lines apart.
                let log = Log::open(&dir).expect("open");
                let note = format!("{k}").repeat(6000);
                for i in 0..per_thread {
                    let t = format!("Orla-{}", i % 3);
                    log.append(&Record::note(&t, &format!("obs{k}"), &note))
                        .expect("append");
                }
            })
        })
        .collect();
    for t in threads {
        t.join().expect("thread");
    }
    let r = replay(&dir).expect("replay");
    assert!(r.problems.is_empty(), "{:?}", r.problems);
    assert_eq!(r.records, 8 * per_thread);
    for st in r.targets.values() {
        for rec in &st.records {
            let n = rec.note.as_deref().expect("note");
            let first = n.chars().next().expect("non-empty");
            assert!(
                n.chars().all(|c| c == first) && n.len() == 6000,
                "a note was mixed"
            );
        }
    }
}
