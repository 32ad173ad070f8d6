//! Speed of the decision log: durable appends (bound by `fsync` on the
//! disk holding the temporary folder) and replay / export of a large log.
//!
//! Run: `cargo bench --bench decisions` (set `ZSIFT_BENCH_DIR` to measure
//! another disk).

use std::time::Instant;
use zsift::decisions::{Log, Record, Solution, Source, export, replay};
use zsift::lines::ObjectClass;

fn main() {
    let base = std::env::var_os("ZSIFT_BENCH_DIR")
        .map(std::path::PathBuf::from)
        .unwrap_or_else(std::env::temp_dir);
    let tmp = match tempfile::tempdir_in(&base) {
        Ok(t) => t,
        Err(e) => {
            eprintln!("cannot make a folder in {}: {e}", base.display());
            return;
        }
    };
    let Ok(log) = Log::open(tmp.path().join("log")) else {
        eprintln!("cannot open the log");
        return;
    };
    let sol = Solution {
        z: Some(0.1234),
        z_err: Some(2e-5),
        class: Some(ObjectClass::Galaxy),
        lines: vec![
            "H-alpha".into(),
            "[N II] 6585".into(),
            "[O III] 5008".into(),
        ],
        ..Solution::default()
    };

    // Appends to one existing file (one fsync each).
    let n = 200;
    let _ = log.append(&Record::note("Orla-1", "bench", "first"));
    let t = Instant::now();
    for _ in 0..n {
        let r = Record::accept(
            "Orla-1",
            "bench",
            sol.clone(),
            Source::Candidate { rank: 1 },
        );
        if let Err(e) = log.append(&r) {
            eprintln!("append failed: {e}");
            return;
        }
    }
    let dt = t.elapsed().as_secs_f64();
    println!(
        "append, existing file: {n} records in {dt:.3} s = {:.2} ms/record",
        1e3 * dt / n as f64
    );

    // Appends creating new files (data fsync + folder fsync).
    let t = Instant::now();
    for i in 0..n {
        let r = Record::reject(&format!("New-{i}"), "bench");
        if let Err(e) = log.append(&r) {
            eprintln!("append failed: {e}");
            return;
        }
    }
    let dt = t.elapsed().as_secs_f64();
    println!(
        "append, new file:      {n} records in {dt:.3} s = {:.2} ms/record",
        1e3 * dt / n as f64
    );

    // A night's worth of targets, written directly (not what is measured).
    let dir = tmp.path().join("big");
    if std::fs::create_dir_all(&dir).is_err() {
        return;
    }
    let targets = 10_000;
    for i in 0..targets {
        let name = format!("Orla-{i}");
        let mut text = String::new();
        for who in ["ana", "ben", "cai"] {
            let r = Record::accept(&name, who, sol.clone(), Source::Candidate { rank: 1 });
            text.push_str(&r.to_line().unwrap_or_default());
        }
        let _ = std::fs::write(dir.join(zsift::decisions::log_file_name(&name)), text);
    }
    let t = Instant::now();
    let r = match replay(&dir) {
        Ok(r) => r,
        Err(e) => {
            eprintln!("replay failed: {e}");
            return;
        }
    };
    let dt = t.elapsed().as_secs_f64();
    println!(
        "replay: {} targets, {} records in {dt:.3} s ({:.0} records/s)",
        r.targets.len(),
        r.records,
        r.records as f64 / dt
    );
    let t = Instant::now();
    let rows = export::rows(&r);
    let mut buf = Vec::new();
    if export::write_csv(&mut buf, &rows).is_err() {
        return;
    }
    println!(
        "export csv: {} rows, {} bytes in {:.3} s",
        rows.len(),
        buf.len(),
        t.elapsed().as_secs_f64()
    );
}
