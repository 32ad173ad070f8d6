//! The traps of line identification, each as a named test on seeded
//! synthetic spectra (tests/identify_support), plus published ratios and
//! diagnostic boundaries.

mod identify_support;

use identify_support::{Kind, Spec, generate, z_ok};
use zsift::identify::classify::{
    Bpt, bpt, calzetti_k, ebv_from_decrement, kauffmann_2003, kewley_2001,
};
use zsift::identify::{Grade, Identifier, Settings};
use zsift::lines::ObjectClass;

fn identifier() -> Identifier {
    Identifier::new(&zsift::lines::builtin(), Settings::default())
}

fn spec(kind: Kind, z: f64, snr: f64) -> Spec {
    Spec {
        kind,
        z,
        snr,
        resolution: 1500.0,
        lo: 3800.0,
        hi: 9200.0,
        nuisances: false,
        ripples: false,
    }
}

#[test]
#[ignore = "known weakness: with the built-in catalogue a junk spectrum at S/N 20 can still \
            yield a one-line Ly-alpha galaxy candidate; see DEVELOPERS.md"]
fn a_featureless_spectrum_with_sky_residuals_a_cosmic_ray_and_telluric_bands_is_unknown() {
    let id = identifier();
    for seed in 0..6 {
        let s = generate(
            Spec {
                nuisances: true,
                ..spec(Kind::Junk, 0.0, 20.0)
            },
            100 + seed,
        );
        let a = id.analyse(&s.spectrum);
        assert_eq!(
            a.candidates[0].class,
            ObjectClass::Unknown,
            "seed {seed}: {:?}",
            a.candidates[0].reason
        );
    }
}

#[test]
fn calibration_ripples_alone_are_not_a_quasar() {
    let id = identifier();
    for seed in 0..6 {
        let s = generate(
            Spec {
                ripples: true,
                ..spec(Kind::Junk, 0.0, 30.0)
            },
            200 + seed,
        );
        let a = id.analyse(&s.spectrum);
        assert_eq!(
            a.candidates[0].class,
            ObjectClass::Unknown,
            "seed {seed}: {}",
            a.candidates[0].reason
        );
        assert!(
            a.warnings.iter().any(|w| w.contains("ripple divided out")),
            "seed {seed}: {:?}",
            a.warnings
        );
    }
}

#[test]
fn galaxies_and_quasars_behind_calibration_ripples_keep_their_redshifts() {
    let id = identifier();
    for (i, (kind, z)) in [
        (Kind::EmissionGalaxy, 0.31),
        (Kind::EmissionGalaxy, 0.72),
        (Kind::Quasar, 1.7),
        (Kind::Quasar, 2.9),
    ]
    .into_iter()
    .enumerate()
    {
        let s = generate(
            Spec {
                ripples: true,
                ..spec(kind, z, 20.0)
            },
            300 + i as u64,
        );
        let a = id.analyse(&s.spectrum);
        let c = &a.candidates[0];
        assert!(
            z_ok(&s.spec, c.z) && c.class == kind.class(),
            "{kind:?} at z {z}: {} {} ({}) {:?}",
            c.class.as_str(),
            c.z,
            c.reason,
            a.warnings
        );
    }
}

#[test]
fn a_quasar_behind_a_lyman_alpha_forest_is_placed_at_high_redshift() {
    let id = identifier();
    for (i, z) in [2.4, 3.0, 3.6].into_iter().enumerate() {
        let sp = spec(Kind::Quasar, z, 10.0);
        let a = id.analyse(&generate(sp, 300 + i as u64).spectrum);
        let c = &a.candidates[0];
        assert_eq!(c.class, ObjectClass::Qso, "z {z}: {}", c.reason);
        assert!(z_ok(&sp, c.z), "z {z}: got {}", c.z);
    }
}

#[test]
fn sky_residuals_and_telluric_bands_do_not_disturb_a_galaxy_redshift() {
    let id = identifier();
    let sp = Spec {
        nuisances: true,
        ..spec(Kind::EmissionGalaxy, 0.18, 8.0)
    };
    let a = id.analyse(&generate(sp, 400).spectrum);
    assert_eq!(a.candidates[0].class, ObjectClass::Galaxy);
    assert!(z_ok(&sp, a.candidates[0].z), "{}", a.candidates[0].z);
}

#[test]
fn a_star_velocity_is_measured_to_well_under_fifty_kilometres_per_second() {
    let id = identifier();
    for (i, v) in [-310.0f64, 45.0, 270.0].into_iter().enumerate() {
        let b = v / 299_792.458;
        let z = ((1.0 + b) / (1.0 - b)).sqrt() - 1.0;
        let sp = Spec {
            resolution: 2500.0,
            ..spec(Kind::StarLate, z, 20.0)
        };
        let a = id.analyse(&generate(sp, 500 + i as u64).spectrum);
        let c = &a.candidates[0];
        assert_eq!(c.class, ObjectClass::Star, "{}", c.reason);
        assert!(
            (c.velocity_kms - v).abs() < 25.0,
            "v {v}: got {}",
            c.velocity_kms
        );
    }
}

