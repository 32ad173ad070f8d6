//! Synthetic-truth checks of noise, continuum, detection, fits and flags:
//! seeded spectra from the small generator in `features_common` (invented
//! data; the generator's truth is the check).

mod features_common;

use features_common::{C_KMS, Rng, Synth};
use zsift::identify::continuum::{self, ContinuumSettings};
use zsift::identify::detect::{self, DetectSettings};
use zsift::identify::{Feature, FeatureFlag, FeatureKind, noise};
use zsift::lines::{Catalogue, Foreground, ForegroundKind};

/// Noise, continuum and detection with default settings, as the identifier
/// runs them.
fn analyse(s: &Synth, with_sigma: bool) -> (Vec<f64>, Vec<f64>, Vec<Feature>) {
    let file = with_sigma.then_some(&s.sigma[..]);
    let (sig, _) = noise::estimate(&s.flux, file, &s.mask);
    let c = continuum::fit(
        &s.wave,
        &s.flux,
        &sig,
        &s.mask,
        &ContinuumSettings::default(),
    );
    let f = detect::find(
        &s.wave,
        &s.flux,
        &sig,
        &s.mask,
        &c,
        &DetectSettings::default(),
    );
    (sig, c, f)
}

/// Peak amplitude giving a line of matched-filter S/N `snr` (white noise
/// `sigma` per pixel, pixel width `dl`, line Gaussian sigma `sa` Angstrom):
/// S/N = A / sigma * sqrt(sqrt(pi) * sa / dl).
fn amplitude_for_snr(snr: f64, sigma: f64, sa: f64, dl: f64) -> f64 {
    snr * sigma / (std::f64::consts::PI.sqrt() * sa / dl).sqrt()
}

/// The resolution the detector assumes on the standard grid, km/s.
fn standard_resolution() -> f64 {
    detect::pixel_resolution_kms(&Synth::standard().wave)
}

#[test]
fn robust_noise_follows_the_true_sigma_along_the_spectrum() {
    let mut rng = Rng::new(1);
    let mut s = Synth::standard();
    // Noise rising by 3x from blue to red (continuum S/N falls).
    for i in 0..s.wave.len() {
        let snr = 30.0 - 20.0 * i as f64 / s.wave.len() as f64;
        s.sigma[i] = s.continuum[i] / snr;
        s.flux[i] += s.sigma[i] * rng.normal();
    }
    let (sig, n) = noise::estimate(&s.flux, None, &s.mask);
    assert!(n.estimated && n.error_ratio.is_none());
    // Compare in 8 stretches: within 12 % locally (a window of 200 pixels
    // has a MAD error of about 6 %).
    for k in 0..8 {
        let r = k * 500..(k + 1) * 500;
        let est: f64 = sig[r.clone()].iter().sum::<f64>() / 500.0;
        let tru: f64 = s.sigma[r.clone()].iter().sum::<f64>() / 500.0;
        assert!(
            (est / tru - 1.0).abs() < 0.12,
            "stretch {k}: {est} vs {tru}"
        );
    }
}

#[test]
fn error_ratio_is_one_for_right_errors_and_two_for_errors_halved() {
    let mut rng = Rng::new(2);
    let mut s = Synth::standard();
    s.add_noise(15.0, &mut rng);
    let (_, ok) = noise::estimate(&s.flux, Some(&s.sigma), &s.mask);
    let r = ok.error_ratio.expect("ratio");
    // The MAD of 4,000 differences scatters by about 3 % (seen over seeds).
    assert!((r - 1.0).abs() < 0.08, "ratio {r}");
    assert!(!noise::ratio_is_suspect(r));
    let halved: Vec<f64> = s.sigma.iter().map(|v| 0.5 * v).collect();
    let (used, bad) = noise::estimate(&s.flux, Some(&halved), &s.mask);
    let r = bad.error_ratio.expect("ratio");
    assert!((r - 2.0).abs() < 0.16, "ratio {r}");
    assert!(noise::ratio_is_suspect(r));
    // The file's own errors are kept (the ratio is reported, not applied).
    assert_eq!(used, halved);
}

#[test]
fn median_snr_is_the_continuum_over_sigma() {
    let mut rng = Rng::new(3);
    let mut s = Synth::standard();
    s.add_noise(12.0, &mut rng);
    let (sig, c, _) = analyse(&s, true);
    let m = noise::median_snr(&c, &sig, &s.mask);
    assert!((m - 12.0).abs() < 0.3, "median S/N {m}");
}

