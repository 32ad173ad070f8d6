//! End to end: the real `zsift review` binary in a pseudo-terminal decides a
//! few targets with the keys the help overlay lists, quits, and the decision
//! log is checked by replaying it.

use expectrl::session::OsSession;
use expectrl::{Eof, Expect, Session};
use std::path::Path;
use std::process::Command;
use std::time::Duration;
use zsift::decisions::{Status, replay};
use zsift::tui::keys::{Action, KeyMap};

/// An invented emission-line spectrum as CSV (wavelength in Angstrom, flux, error).
fn write_spectrum(path: &Path, name: &str, line_at: f64) {
    let mut s = format!("# object: {name}\n# medium: vacuum\nwavelength,flux,error\n");
    for i in 0..1500 {
        let w = 4000.0 + 3.0 * i as f64;
        let f = 1.0
            + 4.0 * (-0.5 * ((w - line_at) / 4.0_f64).powi(2)).exp()
            + 0.02 * ((i * 7919 % 13) as f64 - 6.0) / 6.0;
        s.push_str(&format!("{w:.2},{f:.5},0.02\n"));
    }
    std::fs::write(path, s).expect("write spectrum");
}

/// Wait until the replayed log satisfies `ok` (the screen is redrawn by
/// difference, so the log, not the byte stream, is what we check).
fn wait_for(log: &Path, what: &str, ok: impl Fn(&zsift::decisions::Replay) -> bool) {
    let start = std::time::Instant::now();
    loop {
        if let Ok(r) = replay(log)
            && ok(&r)
        {
            return;
        }
        assert!(
            start.elapsed() < Duration::from_secs(20),
            "timed out waiting for {what}"
        );
        std::thread::sleep(Duration::from_millis(50));
    }
}

fn spawn(dir: &Path, log: &Path) -> OsSession {
    spawn_on(&dir.join("queue"), dir, log)
}

/// `zsift review INPUT` in an 80x24 pseudo-terminal, with no config file.
fn spawn_on(input: &Path, dir: &Path, log: &Path) -> OsSession {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_zsift"));
    cmd.arg("review")
        .arg(input)
        .arg("--log")
        .arg(log)
        .arg("--observer")
        .arg("pty-test")
        .env("ZSIFT_CONFIG", dir.join("no-config.toml"))
        .env("LANG", "C")
        .env_remove("LC_ALL")
        .env_remove("LC_CTYPE")
        .env("TERM", "xterm-256color");
    let mut p = Session::spawn(cmd).expect("spawn zsift in a pty");
    p.get_process_mut()
        .set_window_size(80, 24)
        .expect("window size");
    p.set_expect_timeout(Some(Duration::from_secs(20)));
    p
}

#[test]
fn deciding_three_targets_in_a_pty_writes_them_to_the_log_and_quit_restores_the_terminal() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let q = tmp.path().join("queue");
    std::fs::create_dir_all(&q).expect("queue dir");
    for (i, name) in ["Wren-1", "Wren-2", "Wren-3", "Wren-4"].iter().enumerate() {
        write_spectrum(
            &q.join(format!("{name}.csv")),
            name,
            5000.0 + 300.0 * i as f64,
        );
    }
    let log = tmp.path().join("log");
    let mut p = spawn(tmp.path(), &log);
    p.expect("1/4").expect("first target shown");
    // Reject, flag, then a note and a reject on the third.
    p.send("r").expect("send");
    wait_for(&log, "reject", |r| r.status("Wren-1") == Status::Rejected);
    p.send("f").expect("send");
    wait_for(&log, "flag", |r| r.status("Wren-2") == Status::Flagged);
    p.send("tseeing 2.5 arcsec\r").expect("send note");
    wait_for(&log, "note", |r| {
        r.state("Wren-3").is_some_and(|s| !s.notes.is_empty())
    });
    p.send("r").expect("send");
    wait_for(&log, "second reject", |r| {
        r.status("Wren-3") == Status::Rejected
    });
    // The help overlay opens and closes.
    p.send("?").expect("send");
    p.expect("Keys (any key closes)").expect("help shown");
    p.send("x").expect("send");
    p.send("q").expect("send");
    p.expect("entries written this session")
        .expect("goodbye line");
    // Leaving the alternate screen is the last thing the review draws.
    p.expect(Eof).expect("exits");

    let r = replay(&log).expect("replay");
    let status = |n: &str| r.status(n);
    assert_eq!(status("Wren-1"), Status::Rejected);
    assert_eq!(status("Wren-2"), Status::Flagged);
    assert_eq!(status("Wren-3"), Status::Rejected);
    assert_eq!(status("Wren-4"), Status::Undecided);
    let notes = &r.state("Wren-3").expect("state").notes;
    assert_eq!(notes.len(), 1);
    assert_eq!(notes[0].text, "seeing 2.5 arcsec");
    assert_eq!(notes[0].observer, "pty-test");
}

