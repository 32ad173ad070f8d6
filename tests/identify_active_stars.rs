//! Active M dwarfs (narrow H-alpha and H-beta emission from the
//! chromosphere, no forbidden lines) are stars, not galaxies at a stellar
//! velocity. Synthetic truth from `zsift::synth` (an invented generator:
//! the truth is its own class and velocity).

use zsift::identify::{Identifier, Settings};
use zsift::lines::ObjectClass;
use zsift::synth::{Instrument, Kind, SynthSpec, generate};

#[test]
fn active_m_dwarfs_with_balmer_emission_are_stars() {
    let id = Identifier::new(&zsift::lines::builtin(), Settings::default());
    let mut seen = 0;
    let mut stars = 0;
    let mut misses = Vec::new();
    for seed in 0..60u64 {
        let z = (seed as f64 - 30.0) * 1.0e-5; // -90 .. +87 km/s
        let spec = SynthSpec::new(Kind::CoolStar, z, 25.0, Instrument::wide());
        let syn = generate(&spec, 5000 + seed);
        let active = syn
            .truth
            .params
            .iter()
            .any(|(k, v)| k == "halpha_emission_ew" && *v > 3.0);
        if !active {
            continue;
        }
        seen += 1;
        let c = &id.analyse(&syn.spectrum).candidates[0];
        if c.class == ObjectClass::Star {
            stars += 1;
        } else {
            misses.push(format!("seed {seed}: {} ({})", c.class.as_str(), c.reason));
        }
    }
    eprintln!("{stars} of {seen} active M dwarfs called stars; misses {misses:?}");
    assert!(seen >= 5, "only {seen} active stars drawn");
    assert!(
        stars * 10 >= seen * 8,
        "{stars} of {seen} active M dwarfs called stars; misses {misses:?}"
    );
}