#[test]
fn continuum_is_not_pulled_by_narrow_emission_and_absorption_lines() {
    let mut rng = Rng::new(4);
    let mut s = Synth::standard();
    let res = standard_resolution();
    for k in 0..30 {
        let c = 4000.0 + 170.0 * k as f64;
        let amp = if k % 2 == 0 { 6.0 } else { -4.0 };
        s.add_line(c, 1.5 * res, amp);
    }
    s.add_noise(20.0, &mut rng);
    let (_, c, _) = analyse(&s, true);
    let worst = (0..s.wave.len())
        .map(|i| (c[i] / s.continuum[i] - 1.0).abs())
        .fold(0.0, f64::max);
    // Per-pixel noise is 5 %; a 10,000 km/s window averages ~150 pixels.
    assert!(worst < 0.02, "worst relative continuum error {worst}");
}

#[test]
fn continuum_stays_under_a_broad_quasar_line() {
    let mut rng = Rng::new(5);
    let mut s = Synth::standard();
    // A 9,000 km/s FWHM line with a peak 80 % above the continuum.
    s.add_line(6200.0, 9000.0, 0.8 * 9.7);
    s.add_noise(15.0, &mut rng);
    let (_, c, f) = analyse(&s, true);
    let i = s.index_of(6200.0);
    let err = c[i] / s.continuum[i] - 1.0;
    assert!(
        err.abs() < 0.05,
        "continuum at the line centre off by {err}"
    );
    // And the line is found and measured as broad.
    let line = f
        .iter()
        .find(|x| (x.wavelength - 6200.0).abs() < 40.0)
        .expect("broad line found");
    assert!(
        (line.fwhm_kms / 9000.0 - 1.0).abs() < 0.2,
        "FWHM {} km/s",
        line.fwhm_kms
    );
}

#[test]
fn excluded_intervals_do_not_shape_the_continuum() {
    let mut rng = Rng::new(6);
    let mut s = Synth::standard();
    // A wide, low bump that clipping alone would partly follow.
    s.add_line(7000.0, 12_000.0, 1.0);
    s.add_noise(10.0, &mut rng);
    let (sig, _) = noise::estimate(&s.flux, Some(&s.sigma), &s.mask);
    let st = ContinuumSettings {
        exclude: vec![(6700.0, 7300.0)],
        ..ContinuumSettings::default()
    };
    let c = continuum::fit(&s.wave, &s.flux, &sig, &s.mask, &st);
    let i = s.index_of(7000.0);
    assert!(
        (c[i] / s.continuum[i] - 1.0).abs() < 0.05,
        "{} vs {}",
        c[i],
        s.continuum[i]
    );
}

/// Put `per` isolated lines of matched-filter S/N `snr` in each of `seeds`
/// spectra; count how many are found (within 3 centre errors + 1 pixel, the
/// right kind, not flagged) and the unmatched unflagged features.
fn completeness(snr: f64, per: usize, seeds: u64, absorption: bool) -> (usize, usize, usize) {
    let res = standard_resolution();
    let (mut found, mut total, mut extra) = (0, 0, 0);
    for seed in 0..seeds {
        let mut rng = Rng::new(1000 + seed);
        let mut s = Synth::standard();
        let dl = s.wave[1] - s.wave[0];
        let mut truth = Vec::new();
        for k in 0..per {
            let c = 4100.0 + (4800.0 / per as f64) * (k as f64 + 0.3 * rng.uniform());
            let sa = Synth::sigma_a(c, res);
            let i = s.index_of(c);
            let sigma = s.continuum[i] / 10.0;
            let a = amplitude_for_snr(snr, sigma, sa, dl);
            s.add_line(c, res, if absorption { -a } else { a });
            truth.push(c);
        }
        s.add_noise(10.0, &mut rng);
        let (_, _, f) = analyse(&s, true);
        let kind = if absorption {
            FeatureKind::Absorption
        } else {
            FeatureKind::Emission
        };
        let mut used = vec![false; f.len()];
        for &c in &truth {
            total += 1;
            let hit = f.iter().enumerate().position(|(j, x)| {
                !used[j]
                    && x.flag.is_none()
                    && x.kind == kind
                    && (x.wavelength - c).abs() < 3.0 * x.wavelength_err + dl
            });
            if let Some(j) = hit {
                used[j] = true;
                found += 1;
            }
        }
        extra += f
            .iter()
            .zip(&used)
            .filter(|(x, u)| !**u && x.flag.is_none())
            .count();
    }
    (found, total, extra)
}