#[test]
fn a_second_session_starts_at_the_first_undecided_target_and_undo_reverts_in_the_log() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let q = tmp.path().join("queue");
    std::fs::create_dir_all(&q).expect("queue dir");
    for (i, name) in ["Lark-1", "Lark-2", "Lark-3"].iter().enumerate() {
        write_spectrum(
            &q.join(format!("{name}.csv")),
            name,
            5200.0 + 250.0 * i as f64,
        );
    }
    let log = tmp.path().join("log");
    let mut p = spawn(tmp.path(), &log);
    p.expect("1/3").expect("first");
    p.send("r").expect("send");
    p.expect("saved:").expect("saved");
    p.send("q").expect("send");
    p.expect(Eof).expect("exits");

    let mut p = spawn(tmp.path(), &log);
    p.expect("2/3")
        .expect("resumes at the first undecided target");
    p.send("f").expect("send");
    wait_for(&log, "flag", |r| r.status("Lark-2") == Status::Flagged);
    p.send("u").expect("send");
    wait_for(&log, "undo", |r| r.status("Lark-2") == Status::Undecided);
    p.send("q").expect("send");
    p.expect(Eof).expect("exits");

    let r = replay(&log).expect("replay");
    assert_eq!(r.status("Lark-1"), Status::Rejected);
    assert_eq!(r.status("Lark-2"), Status::Undecided, "the flag was undone");
}

#[test]
fn sigterm_restores_the_terminal_and_keeps_every_saved_decision() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let q = tmp.path().join("queue");
    std::fs::create_dir_all(&q).expect("queue dir");
    for name in ["Tern-1", "Tern-2"] {
        write_spectrum(&q.join(format!("{name}.csv")), name, 6000.0);
    }
    let log = tmp.path().join("log");
    let mut p = spawn(tmp.path(), &log);
    p.expect("1/2").expect("first");
    p.send("r").expect("send");
    p.expect("saved:").expect("saved");
    let pid = p.get_process().pid();
    let killed = Command::new("kill")
        .arg("-TERM")
        .arg(pid.to_string())
        .status()
        .expect("kill");
    assert!(killed.success());
    p.expect("stopped by SIGTERM").expect("says why");
    p.expect(Eof).expect("exits");
    assert_eq!(
        replay(&log).expect("replay").status("Tern-1"),
        Status::Rejected
    );
}

/// The first single-character key the help overlay lists for `action` (the
/// overlay is generated from the default key map, so these are the keys a
/// person reads there).
fn help_key(action: Action) -> String {
    let rows = KeyMap::default().help_rows(true);
    let (keys, _) = rows
        .iter()
        .find(|(_, d)| *d == action.description())
        .expect("the action is in the help overlay");
    keys.split(' ')
        .find(|k| k.chars().count() == 1)
        .expect("a one-character key")
        .to_string()
}

/// The records of one target's log file, as written on disk.
fn records_of(log: &Path, target: &str) -> Vec<serde_json::Value> {
    let file = log.join(zsift::decisions::log_file_name(target));
    std::fs::read_to_string(&file)
        .unwrap_or_default()
        .lines()
        .map(|l| serde_json::from_str(l).expect("a JSON record"))
        .collect()
}

