//! Shared helpers of the `features_*` tests: a small seeded generator of
//! synthetic spectra with known truth (invented data, for synthetic-truth
//! tests only).
#![allow(dead_code)]

/// Speed of light, km/s (exact by definition of the metre; CODATA 2018).
pub const C_KMS: f64 = 299_792.458;

mod rng;
pub use rng::Rng;

/// A synthetic spectrum and what went into it.
#[derive(Debug, Clone)]
pub struct Synth {
    /// Vacuum wavelengths, Angstrom.
    pub wave: Vec<f64>,
    /// Noisy flux.
    pub flux: Vec<f64>,
    /// True 1-sigma noise.
    pub sigma: Vec<f64>,
    /// All true.
    pub mask: Vec<bool>,
    /// True continuum.
    pub continuum: Vec<f64>,
    /// Sky spectrum (flat plus the lines put in with `add_sky_line`).
    pub sky: Vec<f64>,
}

impl Synth {
    /// A linear grid of `n` pixels from `lo` to `hi` with continuum `cont(lambda)`
    /// and no noise yet.
    pub fn new(n: usize, lo: f64, hi: f64, cont: impl Fn(f64) -> f64) -> Synth {
        let wave: Vec<f64> = (0..n)
            .map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
            .collect();
        let continuum: Vec<f64> = wave.iter().map(|&w| cont(w)).collect();
        Synth {
            flux: continuum.clone(),
            sigma: vec![0.0; n],
            mask: vec![true; n],
            sky: vec![1.0; n],
            wave,
            continuum,
        }
    }

    /// The standard test grid: 4000 pixels, 3800-9200 A (1.35 A/pixel, about
    /// 60 km/s per pixel at 6500 A), a gently curved continuum around 10.
    pub fn standard() -> Synth {
        Synth::new(4000, 3800.0, 9200.0, |w| {
            let x = w / 6000.0;
            10.0 * x.powf(-0.8) * (1.0 + 0.05 * (x - 1.0))
        })
    }

    /// Add a Gaussian line of peak `amp` (flux units, negative for absorption)
    /// and FWHM `fwhm_kms` at `centre`.
    pub fn add_line(&mut self, centre: f64, fwhm_kms: f64, amp: f64) {
        let s = fwhm_kms / 2.354_820_045 / C_KMS * centre;
        for (f, &w) in self.flux.iter_mut().zip(&self.wave) {
            let z = (w - centre) / s;
            if z.abs() < 10.0 {
                *f += amp * (-0.5 * z * z).exp();
            }
        }
    }

    /// Gaussian sigma in Angstrom of a FWHM in km/s at `centre`.
    pub fn sigma_a(centre: f64, fwhm_kms: f64) -> f64 {
        fwhm_kms / 2.354_820_045 / C_KMS * centre
    }

    /// Add white Gaussian noise with sigma = continuum / `snr` per pixel.
    pub fn add_noise(&mut self, snr: f64, rng: &mut Rng) {
        for i in 0..self.wave.len() {
            let s = self.continuum[i] / snr;
            self.sigma[i] = s;
            self.flux[i] += s * rng.normal();
        }
    }

    /// Add a bright sky line to the sky spectrum (peak `amp` over a flat 1).
    pub fn add_sky_line(&mut self, centre: f64, fwhm_kms: f64, amp: f64) {
        let s = fwhm_kms / 2.354_820_045 / C_KMS * centre;
        for (k, &w) in self.sky.iter_mut().zip(&self.wave) {
            let z = (w - centre) / s;
            *k += amp * (-0.5 * z * z).exp();
        }
    }

    /// Pixel index nearest to `lambda`.
    pub fn index_of(&self, lambda: f64) -> usize {
        self.wave
            .partition_point(|&w| w < lambda)
            .min(self.wave.len() - 1)
    }
}
