mod features_common;
use features_common::*;
use zsift::identify::{continuum, detect, noise};

#[test]
fn explore() {
    let mut rng = Rng::new(7);
    let mut s = Synth::standard();
    s.add_line(5000.0, 200.0, 8.0);
    s.add_line(6000.0, 200.0, -4.0);
    s.add_line(7000.0, 6000.0, 5.0);
    s.add_line(6563.0, 150.0, 3.0);
    s.add_line(6583.0, 150.0, 1.5);
    s.add_noise(10.0, &mut rng);
    let i = s.index_of(8000.0);
    s.flux[i] += 20.0;
    let (sig, nz) = noise::estimate(&s.flux, None, &s.mask);
    println!(
        "noise {:?} sig[0]={} true={} sig[3999]={} true={}",
        nz, sig[0], s.sigma[0], sig[3999], s.sigma[3999]
    );
    let (_, nz2) = noise::estimate(&s.flux, Some(&s.sigma), &s.mask);
    println!("ratio {:?}", nz2.error_ratio);
    let c = continuum::fit(&s.wave, &s.flux, &sig, &s.mask, &Default::default());
    for w in (0..40).map(|k| 6500.0 + 25.0 * k as f64) {
        let k = s.index_of(w);
        println!("cont {w}: {:.3} true {:.3}", c[k], s.continuum[k]);
    }
    let f = detect::find(&s.wave, &s.flux, &sig, &s.mask, &c, &Default::default());
    for x in &f {
        println!(
            "{:.2} ±{:.3} {:?} snr {:.1} fwhm {:.0} amp {:.2} ew {:.2} {:?}",
            x.wavelength, x.wavelength_err, x.kind, x.snr, x.fwhm_kms, x.amplitude, x.ew, x.flag
        );
    }
}

fn cont_err(settings: &continuum::ContinuumSettings, lines: bool) -> (f64, f64) {
    let mut tot = 0.0;
    let mut bias = 0.0;
    let mut k = 0.0;
    for seed in 0..20 {
        let mut rng = Rng::new(seed);
        let mut s = Synth::standard();
        if lines {
            s.add_line(7000.0, 6000.0, 5.0);
            s.add_line(5000.0, 300.0, 8.0);
        }
        s.add_noise(10.0, &mut rng);
        let c = continuum::fit(&s.wave, &s.flux, &s.sigma, &s.mask, settings);
        for i in 0..s.wave.len() {
            let d = (c[i] - s.continuum[i]) / s.sigma[i];
            tot += d * d;
            bias += d;
            k += 1.0;
        }
    }
    ((tot / k).sqrt(), bias / k)
}

#[test]
fn explore_cont() {
    let base = continuum::ContinuumSettings::default();
    for (name, st) in [
        ("default", base.clone()),
        (
            "nosmooth",
            continuum::ContinuumSettings {
                smooth_half_pixels: 0,
                ..base.clone()
            },
        ),
        (
            "noclip",
            continuum::ContinuumSettings {
                iterations: 1,
                ..base.clone()
            },
        ),
        (
            "noadapt",
            continuum::ContinuumSettings {
                adaptive: false,
                ..base.clone()
            },
        ),
        (
            "block750",
            continuum::ContinuumSettings {
                block_kms: 750.0,
                ..base.clone()
            },
        ),
        (
            "win12000",
            continuum::ContinuumSettings {
                window_kms: 12000.0,
                ..base.clone()
            },
        ),
    ] {
        println!(
            "{name}: flat {:?} lines {:?}",
            cont_err(&st, false),
            cont_err(&st, true)
        );
    }
}
