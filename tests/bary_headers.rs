//! From FITS header to barycentric correction: small spectra whose headers say
//! time, target and site in the different ways real headers do, read by the
//! readers and corrected, checked against astropy.
//!
//! Check values: `fits_headers` in `tests/fixtures/bary_astropy.json`, written
//! by `tests/fixtures/make_bary_fixtures.py` (astropy version in the fixture),
//! which computes mid-exposure itself with astropy Time arithmetic.

use serde_json::Value;
use std::path::Path;
use zsift::physics::bary::{self, BaryError, BaryOverrides, Missing, NamedSite};
use zsift::spectrum::{self, ReadOptions};

fn fixture() -> Value {
    serde_json::from_str(include_str!("fixtures/bary_astropy.json")).expect("fixture is JSON")
}

fn overrides(fx: &Value) -> BaryOverrides {
    let h = &fx["fits_headers"];
    BaryOverrides {
        sites: vec![NamedSite {
            name: h["site_name"].as_str().unwrap().into(),
            longitude_deg: h["site_lon_deg"].as_f64().unwrap(),
            latitude_deg: h["site_lat_deg"].as_f64().unwrap(),
            height_m: h["site_height_m"].as_f64().unwrap(),
        }],
        ..BaryOverrides::default()
    }
}

#[test]
fn headers_in_every_supported_style_give_astropys_correction_within_a_metre_per_second() {
    let fx = fixture();
    let ov = overrides(&fx);
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures");
    for case in fx["fits_headers"]["cases"].as_array().unwrap() {
        let file = case["file"].as_str().unwrap();
        let s = spectrum::read(&dir.join(file), &ReadOptions::default())
            .unwrap_or_else(|e| panic!("{file}: {e}"));
        let got = bary::correction_kms(&s.meta, &ov);
        // Check value: astropy SkyCoord.radial_velocity_correction (fixture).
        match case["correction_kms"].as_f64() {
            Some(want) => {
                let got = got.unwrap_or_else(|e| panic!("{file}: {e}"));
                assert!(
                    (got - want).abs() < 0.001,
                    "{file}: {got} vs astropy {want} km/s"
                );
            }
            None => assert_eq!(
                got.unwrap_err(),
                BaryError::Missing(vec![Missing::Site]),
                "{file}"
            ),
        }
    }
}

#[test]
fn a_header_naming_an_unconfigured_site_says_so() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/bary_fits");
    let s = spectrum::read(&dir.join("site_by_name.fits"), &ReadOptions::default()).unwrap();
    let err = bary::correction_kms(&s.meta, &BaryOverrides::default()).unwrap_err();
    assert_eq!(
        err,
        BaryError::Missing(vec![Missing::UnconfiguredSite("Kestrel Hill".into())])
    );
}

/// The astropy value of the site-by-name case (fixture).
fn site_by_name_astropy(fx: &Value) -> f64 {
    fx["fits_headers"]["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["file"] == "bary_fits/site_by_name.fits")
        .and_then(|c| c["correction_kms"].as_f64())
        .unwrap()
}

#[test]
fn a_telescope_name_is_looked_up_when_the_observatory_name_is_not_configured() {
    let fx = fixture();
    let ov = overrides(&fx);
    let site = fx["fits_headers"]["site_name"].as_str().unwrap();
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/bary_fits");
    let mut s = spectrum::read(&dir.join("site_by_name.fits"), &ReadOptions::default()).unwrap();
    // As a header with OBSERVAT = an unconfigured name and TELESCOP = the
    // configured one reads (the reader keeps OBSERVAT as the site name).
    s.meta.site.name = Some("Far Dome".into());
    s.meta
        .header
        .retain(|(k, _)| k != "OBSERVAT" && k != "TELESCOP");
    s.meta.header.push(("OBSERVAT".into(), "Far Dome".into()));
    s.meta.header.push(("TELESCOP".into(), site.into()));
    let got = bary::correction_kms(&s.meta, &ov).unwrap();
    // Check value: astropy SkyCoord.radial_velocity_correction (fixture).
    let want = site_by_name_astropy(&fx);
    assert!((got - want).abs() < 0.001, "{got} vs astropy {want}");
    // Neither name configured: the error names the observatory's.
    s.meta.header.retain(|(k, _)| k != "TELESCOP");
    s.meta
        .header
        .push(("TELESCOP".into(), "Far Dome 1m".into()));
    assert_eq!(
        bary::correction_kms(&s.meta, &ov).unwrap_err(),
        BaryError::Missing(vec![Missing::UnconfiguredSite("Far Dome".into())])
    );
}

#[test]
fn a_site_configured_geocentrically_gives_the_same_correction_as_in_geodetic_form() {
    let fx = fixture();
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/bary_fits");
    let name = fx["fits_headers"]["site_name"].as_str().unwrap();
    // The fixture writes the same site as OBSGEO-X/Y/Z (mm-rounded) here.
    let xyz = spectrum::read(
        &dir.join("iso_start_exptime_xyz.fits"),
        &ReadOptions::default(),
    )
    .unwrap()
    .meta
    .site
    .geocentric_m
    .unwrap();
    let ov = BaryOverrides {
        sites: vec![NamedSite::geocentric(name, xyz).unwrap()],
        ..BaryOverrides::default()
    };
    let s = spectrum::read(&dir.join("site_by_name.fits"), &ReadOptions::default()).unwrap();
    let got = bary::correction_kms(&s.meta, &ov).unwrap();
    // Check value: astropy SkyCoord.radial_velocity_correction (fixture).
    let want = site_by_name_astropy(&fx);
    assert!((got - want).abs() < 0.001, "{got} vs astropy {want}");
    // And through the geodetic form of the same site: equal to 1 um/s.
    let geodetic = bary::correction_kms(&s.meta, &overrides(&fx)).unwrap();
    assert!((got - geodetic).abs() < 1e-9, "{got} vs {geodetic}");
}