#[test]
fn accepting_one_demo_target_and_flagging_another_logs_target_action_and_z() {
    // Three files of the committed demo night (invented; complete metadata,
    // so the barycentric correction is known).
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo");
    let files = [
        ("CVO 2150+3425", "07_CVO2150+3425_table.fits"),
        ("CVO 0337+6716", "13_CVO0337+6716_csv.csv"),
        ("CVO 2359+2646", "27_CVO2359+2646_table.fits"),
    ];
    let tmp = tempfile::tempdir().expect("temp dir");
    let mut queue = String::from("path,target\n");
    for (name, file) in files {
        let path = demo.join(file);
        assert!(path.is_file(), "{}", path.display());
        queue.push_str(&format!("{},{name}\n", path.display()));
    }
    let qfile = tmp.path().join("queue.csv");
    std::fs::write(&qfile, queue).expect("queue");
    let log = tmp.path().join("log");

    let (accept, flag, quit) = (
        help_key(Action::Accept),
        help_key(Action::Reobserve),
        help_key(Action::Quit),
    );
    assert_eq!(
        (accept.as_str(), flag.as_str(), quit.as_str()),
        ("a", "f", "q")
    );
    let mut p = spawn_on(&qfile, tmp.path(), &log);
    p.expect("1/3").expect("first target shown");
    // The candidate title shows z_bary once the worker has analysed the file
    // (before that there is nothing to accept).
    p.expect("z_bary").expect("first target analysed");
    p.send(&accept).expect("send");
    wait_for(&log, "accept", |r| r.status(files[0].0) == Status::Accepted);
    p.send(&flag).expect("send");
    wait_for(&log, "flag", |r| r.status(files[1].0) == Status::Flagged);
    p.send(&quit).expect("send");
    p.expect("entries written this session")
        .expect("goodbye line");
    p.expect(Eof).expect("exits");

    // What scan says about the first file: the review accepted the same z.
    let out = Command::new(env!("CARGO_BIN_EXE_zsift"))
        .arg("scan")
        .arg(demo.join(files[0].1))
        .env("ZSIFT_CONFIG", tmp.path().join("no-config.toml"))
        .output()
        .expect("scan runs");
    let scanned: serde_json::Value = serde_json::from_slice(&out.stdout).expect("one JSON record");
    let best = &scanned["candidates"][0];

    let accepted = records_of(&log, files[0].0);
    assert_eq!(accepted.len(), 1, "{accepted:?}");
    let r = &accepted[0];
    assert_eq!(r["target"], files[0].0);
    assert_eq!(r["action"], "accept");
    assert_eq!(r["observer"], "pty-test");
    assert_eq!(r["source"]["kind"], "candidate");
    assert_eq!(r["source"]["rank"], 1);
    assert_eq!(r["solution"]["z"], best["z"], "screen and scan agree");
    assert_eq!(r["solution"]["z_bary"], best["z_bary"]);
    assert_eq!(
        r["solution"]["velocity_bary_kms"],
        best["velocity_bary_kms"]
    );
    assert_eq!(
        r["solution"]["barycentric_correction_kms"],
        scanned["barycentric_correction_kms"]
    );
    // The generator's truth (demo/truth.csv, kept equal to the generator by
    // tests/demo_data.rs); the galaxy rule of the accuracy sets, 0.001 (1+z).
    let truth = std::fs::read_to_string(demo.join("truth.csv")).expect("truth");
    let true_z: f64 = truth
        .lines()
        .find(|l| l.starts_with(files[0].1))
        .and_then(|l| l.split(',').nth(5))
        .and_then(|z| z.parse().ok())
        .expect("truth row");
    let z = r["solution"]["z"].as_f64().expect("z");
    assert!(
        (z - true_z).abs() < 0.001 * (1.0 + true_z),
        "z = {z}, truth {true_z}"
    );

    let flagged = records_of(&log, files[1].0);
    assert_eq!(flagged.len(), 1, "{flagged:?}");
    assert_eq!(flagged[0]["target"], files[1].0);
    assert_eq!(flagged[0]["action"], "flag");
    assert!(flagged[0]["solution"]["z"].is_null(), "a flag carries no z");
    assert!(
        records_of(&log, files[2].0).is_empty(),
        "the third is untouched"
    );
}

