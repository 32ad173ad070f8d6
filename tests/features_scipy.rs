//! The Gaussian fits, the peak finder and the matched filter checked
//! against reference-library output: `tests/fixtures/scipy_features.json`,
//! written by `tests/fixtures/make_scipy_fixtures.py` with
//! scipy.optimize.curve_fit, scipy.signal.find_peaks and numpy (versions
//! recorded in the fixture).

use serde_json::Value;
use zsift::identify::detect::{matched_filter, peaks};
use zsift::identify::fit::{Component, FitOptions, Pixels, Tie, fit_gaussians};

fn fixture() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/scipy_features.json"
    ))
    .expect("fixture present");
    serde_json::from_str(&text).expect("fixture is JSON")
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

fn close(got: f64, want: f64, rel: f64, what: &str) {
    let tol = rel * want.abs().max(1e-12);
    assert!(
        (got - want).abs() <= tol,
        "{what}: got {got}, scipy {want} (tolerance {tol})"
    );
}

fn case<'a>(fx: &'a Value, name: &str) -> &'a Value {
    fx["fits"]
        .as_array()
        .expect("fits")
        .iter()
        .find(|c| c["name"] == name)
        .expect("case present")
}

/// Fit a fixture case with the given components; compare every component
/// with curve_fit's parameters, errors and propagated flux errors.
fn check_case(name: &str, comps: &[Component]) {
    let fx = fixture();
    let c = case(&fx, name);
    let x = floats(&c["x"]);
    let y = floats(&c["y"]);
    let s = floats(&c["sigma"]);
    let n = x.len();
    let mask = vec![true; n];
    let zero = vec![0.0; n];
    let data = Pixels {
        wave: &x,
        flux: &y,
        sigma: &s,
        mask: &mask,
        continuum: &zero,
    };
    let r = fit_gaussians(&data, 0..n, comps, &FitOptions::default()).expect("fit succeeds");
    assert!(r.converged, "{name}: converged");
    // Same reference wavelength of the linear offset as the script.
    close(r.x0, c["x0"].as_f64().unwrap(), 1e-12, "x0");
    // zsift stops when a step gains under 1e-3 in chi-square (see
    // `fit_gaussians`), so its minimum lies at most that far above scipy's.
    let (got, want) = (r.chi2, c["chi2"].as_f64().unwrap());
    assert!(
        got >= want - 1e-6 * want && got - want <= 1e-3,
        "chi2: got {got}, scipy {want}"
    );
    assert_eq!(r.dof as u64, c["dof"].as_u64().unwrap());
    // Offset and slope can be near zero: compare what they change in the
    // model across the window, against the noise.
    let half_span = 0.5 * (x[n - 1] - x[0]);
    let noise = s.iter().sum::<f64>() / n as f64;
    let d_off = (r.offset - c["offset"].as_f64().unwrap()).abs();
    let d_slope = (r.slope - c["slope"].as_f64().unwrap()).abs() * half_span;
    assert!(d_off < 1e-4 * noise, "{name}: offset differs by {d_off}");
    assert!(
        d_slope < 1e-4 * noise,
        "{name}: slope differs by {d_slope} over the window"
    );
    for (k, want) in c["components"].as_array().unwrap().iter().enumerate() {
        let got = r.components[k];
        let f = |key: &str| want[key].as_f64().unwrap();
        // Parameters: the two minimisers stop at slightly different points
        // of the same minimum; agree to a hundredth of the 1-sigma error
        // (zsift's stop: within a few hundredths of an error, see above).
        let within = |g: f64, key: &str| {
            let (w, e) = (f(key), f(&format!("{key}_err")));
            assert!(
                (g - w).abs() < 1e-2 * e,
                "{name} {key}: got {g}, scipy {w}, error {e}"
            );
        };
        within(got.centre, "centre");
        within(got.sigma, "sigma");
        within(got.amplitude, "amplitude");
        within(got.flux, "flux");
        // Errors: covariance scaled by the reduced chi-square, as curve_fit
        // with absolute_sigma=False.
        close(got.centre_err, f("centre_err"), 1e-3, "centre_err");
        close(got.sigma_err, f("sigma_err"), 1e-3, "sigma_err");
        close(got.amplitude_err, f("amplitude_err"), 1e-3, "amplitude_err");
        close(got.flux_err, f("flux_err"), 1e-3, "flux_err");
    }
}

