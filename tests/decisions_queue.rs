//! The review queue: built from folders, a queue file or a scan output;
//! ordered, filtered, resumed, counted.

mod decisions_common;

use decisions_common::{scan_line, write_lines};
use zsift::decisions::{Log, Record, Solution, Source};
use zsift::lines::ObjectClass;
use zsift::queue::{DEFAULT_LOG_FOLDER, Filter, Order, Queue, QueueError};

fn targets(q: &Queue) -> Vec<String> {
    q.iter().map(|i| i.target.clone()).collect()
}

#[test]
fn a_folder_is_searched_recursively_for_spectra_in_path_order() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let d = tmp.path();
    std::fs::create_dir_all(d.join("n2")).expect("mkdir");
    std::fs::create_dir_all(d.join(DEFAULT_LOG_FOLDER)).expect("mkdir");
    for f in [
        "b.fits",
        "a.txt",
        "n2/c.FITS",
        "notes.md",
        ".hidden.fits",
        "zsift-log/x.csv",
    ] {
        std::fs::write(d.join(f), "x").expect("write");
    }
    let q = Queue::from_paths(&[d.to_path_buf()]).expect("queue");
    assert_eq!(targets(&q), ["a", "b", "c"]);
    assert_eq!(q.default_log_dir(), d.join(DEFAULT_LOG_FOLDER));
    let e = Queue::from_paths(&[d.join("missing")]).expect_err("missing path");
    assert!(e.to_string().contains("missing"));
}

#[test]
fn a_queue_file_gives_targets_priorities_and_notes_relative_to_itself() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let q = tmp.path().join("tonight.queue");
    std::fs::write(
        &q,
        "# queue for the invented night\npath,target,priority,note\n\
         s/one.fits,Orla-1,1,\ns/two.fits,,5,check the red end\n/abs/three.txt,Orla-3,,\n",
    )
    .expect("write");
    let mut queue = Queue::from_queue_file(&q).expect("queue");
    assert_eq!(targets(&queue), ["Orla-1", "two", "Orla-3"]);
    assert_eq!(queue.items()[0].path, tmp.path().join("s/one.fits"));
    assert_eq!(
        queue.items()[2].path,
        std::path::PathBuf::from("/abs/three.txt")
    );
    assert_eq!(queue.items()[1].note.as_deref(), Some("check the red end"));
    queue.order_by(Order::Priority);
    assert_eq!(targets(&queue), ["two", "Orla-1", "Orla-3"]);
    assert_eq!(queue.default_log_dir(), tmp.path().join(DEFAULT_LOG_FOLDER));

    std::fs::write(&q, "path,priority\na.fits,high\n").expect("write");
    match Queue::from_queue_file(&q) {
        Err(QueueError::Line { line, message, .. }) => {
            assert_eq!(line, 2);
            assert!(message.contains("whole number"), "{message}");
        }
        other => panic!("expected a line error, got {other:?}"),
    }
    std::fs::write(&q, "file,target\na.fits,x\n").expect("write");
    assert!(matches!(
        Queue::from_queue_file(&q),
        Err(QueueError::NoPathColumn { .. })
    ));
}

fn scan_queue(dir: &std::path::Path) -> Queue {
    let scan = dir.join("scan.jsonl");
    let mut lines = vec![
        scan_line("Orla-3", 0.30, "good", "galaxy"),
        scan_line("Orla-1", 2.10, "high", "qso"),
        scan_line("Orla-2", 0.0001, "fair", "star"),
        r#"{"target":"Orla-4","path":"Orla-4.fits","status":"error","error":"HDU 1: no data"}"#
            .to_string(),
        "this line is garbage".to_string(),
    ];
    // Give them distinct S/N and scores.
    for (i, l) in lines.iter_mut().take(3).enumerate() {
        let mut v: serde_json::Value = serde_json::from_str(l).expect("json");
        v["snr"] = serde_json::json!(5.0 + 10.0 * i as f64);
        v["candidates"][0]["score"] = serde_json::json!(30.0 - i as f64);
        *l = v.to_string();
    }
    write_lines(&scan, &lines);
    Queue::open(&scan).expect("scan queue")
}

