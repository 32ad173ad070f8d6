//! The committed demo/ folder is exactly what the generator writes.
//!
//! Regenerate it after changing the generator or the writers with
//! `ZSIFT_REGENERATE_DEMO=1 cargo test --release --test demo_data`.

use std::path::{Path, PathBuf};

fn demo_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo")
}

#[test]
fn the_committed_demo_night_is_byte_identical_to_a_fresh_regeneration() {
    if std::env::var_os("ZSIFT_REGENERATE_DEMO").is_some() {
        let dir = demo_dir();
        if dir.exists() {
            std::fs::remove_dir_all(&dir).unwrap();
        }
        zsift::synth::demo::write_night(&dir).unwrap();
        eprintln!("rewrote {}", dir.display());
        return;
    }
    let tmp = std::env::temp_dir().join(format!("zsift-demo-check-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&tmp);
    let written = zsift::synth::demo::write_night(&tmp).unwrap();
    let mut problems = Vec::new();
    for path in &written {
        let name = path.file_name().unwrap();
        let committed = demo_dir().join(name);
        match std::fs::read(&committed) {
            Err(e) => problems.push(format!("{}: {e}", committed.display())),
            Ok(bytes) => {
                let fresh = std::fs::read(path).unwrap();
                if bytes != fresh {
                    let at = bytes
                        .iter()
                        .zip(&fresh)
                        .position(|(a, b)| a != b)
                        .unwrap_or(bytes.len().min(fresh.len()));
                    problems.push(format!(
                        "{}: differs from a regeneration at byte {at}",
                        committed.display()
                    ));
                }
            }
        }
    }
    // Nothing in demo/ that the generator does not write.
    let fresh_names: Vec<_> = written
        .iter()
        .map(|p| p.file_name().unwrap().to_owned())
        .collect();
    for entry in std::fs::read_dir(demo_dir()).unwrap() {
        let name = entry.unwrap().file_name();
        if !fresh_names.contains(&name) {
            problems.push(format!(
                "demo/{} is not written by the generator",
                name.to_string_lossy()
            ));
        }
    }
    let _ = std::fs::remove_dir_all(&tmp);
    assert!(
        problems.is_empty(),
        "demo/ is stale (regenerate with ZSIFT_REGENERATE_DEMO=1 cargo test --release --test demo_data):\n{}",
        problems.join("\n")
    );
}

#[test]
fn the_demo_stays_small() {
    let total: u64 = std::fs::read_dir(demo_dir())
        .unwrap()
        .map(|e| e.unwrap().metadata().unwrap().len())
        .sum();
    assert!(total < 3_000_000, "demo/ is {total} bytes");
}
