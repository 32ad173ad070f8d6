//! The demo's FITS files as astropy reads them (fixture written by
//! tests/scripts/check_fits_with_astropy.py; astropy version recorded in the
//! fixture): wavelengths of image WCS and table columns agree with what
//! zsift's writer meant and its reader returns, and the OBSGEO-X/Y/Z written
//! for the invented site convert back to its latitude, longitude and height.

use std::path::Path;
use zsift::physics::airvac::air_to_vacuum;
use zsift::spectrum::{ReadOptions, read};
use zsift::synth::demo;

#[test]
fn astropy_reads_the_demo_wavelengths_and_site_as_zsift_wrote_them() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(root.join("tests/fixtures/demo_fits_astropy.json")).unwrap();
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    let files = fx["files"].as_object().unwrap();
    assert!(files.len() >= 20, "fixture lists {} files", files.len());
    for (name, rec) in files {
        let spec = read(&root.join("demo").join(name), &ReadOptions::default()).unwrap();
        let site = &rec["site"];
        // astropy EarthLocation.from_geocentric of the written OBSGEO-X/Y/Z.
        assert!((site["lat_deg"].as_f64().unwrap() - demo::LATITUDE_DEG).abs() < 1e-6);
        assert!((site["lon_deg"].as_f64().unwrap() - demo::LONGITUDE_DEG).abs() < 1e-6);
        assert!((site["height_m"].as_f64().unwrap() - demo::HEIGHT_M).abs() < 0.01);
        for h in rec["hdus"].as_array().unwrap() {
            let air = match h["kind"].as_str().unwrap() {
                "image" => h["ctype"].as_str().unwrap().starts_with("AWAV"),
                _ => h["medium"].as_str() == Some("air"),
            };
            let pixels = h["pixels"].as_array().unwrap();
            let waves = h["wavelength"].as_array().unwrap();
            for (p, w) in pixels.iter().zip(waves) {
                let p = p.as_u64().unwrap() as usize;
                let w = w.as_f64().unwrap();
                let vac = if air { air_to_vacuum(w) } else { w };
                // astropy's WCS arithmetic differs from ours by rounding only.
                assert!(
                    (vac - spec.wave[p]).abs() < 1e-6,
                    "{name} HDU {} pixel {p}: astropy {vac} vs zsift {}",
                    h["hdu"],
                    spec.wave[p]
                );
            }
        }
    }
}
