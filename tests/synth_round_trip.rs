//! Every writer's output reads back through zsift's own readers to the same
//! spectrum: wavelengths (vacuum, after the reader's air conversion), flux,
//! errors, sky, medium and observation metadata.

use zsift::spectrum::{Medium, ReadOptions, read_bytes};
use zsift::synth::write::{Format, to_bytes};
use zsift::synth::{Instrument, Kind, SynthSpec, Synthetic, generate};

fn sample(inst: Instrument, with_sky: bool) -> Synthetic {
    let mut spec = SynthSpec::new(Kind::Quasar, 2.1, 15.0, inst);
    spec.nuisances.include_sky = with_sky;
    spec.meta.target = "CVO 1234+5678".into();
    spec.meta.ra_deg = Some(188.625);
    spec.meta.dec_deg = Some(56.95);
    spec.meta.mjd_obs = Some(61113.123456);
    spec.meta.exposure_s = Some(900.0);
    spec.meta.site.geocentric_m = Some([-1_801_000.5, -4_246_000.25, 4_419_000.0]);
    generate(&spec, 77)
}

fn close(a: f64, b: f64, rel: f64, abs: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs()) + abs
}

fn check(syn: &Synthetic, format: Format, medium: Medium) {
    let bytes = to_bytes(syn, format, medium).unwrap();
    let name = format!("sample.{}", format.extension());
    let got = read_bytes(std::path::Path::new(&name), &bytes, &ReadOptions::default())
        .unwrap_or_else(|e| panic!("{format:?} {medium:?}: {e}"));
    let want = &syn.spectrum;
    let ctx = format!("{format:?} in {medium:?}");
    assert_eq!(got.len(), want.len(), "{ctx}");
    assert_eq!(got.meta.medium_declared, Some(medium), "{ctx}");
    // Text keeps 4 decimals of Angstrom (5e-5 A); binary formats are exact to
    // float rounding.
    for i in 0..want.len() {
        assert!(
            close(got.wave[i], want.wave[i], 1e-12, 6e-5),
            "{ctx} pixel {i}: {} vs {}",
            got.wave[i],
            want.wave[i]
        );
        // Single-precision FITS keeps 2^-24 relative; text 6 significant digits.
        assert!(
            close(got.flux[i], want.flux[i], 6e-6, 1e-30),
            "{ctx} flux {i}: {} vs {}",
            got.flux[i],
            want.flux[i]
        );
    }
    // The readers take a 1-D image's primary HDU alone (its ERROR and SKY
    // extensions are not read yet, see DEVELOPERS.md); every other layout
    // must carry the errors and sky through.
    let extensions_read = format != Format::FitsImage;
    let ws = want.sigma.as_ref().unwrap();
    match (&got.sigma, extensions_read) {
        (Some(gs), _) => {
            for i in 0..want.len() {
                assert!(
                    close(gs[i], ws[i], 6e-6, 1e-30),
                    "{ctx} sigma {i}: {} vs {}",
                    gs[i],
                    ws[i]
                );
            }
        }
        (None, true) => panic!("{ctx}: the error column was lost"),
        (None, false) => {}
    }
    if let Some(wk) = want.sky.as_ref()
        && format != Format::Whitespace
        && extensions_read
    {
        let gk = got.sky.as_ref().expect("sky");
        for i in 0..want.len() {
            assert!(close(gk[i], wk[i], 6e-6, 1e-30), "{ctx} sky {i}");
        }
    }
    assert_eq!(got.meta.target, "CVO 1234+5678", "{ctx}");
    assert_eq!(got.meta.ra_deg, Some(188.625), "{ctx}");
    assert_eq!(got.meta.dec_deg, Some(56.95), "{ctx}");
    assert_eq!(got.meta.mjd_obs, Some(61113.123456), "{ctx}");
    assert_eq!(got.meta.exposure_s, Some(900.0), "{ctx}");
    assert_eq!(
        got.meta.site.geocentric_m,
        Some([-1_801_000.5, -4_246_000.25, 4_419_000.0]),
        "{ctx}"
    );
}

#[test]
fn every_layout_reads_back_to_the_written_spectrum_in_air_and_vacuum() {
    for inst in [
        Instrument::wide(),
        Instrument::low_res(),
        Instrument::red_log(),
    ] {
        for with_sky in [true, false] {
            let syn = sample(inst.clone(), with_sky);
            for format in Format::ALL {
                for medium in [Medium::Air, Medium::Vacuum] {
                    if format.is_image() && medium != inst.medium {
                        continue;
                    }
                    check(&syn, format, medium);
                }
            }
        }
    }
}
