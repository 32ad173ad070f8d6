//! Helpers shared by the decision-log integration tests: temporary folders,
//! scan files and a small tmpfs mount for full-disk and read-only cases.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;

/// The real binary.
pub fn zsift() -> Command {
    Command::new(env!("CARGO_BIN_EXE_zsift"))
}

/// One scan line for `target` with a single rank-1 candidate.
pub fn scan_line(target: &str, z: f64, grade: &str, class: &str) -> String {
    serde_json::json!({
        "target": target,
        "path": format!("{target}.fits"),
        "status": "ok",
        "snr": 12.5,
        "candidates": [{
            "rank": 1, "z": z, "z_err": 1e-4, "velocity_kms": 0.0,
            "class": class, "subclass": null, "score": 10.0,
            "grade": grade, "reason": "synthetic",
            "matched": [{"line": "H-alpha", "rest_wavelength": 6564.61,
                         "observed_wavelength": 6564.61 * (1.0 + z), "offset_kms": 0.0}]
        }],
        "warnings": []
    })
    .to_string()
}

/// Write lines to `path`, one per line.
pub fn write_lines(path: &Path, lines: &[String]) {
    let mut s = lines.join("\n");
    s.push('\n');
    std::fs::write(path, s).expect("write test file");
}

/// A tmpfs of `size` mounted on a fresh temporary folder, unmounted on drop.
/// `None` (the caller says the test is skipped) when mounting is not allowed.
pub struct Tmpfs {
    pub dir: tempfile::TempDir,
}

impl Tmpfs {
    pub fn mount(size: &str) -> Option<Tmpfs> {
        let dir = tempfile::tempdir().ok()?;
        let ok = Command::new("mount")
            .args(["-t", "tmpfs", "-o", &format!("size={size}"), "tmpfs"])
            .arg(dir.path())
            .status()
            .map(|s| s.success())
            .unwrap_or(false);
        if ok { Some(Tmpfs { dir }) } else { None }
    }

    pub fn path(&self) -> PathBuf {
        self.dir.path().to_path_buf()
    }

    pub fn remount_read_only(&self) -> bool {
        Command::new("mount")
            .args(["-o", "remount,ro"])
            .arg(self.dir.path())
            .status()
            .map(|s| s.success())
            .unwrap_or(false)
    }
}

impl Drop for Tmpfs {
    fn drop(&mut self) {
        let _ = Command::new("umount").arg(self.dir.path()).status();
    }
}