#[test]
fn a_single_emission_line_fit_matches_scipy_curve_fit() {
    check_case("emission", &[Component::free(6562.0, 3.0, 4.0)]);
}

#[test]
fn an_absorption_line_with_varying_errors_matches_scipy_curve_fit() {
    check_case("absorption", &[Component::free(5891.0, 2.5, -1.0)]);
}

#[test]
fn a_blend_of_two_gaussians_matches_scipy_curve_fit() {
    check_case(
        "blend",
        &[
            Component::free(4854.0, 2.5, 2.5),
            Component::free(4863.5, 2.5, 1.5),
        ],
    );
}

#[test]
fn a_doublet_with_tied_velocity_width_and_flux_ratio_matches_scipy_curve_fit() {
    let fx = fixture();
    let c = case(&fx, "doublet");
    let r = c["wavelength_ratio"].as_f64().unwrap();
    let ratio = c["flux_ratio"].as_f64().unwrap();
    let comps = [
        Component::free(7451.5, 2.5, 1.5),
        Component {
            centre: 7451.5 * r,
            sigma: 2.5 * r,
            amplitude: 1.0,
            tie: Some(Tie {
                to: 0,
                wavelength_ratio: Some(r),
                same_velocity_width: true,
                flux_ratio: Some(ratio),
            }),
        },
    ];
    // The fixture lists only the free (first) component.
    check_case("doublet", &comps);
}

#[test]
fn peak_finder_matches_scipy_find_peaks_with_height_and_distance() {
    let fx = fixture();
    for p in fx["peaks"].as_array().unwrap() {
        let y = floats(&p["y"]);
        let h = p["height"].as_f64().unwrap();
        let d = p["distance"].as_u64().unwrap() as usize;
        let want: Vec<usize> = p["indices"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_u64().unwrap() as usize)
            .collect();
        assert_eq!(peaks(&y, h, d), want, "height {h}, distance {d}");
    }
}

#[test]
fn matched_filter_snr_and_its_peaks_match_the_numpy_reference() {
    let fx = fixture();
    let m = &fx["matched_filter"];
    let wave = floats(&m["wave"]);
    let flux = floats(&m["flux"]);
    let sigma = floats(&m["sigma"]);
    let cont = floats(&m["continuum"]);
    let mask: Vec<bool> = m["mask"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_bool().unwrap())
        .collect();
    let idx = |v: &Value| -> Vec<usize> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_u64().unwrap() as usize)
            .collect()
    };
    for w in m["widths"].as_array().unwrap() {
        let fwhm = w["fwhm_kms"].as_f64().unwrap();
        let want = floats(&w["snr"]);
        let got = matched_filter(&wave, &flux, &sigma, &mask, &cont, fwhm);
        for (i, (g, e)) in got.iter().zip(&want).enumerate() {
            assert!((g - e).abs() < 1e-9, "FWHM {fwhm}, pixel {i}: {g} vs {e}");
        }
        // Peak distance as in the script: the kernel sigma in pixels, rounded.
        let sp = fwhm / 2.354_820_045_030_949 / 50.0;
        let d = (sp.round() as usize).max(1);
        assert_eq!(peaks(&got, 4.0, d), idx(&w["emission_peaks"]));
        let neg: Vec<f64> = got.iter().map(|v| -v).collect();
        assert_eq!(peaks(&neg, 4.0, d), idx(&w["absorption_peaks"]));
    }
}