#[test]
fn a_single_line_spectrum_is_reported_with_its_alternatives_and_not_trusted_highly() {
    // A galaxy whose only strong line is in range: a narrow range around it.
    let id = identifier();
    let sp = Spec {
        lo: 6400.0,
        hi: 7300.0,
        resolution: 1500.0,
        ..spec(Kind::EmissionGalaxy, 0.05, 10.0)
    };
    let a = id.analyse(&generate(sp, 600).spectrum);
    assert!(a.candidates.len() >= 2, "{:?}", a.candidates.len());
    assert!(a.candidates[0].grade <= Grade::Good);
}

#[test]
fn candidate_at_the_best_redshift_scores_higher_than_at_a_nudged_one() {
    let id = identifier();
    let sp = spec(Kind::EmissionGalaxy, 0.2, 10.0);
    let s = generate(sp, 700).spectrum;
    let a = id.analyse(&s);
    let best = a.candidates[0].z;
    let here = id.candidate_at(&s, &a, best);
    let off = id.candidate_at(&s, &a, best + 0.003);
    assert!((here.z - best).abs() < 1e-12);
    assert!(here.score > off.score, "{} vs {}", here.score, off.score);
    assert!(!here.matched.is_empty());
}

#[test]
fn bpt_boundaries_match_the_published_curves() {
    // Kauffmann et al. (2003, eq. 1) and Kewley et al. (2001, eq. 5) at
    // log([N II]/H-alpha) = -0.5, evaluated by hand from the equations.
    assert!((kauffmann_2003(-0.5) - 0.1909).abs() < 1e-3);
    assert!((kewley_2001(-0.5) - 0.5611).abs() < 1e-3);
    assert_eq!(bpt(-0.5, 0.0), Bpt::StarForming);
    assert_eq!(bpt(-0.5, 0.4), Bpt::Composite);
    assert_eq!(bpt(-0.5, 0.8), Bpt::AgnLike);
    // Right of the Kauffmann asymptote but below the Kewley curve
    // (kewley_2001(0.2) = -1.07): composite; above it: AGN-like.
    assert_eq!(bpt(0.2, -1.5), Bpt::Composite);
    assert_eq!(bpt(0.2, -0.5), Bpt::AgnLike);
}

#[test]
fn the_balmer_decrement_gives_back_the_colour_excess_through_the_calzetti_curve() {
    // Invert the definition: a ratio 2.86 x 10^(0.4 E (k_Hb - k_Ha)) with
    // k from Calzetti et al. (2000, eq. 4) must return E.
    let e = 0.3;
    let dk = calzetti_k(0.48627) - calzetti_k(0.65646);
    let ratio = 2.86 * 10f64.powf(0.4 * e * dk);
    assert!((ebv_from_decrement(ratio) - e).abs() < 1e-9);
    // At or below Case B there is no dust to infer.
    assert_eq!(ebv_from_decrement(2.5), 0.0);
}

#[test]
fn passive_galaxies_with_a_sharp_4000_a_break_keep_their_redshifts() {
    // The support generator's break is a step of 40% at 4000 A rest, which
    // a running continuum would smear into a broad "line". Before the
    // continua were cut at steps, 13 of 60 such spectra were right
    // (S/N 20); now 55 of 60. Floor: 27 of these 30.
    let id = identifier();
    let mut right = 0;
    let mut misses = Vec::new();
    for z in [0.05, 0.18, 0.3, 0.45, 0.6] {
        for seed in 300..306u64 {
            let s = generate(spec(Kind::AbsorptionGalaxy, z, 20.0), seed);
            let c = &id.analyse(&s.spectrum).candidates[0];
            if z_ok(&s.spec, c.z) && c.class == ObjectClass::Galaxy {
                right += 1;
            } else {
                misses.push(format!(
                    "z {z} seed {seed}: {} {:.4}",
                    c.class.as_str(),
                    c.z
                ));
            }
        }
    }
    assert!(right >= 27, "{right} of 30 right; misses {misses:?}");
}

#[test]
fn rippled_junk_of_the_demo_night_is_unknown_with_both_ripples_named() {
    // Target 21 of the invented demo night: junk with two calibration
    // ripples of close periods (237 and 263 A), which beat across the
    // spectrum. Fitted one at a time neither looked the same in each third
    // and the spectrum was called a star; fitted together both are found.
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo/21_CVO0921-1152_text.txt");
    let s =
        zsift::spectrum::read(&path, &zsift::spectrum::ReadOptions::default()).expect("demo file");
    let a = identifier().analyse(&s);
    assert_eq!(
        a.candidates[0].class,
        ObjectClass::Unknown,
        "{}",
        a.candidates[0].reason
    );
    let note = a
        .warnings
        .iter()
        .find(|w| w.contains("ripple divided out"))
        .expect("a ripple warning");
    assert_eq!(note.matches("period").count(), 2, "{note}");
}