#[test]
fn detection_completeness_rises_with_snr_as_the_threshold_implies() {
    // Threshold 5 (matched-filter S/N): a line of true S/N 7 is found most
    // of the time, S/N 10 and 20 nearly always; S/N 3 rarely.
    println!("kind        S/N  found/total  completeness  spurious/spectrum");
    let mut rows = Vec::new();
    for absorption in [false, true] {
        for snr in [3.0, 5.0, 7.0, 10.0, 20.0] {
            let (found, total, extra) = completeness(snr, 10, 6, absorption);
            let frac = found as f64 / total as f64;
            println!(
                "{:10} {snr:4}  {found:3}/{total:3}      {:5.1} %       {:.2}",
                if absorption { "absorption" } else { "emission" },
                100.0 * frac,
                extra as f64 / 6.0
            );
            rows.push((absorption, snr, frac));
        }
    }
    for (absorption, snr, frac) in rows {
        let kind = if absorption { "absorption" } else { "emission" };
        if snr <= 3.0 {
            assert!(frac < 0.35, "{kind} S/N {snr}: {frac}");
        }
        if snr >= 7.0 {
            assert!(frac >= 0.75, "{kind} S/N {snr}: {frac}");
        }
        if snr >= 10.0 {
            assert!(frac >= 0.95, "{kind} S/N {snr}: {frac}");
        }
    }
}

#[test]
fn pure_noise_spectra_give_almost_no_detections() {
    let mut spurious = 0;
    let spectra = 20;
    for seed in 0..spectra {
        let mut rng = Rng::new(5000 + seed);
        let mut s = Synth::standard();
        s.add_noise(8.0, &mut rng);
        let (_, _, f) = analyse(&s, true);
        spurious += f.iter().filter(|x| x.flag.is_none()).count();
    }
    println!("spurious features: {spurious} in {spectra} noise-only spectra");
    assert!(
        spurious as f64 / spectra as f64 <= 0.25,
        "{spurious} spurious features in {spectra} spectra"
    );
}

