//! Hand-built review data: an invented galaxy-like spectrum with its
//! analysis, candidates and a small catalogue, so the review's widgets and
//! key handling are tested without the readers or the identifier.
//!
//! Everything here is invented for display tests; the rest wavelengths are
//! vacuum values from memory, used only to place markers, never as checks.
#![allow(dead_code)]

use std::path::PathBuf;
use std::sync::Arc;
use zsift::identify::{
    Analysis, Candidate, Feature, FeatureFlag, FeatureKind, Grade, Match, Noise,
};
use zsift::lines::{Catalogue, Foreground, ForegroundKind, Line, LineKind, ObjectClass, Width};
use zsift::physics::bary::{self, BaryOverrides};
use zsift::spectrum::{Metadata, Site, Spectrum};
use zsift::tui::app::{App, Loaded, Msg, Slot, Target};

/// Rest vacuum wavelengths (from memory; display only).
pub const LINES: [(&str, f64, LineKind, &[ObjectClass]); 7] = [
    (
        "[O II] 3728",
        3728.48,
        LineKind::Emission,
        &[ObjectClass::Galaxy, ObjectClass::Qso],
    ),
    (
        "H-beta",
        4862.68,
        LineKind::Both,
        &[ObjectClass::Galaxy, ObjectClass::Star],
    ),
    (
        "[O III] 4960",
        4960.30,
        LineKind::Emission,
        &[ObjectClass::Galaxy],
    ),
    (
        "[O III] 5008",
        5008.24,
        LineKind::Emission,
        &[ObjectClass::Galaxy],
    ),
    (
        "Na D",
        5895.6,
        LineKind::Absorption,
        &[ObjectClass::Galaxy, ObjectClass::Star],
    ),
    (
        "H-alpha",
        6564.61,
        LineKind::Both,
        &[ObjectClass::Galaxy, ObjectClass::Star],
    ),
    (
        "[N II] 6585",
        6585.27,
        LineKind::Emission,
        &[ObjectClass::Galaxy],
    ),
];

/// The small catalogue the fixtures use.
pub fn catalogue() -> Catalogue {
    Catalogue {
        lines: LINES
            .iter()
            .map(|(name, w, kind, classes)| Line {
                name: name.to_string(),
                species: String::new(),
                wavelength: *w,
                kind: *kind,
                strength: 1.0,
                classes: classes.to_vec(),
                width: Width::Narrow,
                group: None,
            })
            .collect(),
        ratios: Vec::new(),
        foreground: vec![
            Foreground {
                name: "sky 5579".into(),
                kind: ForegroundKind::Sky,
                lo: 5576.0,
                hi: 5582.0,
                strength: 1.0,
            },
            Foreground {
                name: "telluric band".into(),
                kind: ForegroundKind::Telluric,
                lo: 7590.0,
                hi: 7700.0,
                strength: 1.0,
            },
        ],
    }
}

/// A small deterministic pseudo-random sequence (no dependency, no seed files).
fn noise(i: usize, k: u64) -> f64 {
    let mut x = (i as u64)
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407 ^ k);
    x ^= x >> 33;
    x = x.wrapping_mul(0xff51afd7ed558ccd);
    x ^= x >> 33;
    (x as f64 / u64::MAX as f64) - 0.5
}

