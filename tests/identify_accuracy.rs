//! Synthetic-truth accuracy of the identifier by class and S/N, with
//! thresholds that can fail. The generator (tests/identify_support) is
//! seeded; its truth is the check.

mod identify_support;

use identify_support::{Kind, Rng, generate, random_spec, z_ok};
use zsift::identify::{Identifier, Settings};
use zsift::lines::ObjectClass;

/// The identifier under test: the built-in catalogue (the product's), or
/// the tests' small one with `ZSIFT_TEST_CATALOGUE=1`.
fn identifier() -> Identifier {
    let cat = if std::env::var("ZSIFT_TEST_CATALOGUE").is_ok() {
        identify_support::catalogue()
    } else {
        zsift::lines::builtin()
    };
    Identifier::new(&cat, Settings::default())
}

/// Success counts (z right, class right) over `n` spectra of `kind` at `snr`.
fn run(id: &Identifier, kind: Kind, snr: f64, n: usize, seed: u64) -> (usize, usize, Vec<String>) {
    let mut rng = Rng::new(seed);
    let (mut zok, mut cok) = (0, 0);
    let mut fails = Vec::new();
    for i in 0..n {
        let spec = random_spec(kind, snr, &mut rng);
        let s = generate(spec, seed * 1000 + i as u64);
        let a = id.analyse(&s.spectrum);
        let c = &a.candidates[0];
        let class_ok = c.class == kind.class();
        let zgood = kind.class() == ObjectClass::Unknown || z_ok(&spec, c.z);
        zok += zgood as usize;
        cok += class_ok as usize;
        if !(class_ok && zgood) {
            fails.push(format!(
                "{} snr {} R {} z {:.4} -> {} z {:.4} score {:.0} ({})",
                kind.name(),
                snr,
                spec.resolution,
                spec.z,
                c.class.as_str(),
                c.z,
                c.score,
                c.reason
            ));
        }
    }
    (zok, cok, fails)
}

/// Prints the table of success rates (run with `--ignored --nocapture`).
#[test]
#[ignore]
fn print_accuracy_table() {
    let id = identifier();
    let n: usize = std::env::var("ZSIFT_N")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(20);
    println!("| class | S/N | z right | class right |");
    println!("|---|---|---|---|");
    for kind in [
        Kind::EmissionGalaxy,
        Kind::AbsorptionGalaxy,
        Kind::StarEarly,
        Kind::StarLate,
        Kind::Quasar,
        Kind::Junk,
    ] {
        for snr in [3.0, 5.0, 10.0, 30.0] {
            let (z, c, fails) = run(&id, kind, snr, n, (snr as u64) * 7 + kind as u64);
            println!("| {} | {} | {}/{} | {}/{} |", kind.name(), snr, z, n, c, n);
            for f in fails.iter().take(3) {
                eprintln!("   {f}");
            }
        }
    }
}

/// Prints every candidate of the spectra that fail (debugging aid; run with
/// `ZSIFT_KIND=0..5 ZSIFT_SNR=10 --ignored --nocapture`).
#[test]
#[ignore]
fn print_failures_in_detail() {
    let id = identifier();
    let kinds = [
        Kind::EmissionGalaxy,
        Kind::AbsorptionGalaxy,
        Kind::StarEarly,
        Kind::StarLate,
        Kind::Quasar,
        Kind::Junk,
    ];
    let k: usize = std::env::var("ZSIFT_KIND")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(0);
    let snr: f64 = std::env::var("ZSIFT_SNR")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(10.0);
    let n: usize = std::env::var("ZSIFT_N")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(8);
    let kind = kinds[k];
    let seed = (snr as u64) * 7 + kind as u64;
    let mut rng = Rng::new(seed);
    for i in 0..n {
        let spec = random_spec(kind, snr, &mut rng);
        let s = generate(spec, seed * 1000 + i as u64);
        let a = id.analyse(&s.spectrum);
        let c = &a.candidates[0];
        if c.class == kind.class() && (kind.class() == ObjectClass::Unknown || z_ok(&spec, c.z)) {
            continue;
        }
        println!(
            "== {} snr {} R {} z {:.5} range {:.0}-{:.0}",
            kind.name(),
            snr,
            spec.resolution,
            spec.z,
            spec.lo,
            spec.hi
        );
        for c in &a.candidates {
            println!(
                "  #{} {} z {:.5} score {:.1} {:?} {}",
                c.rank,
                c.class.as_str(),
                c.z,
                c.score,
                c.grade,
                c.reason
            );
        }
    }
}

#[test]
fn emission_galaxies_and_quasars_at_snr_ten_get_the_right_redshift_and_class() {
    // Regression floors, not the goal. Measured on 2026-12-01 with the
    // built-in catalogue (release build): emission galaxies z 6/6, class 4/6
    // (one 8-line galaxy at R 600 called a quasar, one one-line galaxy called
    // unknown). The product goal (class right for >= 92%) is not met yet; raise
    // these floors as the classifier improves.
    let id = identifier();
    for kind in [Kind::EmissionGalaxy, Kind::Quasar] {
        let (z, c, fails) = run(&id, kind, 10.0, 6, 77 + kind as u64);
        assert!(
            z >= 5 && c >= 4,
            "{}: z {z}/6 class {c}/6\n{}",
            kind.name(),
            fails.join("\n")
        );
    }
}
