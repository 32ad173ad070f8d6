//! The identifier on a seeded synthetic-truth set of every class, S/N 3-50,
//! every file layout, air and vacuum, through the real writers and readers
//! (the same set the accuracy benchmark draws, smaller). Synthetic truth:
//! the generator's own redshifts and classes are the check values.
//!
//! Regression floors, not the goal: the product goal is the rank-1 redshift
//! right for >= 95% and the class for >= 92%; on this set (seed 11, 104
//! spectra) the measured rates were z 84/104, class 86/104 on 2026-12-01
//! and z 86/104, class 86/104 on 2026-12-02 (session 3), z 90/104, class
//! 91/104 later that day, z 91/104, class 93/104 on 2026-12-04 and, with
//! more night-sky lines masked, z 90/104, class 92/104 the same day; with
//! blurred band heads, a noise floor and a broad-line equivalent-width
//! floor, z 92/104, class 95/104 (session 6, also 2026-12-04).
//! The floors sit four spectra below, for floating-point differences between
//! machines. Raise them as the identifier improves.

use std::path::Path;
use zsift::identify::{Identifier, Settings};
use zsift::spectrum::{ReadOptions, read_bytes};
use zsift::synth::set::{self, Outcome};
use zsift::synth::write::to_bytes;

#[test]
fn a_seeded_set_of_every_class_meets_the_regression_floors() {
    let id = Identifier::new(&zsift::lines::builtin(), Settings::default());
    let cases = set::plan(104, 11);
    let mut outcomes = Vec::new();
    for c in &cases {
        let syn = c.generate();
        let bytes = to_bytes(&syn, c.format, c.medium).expect("writing a synthetic spectrum");
        let name = c.file_name();
        let spec = read_bytes(Path::new(&name), &bytes, &ReadOptions::default())
            .unwrap_or_else(|e| panic!("{name}: {e}"));
        let an = id.analyse(&spec);
        let answer = an.candidates.first().map(|k| (k.class, k.z));
        outcomes.push(Outcome {
            class: syn.truth.class,
            kind: syn.truth.kind,
            snr: c.spec.snr,
            verdict: set::judge(&syn.truth, answer),
        });
    }
    let z_ok = outcomes.iter().filter(|o| o.verdict.z_ok).count();
    let class_ok = outcomes.iter().filter(|o| o.verdict.class_ok).count();
    println!("{}", set::table(&outcomes));
    println!("{}", set::kind_table(&outcomes));
    assert!(
        z_ok >= 88 && class_ok >= 91,
        "z right {z_ok}/104, class right {class_ok}/104\n{}",
        set::table(&outcomes)
    );
}
