//! FITS reader against fixtures written and read back by astropy
//! (tests/fixtures/make_fits_fixtures.py; versions in tests/fixtures/fits/expected.json).

use serde_json::Value;
use std::path::{Path, PathBuf};
use zsift::physics::airvac::vacuum_to_air;
use zsift::spectrum::{Layout, Medium, MediumChoice, ReadOptions, read};

fn dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/fits")
}

fn expected() -> Value {
    let text = std::fs::read_to_string(dir().join("expected.json")).expect("expected.json");
    serde_json::from_str(&text).expect("valid JSON")
}

fn floats(v: &Value) -> Vec<Option<f64>> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64())
        .collect()
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1e-30)
}

/// Every fixture: same wavelengths (in the file's medium), flux, sigma, sky and
/// masked pixels as astropy reads, and the HDU and medium recorded.
#[test]
fn every_astropy_fixture_reads_back_to_the_same_numbers() {
    let exp = expected();
    let files = exp["files"].as_object().expect("files");
    assert!(files.len() >= 12, "fixtures missing");
    for (name, e) in files {
        let s = read(&dir().join(name), &ReadOptions::default())
            .unwrap_or_else(|err| panic!("{name}: {err}"));
        assert_eq!(s.meta.hdu, e["hdu"].as_u64().map(|h| h as usize), "{name}");
        let medium = e["medium"].as_str().expect("medium");
        let declared = match medium {
            "air" => Some(Medium::Air),
            "vacuum" => Some(Medium::Vacuum),
            _ => None,
        };
        assert_eq!(s.meta.medium_declared, declared, "{name}");
        let mut wave = floats(&e["wave_angstrom_in_file_medium"]);
        let mut flux = floats(&e["flux"]);
        let mut sigma = e.get("sigma").map(floats);
        let mut sky = e.get("sky").map(floats);
        let descending = wave.windows(2).all(|p| p[1] < p[0]);
        if descending {
            wave.reverse();
            flux.reverse();
            if let Some(s) = sigma.as_mut() {
                s.reverse();
            }
            if let Some(s) = sky.as_mut() {
                s.reverse();
            }
            assert!(
                s.meta.warnings.iter().any(|w| w.contains("descending")),
                "{name}: no warning for reversed order"
            );
        }
        assert_eq!(s.len(), wave.len(), "{name}");
        for (i, w) in wave.iter().enumerate() {
            let w = w.expect("finite wavelength");
            let ours = if declared == Some(Medium::Air) {
                vacuum_to_air(s.wave[i])
            } else {
                s.wave[i]
            };
            // Header values are decimal text read identically; only the
            // arithmetic order differs from wcslib's.
            assert!(close(ours, w, 1e-12), "{name} pixel {i}: {ours} vs {w}");
        }
        for (i, f) in flux.iter().enumerate() {
            match f {
                Some(f) => {
                    // astropy scales integer data in float32 (BSCALE): 1e-6.
                    assert!(
                        close(s.flux[i], *f, 1e-6),
                        "{name} flux {i}: {} vs {f}",
                        s.flux[i]
                    )
                }
                None => assert!(!s.mask[i], "{name}: NaN flux at {i} not masked"),
            }
        }
        if let Some(sig) = sigma {
            let ours = s
                .sigma
                .as_ref()
                .unwrap_or_else(|| panic!("{name}: no sigma"));
            for (i, x) in sig.iter().enumerate() {
                match x {
                    Some(x) if x.is_finite() => {
                        assert!(
                            close(ours[i], *x, 1e-6),
                            "{name} sigma {i}: {} vs {x}",
                            ours[i]
                        )
                    }
                    _ => assert!(!s.mask[i], "{name}: sigma {i} should be masked"),
                }
            }
        }
        if let Some(sky) = sky {
            let ours = s.sky.as_ref().unwrap_or_else(|| panic!("{name}: no sky"));
            for (i, x) in sky.iter().enumerate() {
                assert!(close(ours[i], x.expect("sky"), 1e-6), "{name} sky {i}");
            }
        }
        if let Some(m) = e.get("masked").and_then(Value::as_array) {
            for i in m {
                let i = i.as_u64().expect("index") as usize;
                assert!(!s.mask[i], "{name}: pixel {i} should be masked");
            }
            let bad = s.mask.iter().filter(|m| !**m).count();
            assert_eq!(bad, m.len(), "{name}: masked count");
        }
    }
}

#[test]
fn metadata_keywords_are_read_from_the_primary_and_the_spectrum_hdu() {
    let exp = expected();
    let s = read(
        &dir().join("image1d_awav_nm_f32.fits"),
        &ReadOptions::default(),
    )
    .expect("reads");
    assert_eq!(s.meta.target, "Orla-17 north knot");
    // RA '10:12:33.50' in hours -> 153.139583 deg (15 deg per hour: common practice, no source).
    assert!((s.meta.ra_deg.expect("ra") - 153.139_583_3).abs() < 1e-6);
    assert!((s.meta.dec_deg.expect("dec") + 21.068_055_6).abs() < 1e-6);
    assert_eq!(s.meta.equinox, Some(2000.0));
    assert_eq!(s.meta.date_obs.as_deref(), Some("2026-03-14T02:11:09.5"));
    assert_eq!(s.meta.mjd_obs, Some(61113.0910821759));
    assert_eq!(s.meta.time_scale.as_deref(), Some("UTC"));
    assert_eq!(s.meta.exposure_s, Some(1200.0));
    assert_eq!(s.meta.wave_unit.as_deref(), Some("nm"));
    assert_eq!(s.meta.layout, Some(Layout::FitsImage));
    let geo = s.meta.site.geocentric_m.expect("obsgeo");
    let want = floats(&exp["site_geocentric_m"]);
    for k in 0..3 {
        assert!((geo[k] - want[k].expect("xyz")).abs() < 1e-6);
    }
    // The table fixture keeps its metadata in the primary header (HDU 0).
    let t = read(&dir().join("table_rows.fits"), &ReadOptions::default()).expect("reads");
    assert_eq!(t.meta.hdu, Some(1));
    assert_eq!(t.meta.target, "Orla-17 north knot");
    assert_eq!(t.meta.layout, Some(Layout::FitsTable));
    assert_eq!(t.meta.flux_unit.as_deref(), Some("erg/s/cm2/Angstrom"));
}

#[test]
fn an_undeclared_medium_follows_the_medium_choice() {
    let p = dir().join("image_ext_descending.fits");
    let auto = read(&p, &ReadOptions::default()).expect("reads");
    assert_eq!(auto.meta.medium_declared, None);
    assert_eq!(auto.meta.medium_used, Some(Medium::Vacuum));
    assert!(
        auto.meta
            .warnings
            .iter()
            .any(|w| w.contains("air or vacuum"))
    );
    let air = read(
        &p,
        &ReadOptions {
            medium: MediumChoice::Air,
        },
    )
    .expect("reads");
    assert_eq!(air.meta.medium_used, Some(Medium::Air));
    // Air 6000 A is about 1.66 A shorter than vacuum (Morton 2000 eq. 8 gives
    // n - 1 = 2.77e-4 there): the air reading must be redder.
    assert!(air.wave[0] > auto.wave[0] + 1.0);
    // A file that declares its medium ignores the choice.
    let declared = read(
        &dir().join("image1d_wave_f64.fits"),
        &ReadOptions {
            medium: MediumChoice::Air,
        },
    )
    .expect("reads");
    assert_eq!(declared.meta.medium_used, Some(Medium::Vacuum));
}
