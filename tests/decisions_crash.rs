//! Kill-at-random trials: a child `zsift decide` recording decisions in a
//! loop (bulk mode) is killed with SIGKILL at random moments, many times.
//! Afterwards every decision it reported as saved must be in the log, and
//! every log must replay.

mod decisions_common;

use decisions_common::{scan_line, write_lines, zsift};
use std::io::{BufRead, BufReader};
use std::process::Stdio;
use std::time::{Duration, Instant};
use zsift::decisions::{Log, ProblemKind, replay};

/// A tiny deterministic generator (xorshift64*), so a failing trial can be
/// rerun with the same kill moments.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
}

#[test]
fn every_decision_reported_saved_survives_sigkill_at_random_moments() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log_dir = tmp.path().join("log");
    let mut rng = Rng(0x005e_ed0f_0b5e_7a11);
    let trials = 30;
    let targets = 25; // the same files are appended to across trials
    let mut reported: Vec<(String, f64)> = Vec::new();
    let mut killed_mid_run = 0;
    let started = Instant::now();
    for trial in 0..trials {
        // Each scan line has a unique redshift, so each saved line can be
        // matched to exactly one record.
        let entries: Vec<(String, f64)> = (0..400)
            .map(|i| {
                let z = 0.001 * (trial * 400 + i) as f64 + 0.0001;
                (format!("Orla-{:02}", i % targets), z)
            })
            .collect();
        // Within one run a target is accepted once; spread the 400 lines
        // over 16 runs' worth of distinct targets instead.
        let entries: Vec<(String, f64)> = entries
            .into_iter()
            .enumerate()
            .map(|(i, (t, z))| (format!("{t}-{}", i / targets), z))
            .collect();
        let scan = tmp.path().join(format!("scan-{trial}.jsonl"));
        let lines: Vec<String> = entries
            .iter()
            .map(|(t, z)| scan_line(t, *z, "good", "galaxy"))
            .collect();
        write_lines(&scan, &lines);

        let mut child = zsift()
            .args(["decide", "--log"])
            .arg(&log_dir)
            .arg("--from")
            .arg(&scan)
            .args([
                "--accept-grade",
                "fair",
                "--include-decided",
                "--observer",
                "crash",
            ])
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("spawn zsift");
        // Kill right after the k-th "saved" line (k random, 1-399), while
        // the child is still deciding: the moment falls wherever in its
        // write sequence the child happens to be, on any machine speed.
        let stdout = child.stdout.take().expect("piped stdout");
        let k = 1 + (rng.next() % 399) as usize;
        let mut lines = BufReader::new(stdout).lines().map_while(Result::ok);
        let mut out: Vec<String> = lines.by_ref().take(k).collect();
        let _ = child.kill(); // SIGKILL on Unix
        out.extend(lines);
        let status = child.wait().expect("wait for zsift");
        if !status.success() {
            killed_mid_run += 1;
        }
        for (j, line) in out.iter().enumerate() {
            let name = line.strip_prefix("saved ").expect("only saved lines");
            assert_eq!(name, entries[j].0, "saved lines follow the scan order");
            reported.push(entries[j].clone());
        }
    }
    assert!(
        killed_mid_run >= trials / 2,
        "most runs must be killed mid-way ({killed_mid_run})"
    );
    assert!(!reported.is_empty(), "some decisions must have been saved");

    // Every log replays: nothing but (possibly) an unfinished last line.
    let r = replay(&log_dir).expect("replay");
    for p in &r.problems {
        assert!(
            matches!(p.kind, ProblemKind::TornTail(_)),
            "unexpected problem: {p}"
        );
    }
    // Opening the log sets any torn tail aside; then replay is clean.
    let log = Log::open(&log_dir).expect("open");
    let r = log.replay().expect("replay");
    assert!(r.problems.is_empty(), "{:?}", r.problems);
    for (target, z) in &reported {
        let st = r
            .state(target)
            .unwrap_or_else(|| panic!("{target} missing"));
        assert!(
            st.records
                .iter()
                .any(|rec| rec.solution.as_ref().and_then(|s| s.z) == Some(*z)),
            "saved decision {target} z={z} missing from the log"
        );
    }
    eprintln!(
        "{trials} trials, {killed_mid_run} killed mid-run, {} saved decisions verified, {} records in log, {:.1} s",
        reported.len(),
        r.records,
        started.elapsed().as_secs_f64()
    );
}

#[test]
fn single_decide_processes_killed_at_random_never_leave_a_half_record() {
    let tmp = tempfile::tempdir().expect("tempdir");
    let log_dir = tmp.path().join("log");
    let mut rng = Rng(0xdead_beef_cafe);
    let mut saved = Vec::new();
    for i in 0..30 {
        let z = format!("{:.5}", 0.01 + 0.001 * i as f64);
        let mut child = zsift()
            .args(["decide", "--log"])
            .arg(&log_dir)
            .args([
                "--target", "Orla-99", "--action", "accept", "--class", "qso", "--z", &z,
            ])
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("spawn");
        std::thread::sleep(Duration::from_micros(rng.next() % 8000));
        let _ = child.kill();
        let out = child.wait_with_output().expect("wait");
        if String::from_utf8_lossy(&out.stdout).trim() == "saved Orla-99" {
            saved.push(z.parse::<f64>().expect("z"));
        }
    }
    let r = Log::open(&log_dir).expect("open").replay().expect("replay");
    assert!(r.problems.is_empty(), "{:?}", r.problems);
    let zs: Vec<f64> = r
        .state("Orla-99")
        .map(|s| {
            s.records
                .iter()
                .filter_map(|x| x.solution.as_ref()?.z)
                .collect()
        })
        .unwrap_or_default();
    for z in &saved {
        assert!(zs.contains(z), "saved z={z} missing; log has {zs:?}");
    }
}