#[test]
fn centre_errors_are_honest_the_pull_distribution_has_unit_width() {
    let res = standard_resolution();
    let mut pulls = Vec::new();
    for seed in 0..12 {
        let mut rng = Rng::new(7000 + seed);
        let mut s = Synth::standard();
        let dl = s.wave[1] - s.wave[0];
        let mut truth = Vec::new();
        for k in 0..8 {
            let c = 4200.0 + 600.0 * k as f64 + 3.0 * rng.uniform();
            let sa = Synth::sigma_a(c, 1.3 * res);
            let sigma = s.continuum[s.index_of(c)] / 12.0;
            s.add_line(c, 1.3 * res, amplitude_for_snr(20.0, sigma, sa, dl));
            truth.push(c);
        }
        s.add_noise(12.0, &mut rng);
        let (_, _, f) = analyse(&s, true);
        for &c in &truth {
            if let Some(x) = f
                .iter()
                .find(|x| x.flag.is_none() && (x.wavelength - c).abs() < 3.0)
            {
                pulls.push((x.wavelength - c) / x.wavelength_err);
            }
        }
    }
    let n = pulls.len() as f64;
    assert!(n >= 90.0, "only {n} of 96 lines found");
    let mean = pulls.iter().sum::<f64>() / n;
    let sd = (pulls.iter().map(|p| (p - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    println!("pulls: n {n}, mean {mean:.3}, sd {sd:.3}");
    assert!(mean.abs() < 0.3, "mean pull {mean}");
    assert!(sd > 0.75 && sd < 1.3, "pull sd {sd}");
}

#[test]
fn single_pixel_cosmic_rays_are_flagged_as_spikes_and_real_lines_are_not() {
    let res = standard_resolution();
    let mut rng = Rng::new(8);
    let mut s = Synth::standard();
    let lines = [4500.0, 5500.0, 6500.0, 7500.0];
    for &c in &lines {
        s.add_line(c, 1.3 * res, 12.0);
    }
    s.add_noise(10.0, &mut rng);
    let mut rays = Vec::new();
    for k in 0..10 {
        let i = 150 + 370 * k + 7;
        s.flux[i] += 25.0 * s.sigma[i];
        rays.push(s.wave[i]);
    }
    // A two-pixel hit too.
    let i = 3900;
    s.flux[i] += 20.0 * s.sigma[i];
    s.flux[i + 1] += 18.0 * s.sigma[i + 1];
    rays.push(0.5 * (s.wave[i] + s.wave[i + 1]));
    let (_, _, f) = analyse(&s, true);
    for &r in &rays {
        let near: Vec<&Feature> = f
            .iter()
            .filter(|x| (x.wavelength - r).abs() < 3.0)
            .collect();
        assert!(!near.is_empty(), "ray at {r} not reported");
        assert!(
            near.iter().all(|x| x.flag == Some(FeatureFlag::Spike)),
            "ray at {r}: {near:?}"
        );
    }
    for &c in &lines {
        let x = f
            .iter()
            .find(|x| (x.wavelength - c).abs() < 2.0)
            .unwrap_or_else(|| panic!("real line at {c} not found in {f:?}"));
        assert_eq!(x.flag, None, "real line at {c} flagged");
    }
}

/// A hand-built foreground list (invented positions for this test only).
fn foreground() -> Catalogue {
    Catalogue {
        foreground: vec![
            Foreground {
                name: "test sky line".into(),
                kind: ForegroundKind::Sky,
                lo: 5578.5,
                hi: 5578.5,
                strength: 1.0,
            },
            Foreground {
                name: "test telluric band".into(),
                kind: ForegroundKind::Telluric,
                lo: 7595.0,
                hi: 7700.0,
                strength: 1.0,
            },
        ],
        ..Catalogue::default()
    }
}

#[test]
fn residuals_at_sky_lines_and_absorption_in_telluric_bands_are_flagged() {
    let res = standard_resolution();
    let mut rng = Rng::new(9);
    let mut s = Synth::standard();
    s.add_line(5578.5, res, 6.0); // sky residual (emission)
    s.add_line(7650.0, 1.5 * res, -4.0); // telluric absorption
    s.add_line(7650.0 - 400.0, 1.5 * res, -4.0); // real absorption
    s.add_line(6100.0, 1.5 * res, 5.0); // real emission
    s.add_noise(12.0, &mut rng);
    let (_, _, mut f) = analyse(&s, true);
    detect::flag_foreground(&mut f, &foreground(), res);
    let at = |w: f64| {
        f.iter()
            .find(|x| (x.wavelength - w).abs() < 3.0)
            .unwrap_or_else(|| panic!("feature at {w} found"))
    };
    assert_eq!(at(5578.5).flag, Some(FeatureFlag::Sky));
    assert_eq!(at(7650.0).flag, Some(FeatureFlag::Telluric));
    assert_eq!(at(7250.0).flag, None);
    assert_eq!(at(6100.0).flag, None);
}

#[test]
fn a_feature_where_the_files_sky_spectrum_peaks_is_flagged_as_sky() {
    let res = standard_resolution();
    let mut rng = Rng::new(10);
    let mut s = Synth::standard();
    s.add_sky_line(6301.0, res, 40.0);
    s.add_line(6301.0, res, 5.0); // residual of that sky line
    s.add_line(6800.0, res, 5.0); // real, where the sky is flat
    s.add_noise(12.0, &mut rng);
    let (_, _, mut f) = analyse(&s, true);
    detect::flag_sky_spectrum(&mut f, &s.wave, &s.sky, &s.mask, res);
    let at = |w: f64| {
        f.iter()
            .find(|x| (x.wavelength - w).abs() < 3.0)
            .expect("found")
    };
    assert_eq!(at(6301.0).flag, Some(FeatureFlag::Sky));
    assert_eq!(at(6800.0).flag, None);
}

#[test]
fn blended_neighbours_are_both_found_and_fitted_together() {
    let res = standard_resolution();
    let mut rng = Rng::new(11);
    let mut s = Synth::standard();
    // Two lines 3.3 Gaussian sigmas (1.4 FWHM) apart.
    let sa = Synth::sigma_a(6000.0, 2.0 * res);
    let (c1, c2) = (6000.0, 6000.0 + 3.3 * sa);
    s.add_line(c1, 2.0 * res, 6.0);
    s.add_line(c2, 2.0 * res, 4.0);
    s.add_noise(20.0, &mut rng);
    let (_, _, f) = analyse(&s, true);
    for c in [c1, c2] {
        let x = f
            .iter()
            .filter(|x| x.flag.is_none())
            .min_by(|a, b| {
                (a.wavelength - c)
                    .abs()
                    .total_cmp(&(b.wavelength - c).abs())
            })
            .expect("features");
        assert!(
            (x.wavelength - c).abs() < 4.0 * x.wavelength_err,
            "line at {c}: nearest {} +- {}",
            x.wavelength,
            x.wavelength_err
        );
    }
}

#[test]
fn fitted_flux_and_equivalent_width_match_the_truth_with_the_sign_convention() {
    let res = standard_resolution();
    let mut rng = Rng::new(12);
    let mut s = Synth::standard();
    let (ce, ca) = (5200.0, 6600.0);
    let fwhm = 2.0 * res;
    s.add_line(ce, fwhm, 8.0);
    s.add_line(ca, fwhm, -3.0);
    s.add_noise(40.0, &mut rng);
    let (_, _, f) = analyse(&s, true);
    for (c, amp) in [(ce, 8.0), (ca, -3.0)] {
        let x = f
            .iter()
            .find(|x| (x.wavelength - c).abs() < 2.0)
            .expect("found");
        let flux = amp * Synth::sigma_a(c, fwhm) * (2.0 * std::f64::consts::PI).sqrt();
        let cont = s.continuum[s.index_of(c)];
        assert!(
            (x.flux - flux).abs() < 3.0 * x.flux_err + 0.02 * flux.abs(),
            "flux {} +- {} vs {flux}",
            x.flux,
            x.flux_err
        );
        // EW = integral of (1 - F/Fc): negative for emission.
        let ew = -flux / cont;
        assert_eq!(x.ew.signum(), ew.signum());
        assert!((x.ew / ew - 1.0).abs() < 0.15, "EW {} vs {ew}", x.ew);
        assert!((x.fwhm_kms / fwhm - 1.0).abs() < 0.2, "FWHM {}", x.fwhm_kms);
        let kind = if amp > 0.0 {
            FeatureKind::Emission
        } else {
            FeatureKind::Absorption
        };
        assert_eq!(x.kind, kind);
    }
    let _ = C_KMS;
}

#[test]
fn garbage_input_never_panics_and_gives_finite_features() {
    let mut rng = Rng::new(13);
    for case in 0..60 {
        let n = 5 + (rng.uniform() * 600.0) as usize;
        let mut wave: Vec<f64> = Vec::with_capacity(n);
        let mut w = 3000.0 + 5000.0 * rng.uniform();
        for _ in 0..n {
            w += 0.01 + 5.0 * rng.uniform();
            wave.push(w);
        }
        let pick = |rng: &mut Rng| -> f64 {
            match (rng.uniform() * 10.0) as u32 {
                0 => f64::NAN,
                1 => f64::INFINITY,
                2 => 0.0,
                3 => -1.0,
                _ => 1.0 + rng.normal(),
            }
        };
        let flux: Vec<f64> = (0..n)
            .map(|_| if case % 3 == 0 { 1.0 } else { pick(&mut rng) })
            .collect();
        let sigma: Vec<f64> = (0..n).map(|_| pick(&mut rng)).collect();
        let mask: Vec<bool> = (0..n).map(|_| rng.uniform() > 0.2).collect();
        let given = (case % 2 == 0).then_some(&sigma[..]);
        let (sig, _) = noise::estimate(&flux, given, &mask);
        assert!(sig.iter().all(|v| v.is_finite() && *v > 0.0), "case {case}");
        let c = continuum::fit(&wave, &flux, &sig, &mask, &ContinuumSettings::default());
        assert!(c.iter().all(|v| v.is_finite()), "case {case}");
        let f = detect::find(&wave, &flux, &sig, &mask, &c, &DetectSettings::default());
        for x in &f {
            assert!(
                x.wavelength.is_finite() && x.snr.is_finite(),
                "case {case}: {x:?}"
            );
        }
    }
}
