//! Shared helpers for the scan tests: a temp corpus and a hand-made analyser.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use zsift::identify::{
    Analysis, Candidate, Feature, FeatureFlag, FeatureKind, Grade, Match, Noise,
};
use zsift::lines::{LineKind, ObjectClass};
use zsift::spectrum::Spectrum;

/// A text spectrum of 64 pixels from `w0` with one bump at pixel `peak`.
pub fn text_spectrum(object: &str, w0: f64, peak: usize) -> String {
    let mut s = format!("# object: {object}\n# medium: vacuum\nwavelength,flux,error\n");
    for i in 0..64 {
        let f = if i == peak {
            9.0
        } else {
            1.0 + 0.001 * i as f64
        };
        s.push_str(&format!("{},{f},0.1\n", w0 + 2.0 * i as f64));
    }
    s
}

/// Write `n` good spectra into nested folders under `dir`; returns their paths.
pub fn good_corpus(dir: &Path, n: usize) -> Vec<PathBuf> {
    let mut out = Vec::new();
    for i in 0..n {
        let sub = dir.join(format!("night{}", i % 3)).join("red");
        std::fs::create_dir_all(&sub).expect("mkdir");
        let p = sub.join(format!("t{i:03}.csv"));
        std::fs::write(
            &p,
            text_spectrum(&format!("Orla-{i}"), 4000.0 + i as f64, 10 + i % 40),
        )
        .expect("write");
        out.push(p);
    }
    out
}

/// A deterministic stand-in for the identifier: one emission feature at the
/// brightest pixel and one candidate that calls it H-alpha. Only the scan's
/// plumbing is under test here, not science.
pub fn fake_analysis(s: &Spectrum) -> Analysis {
    let (imax, _) =
        s.flux.iter().enumerate().fold(
            (0, f64::MIN),
            |a, (i, f)| if *f > a.1 { (i, *f) } else { a },
        );
    let w = s.wave[imax];
    let rest = 6564.61;
    let z = w / rest - 1.0;
    Analysis {
        noise: Noise {
            median_snr: 10.0,
            error_ratio: Some(1.0),
            estimated: false,
        },
        sigma: vec![0.1; s.len()],
        continuum: vec![1.0; s.len()],
        features: vec![Feature {
            wavelength: w,
            wavelength_err: 0.3,
            kind: FeatureKind::Emission,
            snr: 14.2,
            fwhm_kms: 180.0,
            amplitude: 8.0,
            flux: 1.2e-16,
            flux_err: 1e-17,
            ew: -23.1,
            flag: if imax % 2 == 0 {
                None
            } else {
                Some(FeatureFlag::Sky)
            },
        }],
        candidates: vec![Candidate {
            rank: 1,
            z,
            z_err: 3e-5,
            velocity_kms: 299_792.458 * z,
            class: ObjectClass::Galaxy,
            subclass: Some("star-forming".into()),
            score: 41.2,
            grade: Grade::Good,
            reason: "one line".into(),
            matched: vec![Match {
                line: "H-alpha".into(),
                rest_wavelength: rest,
                observed_wavelength: w,
                offset_kms: -3.1,
                feature: Some(0),
                kind: LineKind::Emission,
                snr: 14.2,
                fwhm_kms: 180.0,
                ew: -23.1,
            }],
            derived: vec![],
        }],
        warnings: vec![],
    }
}

/// Files that every reader must reject, with a name for each.
pub fn broken_corpus(dir: &Path) -> Vec<PathBuf> {
    let fits_dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/fits");
    let good_fits = std::fs::read(fits_dir.join("image1d_wave_f64.fits")).expect("fixture");
    let mut few = String::new();
    for i in 0..5 {
        few.push_str(&format!("{},1\n", 5000 + i));
    }
    let mut nan = String::new();
    let mut zero = String::new();
    let mut dup = String::new();
    for i in 0..30 {
        nan.push_str(&format!("{},nan\n", 5000 + i));
        zero.push_str(&format!("{},0\n", 5000 + i));
        dup.push_str(&format!("{},1\n", 5000 + i / 2));
    }
    let mut naxis0 = format!(
        "{:<80}{:<80}{:<80}{:<80}",
        "SIMPLE  =                    T",
        "BITPIX  =                    8",
        "NAXIS   =                    0",
        "END"
    );
    while naxis0.len() % 2880 != 0 {
        naxis0.push(' ');
    }
    let mut bitpix = String::from_utf8(good_fits[..2880].to_vec()).expect("ascii header");
    bitpix.replace_range(80..110, "BITPIX  =                   12");
    let mut bitpix = bitpix.into_bytes();
    bitpix.extend(&good_fits[2880..]);
    let cases: Vec<(&str, Vec<u8>)> = vec![
        ("empty.csv", vec![]),
        ("header_only.csv", b"wave,flux\n".to_vec()),
        ("non_numeric.csv", b"5000,1\n5001,x\n".to_vec()),
        ("ragged.csv", b"5000,1\n5001,1,2\n".to_vec()),
        ("all_nan.txt", nan.into_bytes()),
        ("all_zero.tsv", zero.into_bytes()),
        ("duplicate.dat", dup.into_bytes()),
        ("negative.csv", b"-5,1\n-4,1\n".repeat(10)),
        ("too_few.csv", few.into_bytes()),
        ("truncated.fits", good_fits[..4000].to_vec()),
        ("naxis0.fits", naxis0.into_bytes()),
        ("bitpix.fits", bitpix),
        (
            "garbage.fits",
            (0..5000u32).map(|i| (i * 97 % 256) as u8).collect(),
        ),
        ("long_line.txt", vec![b'7'; 2 * 1024 * 1024]),
        ("evil\u{1b}[31m\u{202e}name.csv", b"wave,flux\n".to_vec()),
    ];
    let mut out = Vec::new();
    for (name, bytes) in cases {
        let p = dir.join(name);
        std::fs::write(&p, bytes).expect("write");
        out.push(p);
    }
    out
}