/// What a terminal sends for the first key the help overlay lists for
/// `action` (letters as themselves; Enter and the arrows as a terminal in
/// normal cursor-key mode sends them).
fn help_key_bytes(action: Action) -> String {
    let rows = KeyMap::default().help_rows(true);
    let (keys, _) = rows
        .iter()
        .find(|(_, d)| *d == action.description())
        .expect("the action is in the help overlay");
    let first = keys.split(' ').next().expect("a key");
    match first {
        "Enter" => "\r".to_string(),
        "Up" => "\x1b[A".to_string(),
        "Down" => "\x1b[B".to_string(),
        k if k.chars().count() == 1 => k.to_string(),
        other => panic!("no byte sequence for {other}"),
    }
}

/// `zsift scan FILE` as JSON.
fn scan(file: &Path, dir: &Path) -> serde_json::Value {
    let out = Command::new(env!("CARGO_BIN_EXE_zsift"))
        .arg("scan")
        .arg(file)
        .env("ZSIFT_CONFIG", dir.join("no-config.toml"))
        .output()
        .expect("scan runs");
    serde_json::from_slice(&out.stdout).expect("one JSON record")
}

#[test]
fn accept_takes_the_shown_candidate_and_the_show_key_makes_the_cursors_one_shown() {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo");
    let files = [
        ("CVO 2150+3425", "07_CVO2150+3425_table.fits"),
        ("CVO 2359+2646", "27_CVO2359+2646_table.fits"),
    ];
    let tmp = tempfile::tempdir().expect("temp dir");
    let mut queue = String::from("path,target\n");
    for (name, file) in files {
        queue.push_str(&format!("{},{name}\n", demo.join(file).display()));
    }
    let qfile = tmp.path().join("queue.csv");
    std::fs::write(&qfile, queue).expect("queue");
    let log = tmp.path().join("log");
    let (down, show, accept, quit) = (
        help_key_bytes(Action::CandidateDown),
        help_key_bytes(Action::ShowCandidate),
        help_key_bytes(Action::Accept),
        help_key_bytes(Action::Quit),
    );
    assert_eq!((down.as_str(), show.as_str()), ("\x1b[B", "\r"));

    // First session: the cursor goes to candidate 2, nothing is shown, accept
    // takes the shown candidate 1.
    let mut p = spawn_on(&qfile, tmp.path(), &log);
    p.expect("1/2").expect("first target shown");
    p.expect("z_bary").expect("first target analysed");
    p.send(&down).expect("send");
    p.send(&accept).expect("send");
    wait_for(&log, "accept", |r| r.status(files[0].0) == Status::Accepted);
    p.send(&quit).expect("send");
    p.expect(Eof).expect("exits");
    let first = scan(&demo.join(files[0].1), tmp.path());
    let r = records_of(&log, files[0].0);
    assert_eq!(r.len(), 1, "{r:?}");
    assert_eq!(r[0]["source"]["rank"], 1);
    assert_eq!(r[0]["solution"]["z"], first["candidates"][0]["z"]);

    // Second session (starts at the undecided second target): cursor to
    // candidate 2, show it, accept: candidate 2 is logged.
    let mut p = spawn_on(&qfile, tmp.path(), &log);
    p.expect("2/2").expect("resumes at the undecided target");
    p.expect("z_bary").expect("second target analysed");
    p.send(&down).expect("send");
    p.send(&show).expect("send");
    p.send(&accept).expect("send");
    wait_for(&log, "accept", |r| r.status(files[1].0) == Status::Accepted);
    p.send(&quit).expect("send");
    p.expect(Eof).expect("exits");
    let second = scan(&demo.join(files[1].1), tmp.path());
    assert!(
        second["candidates"]
            .as_array()
            .is_some_and(|c| c.len() >= 2),
        "the second file needs two candidates for this test: {second}"
    );
    let r = records_of(&log, files[1].0);
    assert_eq!(r.len(), 1, "{r:?}");
    assert_eq!(r[0]["source"]["kind"], "candidate");
    assert_eq!(r[0]["source"]["rank"], 2);
    assert_eq!(r[0]["solution"]["z"], second["candidates"][1]["z"]);
    assert_eq!(
        r[0]["solution"]["z_bary"],
        second["candidates"][1]["z_bary"]
    );
}