/// An invented spectrum: emission lines of `LINES` at redshift `z` on a
/// sloped continuum, a telluric dip, a sky residual, 2000 pixels 4000-9000 A.
pub fn spectrum(name: &str, z: f64, seed: u64) -> Spectrum {
    let n = 2000;
    let wave: Vec<f64> = (0..n).map(|i| 4000.0 + 2.5 * i as f64).collect();
    let cont: Vec<f64> = wave
        .iter()
        .map(|w| 1.0 + 0.3 * (w - 4000.0) / 5000.0)
        .collect();
    let mut flux = cont.clone();
    for (i, w) in wave.iter().enumerate() {
        for (_, rest, kind, _) in LINES {
            let c = rest * (1.0 + z);
            let g = (-0.5 * ((w - c) / 4.0).powi(2)).exp();
            flux[i] += if kind == LineKind::Absorption {
                -0.4 * g
            } else {
                1.5 * g
            };
        }
        if (7590.0..7700.0).contains(w) {
            flux[i] *= 0.7;
        }
        flux[i] += 0.05 * noise(i, seed);
    }
    let sigma = vec![0.05; n];
    let meta = Metadata {
        target: name.to_string(),
        source_path: PathBuf::from(format!("night1/{name}.fits")),
        ..Metadata::default()
    };
    let meta = bary_meta(meta, seed);
    let mut s = Spectrum::new(wave.clone(), flux, Some(sigma), meta).expect("valid spectrum");
    s.sky = Some(
        wave.iter()
            .map(|w| 0.2 + if (w - 5579.0).abs() < 5.0 { 3.0 } else { 0.0 })
            .collect(),
    );
    s
}

/// Invented observation metadata by fixture index: 0 says everything the
/// barycentric correction needs (the demo's invented site), 1 lacks the site,
/// 2 names a site no config lists, the rest say nothing.
fn bary_meta(mut meta: Metadata, seed: u64) -> Metadata {
    if seed <= 2 {
        meta.ra_deg = Some(150.25);
        meta.dec_deg = Some(12.5);
        meta.date_obs = Some("2026-03-14T04:30:00".into());
        meta.exposure_s = Some(900.0);
    }
    match seed {
        0 => {
            meta.site = Site {
                longitude_deg: Some(zsift::synth::demo::LONGITUDE_DEG),
                latitude_deg: Some(zsift::synth::demo::LATITUDE_DEG),
                height_m: Some(zsift::synth::demo::HEIGHT_M),
                ..Site::default()
            }
        }
        2 => meta.site.name = Some("Kestrel Ridge".into()),
        _ => {}
    }
    meta
}

fn feature(w: f64, kind: FeatureKind, snr: f64, flag: Option<FeatureFlag>) -> Feature {
    let amp = if kind == FeatureKind::Emission {
        1.5
    } else {
        -0.4
    };
    Feature {
        wavelength: w,
        wavelength_err: 0.3,
        kind,
        snr,
        fwhm_kms: 300.0,
        amplitude: amp,
        flux: amp * 10.0,
        flux_err: 0.5,
        ew: -amp * 10.0,
        flag,
    }
}

