//! Shared helper of the physics tests: the fixture CSV reader.
#![allow(dead_code)]

/// Rows of a fixture CSV under `tests/fixtures/physics` (comment lines start
/// with `#`, one header row).
pub fn fixture(name: &str) -> Vec<Vec<f64>> {
    let path = format!(
        "{}/tests/fixtures/physics/{name}",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).expect("fixture present");
    text.lines()
        .filter(|l| !l.starts_with('#'))
        .skip(1)
        .map(|l| {
            l.split(',')
                .map(|c| c.trim().parse().expect("number"))
                .collect()
        })
        .collect()
}
