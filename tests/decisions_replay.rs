//! Replay rules: latest standing verdict per observer, undo, agreement and
//! conflict between observers, changed input files.

use zsift::decisions::{Fingerprint, Log, Record, Solution, Source, Status};
use zsift::lines::ObjectClass;

fn sol(z: f64, class: ObjectClass) -> Solution {
    Solution {
        z: Some(z),
        class: Some(class),
        ..Solution::default()
    }
}

fn log() -> (tempfile::TempDir, Log) {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = Log::open(tmp.path()).expect("open");
    (tmp, log)
}

#[test]
fn an_observer_changing_their_mind_is_not_a_conflict() {
    let (_t, log) = log();
    log.append(&Record::reject("T", "ana")).expect("a");
    log.append(&Record::accept(
        "T",
        "ana",
        sol(0.2, ObjectClass::Galaxy),
        Source::Hand,
    ))
    .expect("a");
    let st = log.target_state("T").expect("state");
    assert_eq!(st.status, Status::Accepted);
    assert_eq!(st.verdicts.len(), 1);
    assert_eq!(st.solution.and_then(|s| s.z), Some(0.2));
}

#[test]
fn two_observers_agreeing_within_the_tolerance_agree_and_beyond_it_conflict() {
    let (_t, log) = log();
    // 0.00005 in z at z=0.5 is 10 km/s: the same answer.
    log.append(&Record::accept(
        "A",
        "ana",
        sol(0.50000, ObjectClass::Galaxy),
        Source::Hand,
    ))
    .expect("a");
    log.append(&Record::accept(
        "A",
        "ben",
        sol(0.50005, ObjectClass::Galaxy),
        Source::Hand,
    ))
    .expect("a");
    assert_eq!(log.target_state("A").expect("s").status, Status::Accepted);
    // 0.01 in z is 2000 km/s: different answers.
    log.append(&Record::accept(
        "B",
        "ana",
        sol(0.50, ObjectClass::Galaxy),
        Source::Hand,
    ))
    .expect("a");
    log.append(&Record::accept(
        "B",
        "ben",
        sol(0.51, ObjectClass::Galaxy),
        Source::Hand,
    ))
    .expect("a");
    let st = log.target_state("B").expect("s");
    assert_eq!(st.status, Status::Conflict);
    assert!(st.solution.is_none(), "no solution is picked in a conflict");
    assert_eq!(
        st.conflict_summary().as_deref(),
        Some("ana: accept galaxy z=0.50000; ben: accept galaxy z=0.51000")
    );
    // Same redshift, different class: a conflict too.
    log.append(&Record::accept(
        "C",
        "ana",
        sol(1.9, ObjectClass::Qso),
        Source::Hand,
    ))
    .expect("a");
    log.append(&Record::reclassify(
        "C",
        "ben",
        sol(1.9, ObjectClass::Galaxy),
    ))
    .expect("a");
    assert_eq!(log.target_state("C").expect("s").status, Status::Conflict);
}

#[test]
fn an_undo_withdraws_one_record_and_resolves_the_conflict_it_caused() {
    let (_t, log) = log();
    log.append(&Record::accept(
        "T",
        "ana",
        sol(0.1, ObjectClass::Star),
        Source::Hand,
    ))
    .expect("a");
    log.append(&Record::flag("T", "ben").with_note("too faint"))
        .expect("a");
    let st = log.target_state("T").expect("s");
    assert_eq!(st.status, Status::Conflict);
    let id = st.last_standing_by("ben").expect("ben's record").id.clone();
    log.append(&Record::undo("T", "ben", &id)).expect("a");
    let st = log.target_state("T").expect("s");
    assert_eq!(st.status, Status::Accepted);
    assert!(st.notes.is_empty(), "an undone record's remark goes too");
    assert_eq!(st.records.len(), 3, "nothing is rewritten");
    // Nothing more of ben's to undo.
    assert!(st.last_standing_by("ben").is_none());
}

#[test]
fn notes_do_not_decide_and_a_changed_input_file_is_noticed() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log = Log::open(tmp.path().join("log")).expect("open");
    let f = tmp.path().join("s.txt");
    std::fs::write(&f, "4000 1\n").expect("w");
    let fp1 = Fingerprint::of_file(&f).expect("fp");
    log.append(&Record::note("T", "ana", "odd blue end").with_input(fp1.clone()))
        .expect("a");
    let st = log.target_state("T").expect("s");
    assert_eq!(st.status, Status::Undecided);
    assert_eq!(st.input_matches(&fp1), Some(true));
    std::fs::write(&f, "4000 2\n").expect("w");
    let fp2 = Fingerprint::of_file(&f).expect("fp");
    assert_eq!(fp1.bytes, fp2.bytes);
    assert!(!fp1.same_content(&fp2), "same size, different content");
    assert_eq!(st.input_matches(&fp2), Some(false));
    log.append(&Record::reject("T", "ana").with_input(fp2))
        .expect("a");
    assert!(log.target_state("T").expect("s").inputs_differ);
}