#[test]
fn a_scan_output_becomes_a_queue_with_its_answers_and_bad_lines_named() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let q = scan_queue(tmp.path());
    assert_eq!(targets(&q), ["Orla-3", "Orla-1", "Orla-2", "Orla-4"]);
    assert_eq!(q.problems.len(), 1);
    assert_eq!(q.problems[0].0, 5);
    let best = q.items()[1]
        .scan
        .as_ref()
        .and_then(|s| s.best())
        .expect("best");
    assert_eq!(best.class, Some(ObjectClass::Qso));
    assert_eq!(best.lines, ["H-alpha"]);
    assert!(!q.items()[3].scan.as_ref().expect("scan").ok);
}

#[test]
fn every_ordering_sorts_as_documented_with_missing_keys_last() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let mut q = scan_queue(tmp.path());
    q.order_by(Order::Name);
    assert_eq!(targets(&q), ["Orla-1", "Orla-2", "Orla-3", "Orla-4"]);
    q.order_by(Order::Snr);
    assert_eq!(targets(&q), ["Orla-2", "Orla-1", "Orla-3", "Orla-4"]);
    q.order_by(Order::Redshift);
    assert_eq!(targets(&q), ["Orla-2", "Orla-3", "Orla-1", "Orla-4"]);
    q.order_by(Order::Score);
    assert_eq!(targets(&q), ["Orla-3", "Orla-1", "Orla-2", "Orla-4"]);
    q.order_by(Order::Source);
    assert_eq!(targets(&q), ["Orla-3", "Orla-1", "Orla-2", "Orla-4"]);
    q.reverse();
    assert_eq!(targets(&q), ["Orla-4", "Orla-2", "Orla-1", "Orla-3"]);
}

#[test]
fn filters_resume_and_progress_follow_the_decision_log() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let mut q = scan_queue(tmp.path());
    let log = Log::open(tmp.path().join("log")).expect("open");
    let galaxy = Solution {
        z: Some(0.3),
        class: Some(ObjectClass::Galaxy),
        ..Solution::default()
    };
    log.append(&Record::accept(
        "Orla-1",
        "ana",
        galaxy.clone(),
        Source::Hand,
    ))
    .expect("a");
    log.append(&Record::reject("Orla-2", "ana")).expect("a");
    let r = log.replay().expect("replay");

    // Resume after ana's latest decision (Orla-2): the next undecided is Orla-4.
    assert_eq!(q.resume(&r, "ana"), Some(3));
    // Someone with no decisions starts at the first undecided.
    assert_eq!(q.resume(&r, "ben"), Some(0));

    let p = q.progress(&r);
    assert_eq!(
        (p.total, p.decided, p.accepted, p.rejected, p.undecided),
        (4, 2, 1, 1, 2)
    );

    q.filter(Filter::Undecided, &r);
    assert_eq!(targets(&q), ["Orla-3", "Orla-4"]);
    q.filter(Filter::Accepted, &r);
    assert_eq!(targets(&q), ["Orla-1"]);
    // By class: Orla-1 was accepted by hand as a galaxy (the scan said qso);
    // Orla-3 is a galaxy by the scan.
    q.order_by(Order::Name);
    q.filter(Filter::Class(ObjectClass::Galaxy), &r);
    assert_eq!(targets(&q), ["Orla-1", "Orla-3"]);
    q.filter(Filter::Flagged, &r);
    assert!(q.is_empty());
    assert_eq!(q.resume(&r, "ana"), None);

    log.append(&Record::flag("Orla-3", "ben")).expect("a");
    log.append(&Record::accept("Orla-3", "ana", galaxy, Source::Hand))
        .expect("a");
    let r = log.replay().expect("replay");
    q.filter(Filter::Conflict, &r);
    assert_eq!(targets(&q), ["Orla-3"]);
}
