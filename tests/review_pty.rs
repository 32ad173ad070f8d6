//! End to end: the real `zsift review` binary in a pseudo-terminal decides a
//! few targets with the keys the help overlay lists, quits, and the decision
//! log is checked by replaying it.

use expectrl::session::OsSession;
use expectrl::{Eof, Expect, Session};
use std::path::Path;
use std::process::Command;
use std::time::Duration;
use zsift::decisions::{Status, replay};

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
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_zsift"));
    cmd.arg("review")
        .arg(dir.join("queue"))
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