/// The analysis the fixture identifier "found" for [`spectrum`] at `z`:
/// features for every line plus one unexplained emission and one sky
/// residual; three candidates (the right one first).
pub fn analysis(s: &Spectrum, z: f64) -> Analysis {
    let mut features = Vec::new();
    let mut matched = Vec::new();
    for (name, rest, kind, _) in LINES {
        let obs = rest * (1.0 + z);
        if obs < s.wave[0] || obs > s.wave[s.len() - 1] {
            continue;
        }
        let fk = if kind == LineKind::Absorption {
            FeatureKind::Absorption
        } else {
            FeatureKind::Emission
        };
        features.push(feature(obs, fk, 20.0, None));
        matched.push(Match {
            line: name.to_string(),
            rest_wavelength: rest,
            observed_wavelength: obs,
            offset_kms: 3.0,
            feature: Some(features.len() - 1),
            kind: if kind == LineKind::Absorption {
                LineKind::Absorption
            } else {
                LineKind::Emission
            },
            snr: 20.0,
            fwhm_kms: 300.0,
            ew: if kind == LineKind::Absorption {
                2.1
            } else {
                -12.5
            },
        });
    }
    features.push(feature(6100.0, FeatureKind::Emission, 6.0, None));
    features.push(feature(
        5579.0,
        FeatureKind::Emission,
        9.0,
        Some(FeatureFlag::Sky),
    ));
    let cont: Vec<f64> = s
        .wave
        .iter()
        .map(|w| 1.0 + 0.3 * (w - 4000.0) / 5000.0)
        .collect();
    let best = Candidate {
        rank: 1,
        z,
        z_err: 0.00004,
        velocity_kms: 0.0,
        class: ObjectClass::Galaxy,
        subclass: Some("star-forming".into()),
        score: 42.0,
        grade: Grade::High,
        reason: format!("{} lines agree", matched.len()),
        matched,
        derived: Vec::new(),
    };
    let second = Candidate {
        rank: 2,
        z: 0.3421,
        z_err: 0.0003,
        velocity_kms: 0.0,
        class: ObjectClass::Galaxy,
        subclass: None,
        score: 7.5,
        grade: Grade::Poor,
        reason: "one line, alias".into(),
        matched: vec![Match {
            line: "H-alpha".into(),
            rest_wavelength: 6564.61,
            observed_wavelength: 6564.61 * 1.3421,
            offset_kms: 40.0,
            feature: None,
            kind: LineKind::Emission,
            snr: 3.0,
            fwhm_kms: 250.0,
            ew: -2.0,
        }],
        derived: Vec::new(),
    };
    let third = Candidate {
        rank: 3,
        z: 0.0001,
        z_err: 0.0001,
        velocity_kms: 30.0,
        class: ObjectClass::Star,
        subclass: None,
        score: 2.0,
        grade: Grade::Poor,
        reason: "no lines".into(),
        matched: Vec::new(),
        derived: Vec::new(),
    };
    let mut cands = vec![best, second, third];
    for c in &mut cands {
        let s2 = (1.0 + c.z) * (1.0 + c.z);
        c.velocity_kms = zsift::physics::constants::C_KM_S * (s2 - 1.0) / (s2 + 1.0);
    }
    Analysis {
        noise: Noise {
            median_snr: 21.4,
            error_ratio: Some(1.02),
            estimated: false,
        },
        sigma: vec![0.05; s.len()],
        continuum: cont,
        features,
        candidates: cands,
        warnings: Vec::new(),
    }
}

/// Redshifts of the fixture queue's targets.
pub const ZS: [f64; 6] = [0.1, 0.02, 0.25, 0.05, 0.3, 0.15];

/// The fixture queue: six invented targets.
pub fn targets() -> Vec<Target> {
    ZS.iter()
        .enumerate()
        .map(|(i, _)| {
            Target::new(
                format!("Kestrel-{:02}", i + 1),
                format!("night1/kestrel-{:02}.fits", i + 1),
            )
        })
        .collect()
}

/// The loaded data of fixture target `i`.
pub fn loaded(i: usize) -> Arc<Loaded> {
    let name = format!("Kestrel-{:02}", i + 1);
    let s = spectrum(&name, ZS[i], i as u64);
    let a = analysis(&s, ZS[i]);
    // What the production worker does with the file's metadata.
    let bary = bary::compute(&s.meta, &BaryOverrides::default());
    Arc::new(Loaded {
        spectrum: s,
        analysis: a,
        bary,
    })
}

/// An app over the fixture queue, started, with its current target loaded
/// (and the worker's other answers delivered), in plain ASCII.
pub fn app() -> App {
    let mut app = App::new(targets(), Vec::new(), Arc::new(catalogue()));
    app.ascii = true;
    app.observer = "tester".into();
    let _ = app.start();
    deliver(&mut app);
    app
}

/// Deliver every waiting target, as the worker would.
pub fn deliver(app: &mut App) {
    let waiting: Vec<usize> = (0..app.targets.len())
        .filter(|i| matches!(app.slots.get(i), Some(Slot::Waiting)))
        .filter(|i| *i + 2 >= app.pos && *i <= app.pos + 3)
        .collect();
    for i in waiting {
        let _ = app.update(Msg::Loaded {
            target: i,
            result: Ok(loaded(i)),
        });
    }
}
