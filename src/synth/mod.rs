//! Seeded synthetic spectra with known truth, for tests, benchmarks and the demo.
//!
//! [`generate`] turns a [`SynthSpec`] (what kind of object, at what redshift,
//! seen through which [`Instrument`], at what S/N, with which [`Nuisances`])
//! and a seed into a [`Synthetic`]: the [`Spectrum`] a reader would return and
//! the [`Truth`] that went into it (class, subclass, redshift or velocity, every
//! line placed with its observed wavelength and flux, every nuisance placed).
//! The same spec and seed always give the same spectrum, bit for bit.
//!
//! How a spectrum is made (see `model.rs`): the object is built on a fine
//! log-wavelength grid in the observed frame (continuum shape, absorption lines
//! and molecular bands as multiplicative factors, emission lines added, the
//! Lyman-alpha forest as optical depth), multiplied by the telluric
//! transmission, convolved with the instrument's Gaussian line-spread function
//! (constant resolving power R is a constant width in log wavelength), and
//! integrated over the output pixels. Flux-calibration ripples, sky-subtraction
//! residuals, noise from object and sky, and cosmic-ray spikes (absent from the
//! error array) are added on the output grid.
//!
//! Wavelengths: the generator works in vacuum. An instrument may sample its
//! pixels on a grid that is linear (or logarithmic) in *air* wavelength; the
//! [`Spectrum`] then still holds the vacuum wavelengths of those pixels, and
//! [`write`] can write the file in air (WCS `AWAV`, or air values in text).
//!
//! [`write`] holds the file writers (FITS image, 2-D image, binary table,
//! CSV/TSV/whitespace text), [`demo`] the bundled demo night.
pub mod demo;
mod fits;
mod model;
pub mod restlines;
pub mod rng;
pub mod set;
pub mod write;
use crate::lines::{LineKind, ObjectClass};
use crate::spectrum::{Medium, Metadata, Spectrum};
use serde::{Deserialize, Serialize};

/// What kind of object to make. Each maps to one [`ObjectClass`] and a
/// subclass name ([`Kind::subclass`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Kind {
    /// Hot star (about 8,000-15,000 K): strong, broad Balmer absorption, a Balmer jump.
    EarlyStar,
    /// Solar-like star (about 4,800-6,500 K): Ca II H and K, G band, Mg b, Na D, metal lines.
    SolarStar,
    /// Cool M-type star (about 3,000-3,900 K): TiO / CaH / VO band heads, Na D, K I.
    CoolStar,
    /// Star-forming emission-line galaxy (below the Kauffmann et al. 2003 line).
    StarFormingGalaxy,
    /// AGN-like narrow-line galaxy (above the Kewley et al. 2001 line).
    AgnGalaxy,
    /// Old-population absorption-line galaxy: 4000 A break, Ca II H and K, G band, Mg b, Na D.
    PassiveGalaxy,
    /// Broad-line quasar: power law, broad lines, Lyman-alpha forest at high z.
    Quasar,
    /// Smooth continuum without lines (flat or a smooth shape).
    JunkSmooth,
    /// Noise only (no source in the slit).
    JunkNoise,
    /// Smooth continuum with strong flux-calibration ripples.
    JunkWiggles,
}

impl Kind {
    /// Every kind, in a fixed order.
    pub const ALL: [Kind; 10] = [
        Kind::EarlyStar,
        Kind::SolarStar,
        Kind::CoolStar,
        Kind::StarFormingGalaxy,
        Kind::AgnGalaxy,
        Kind::PassiveGalaxy,
        Kind::Quasar,
        Kind::JunkSmooth,
        Kind::JunkNoise,
        Kind::JunkWiggles,
    ];

    /// The object class an identifier should report.
    pub fn class(self) -> ObjectClass {
        match self {
            Kind::EarlyStar | Kind::SolarStar | Kind::CoolStar => ObjectClass::Star,
            Kind::StarFormingGalaxy | Kind::AgnGalaxy | Kind::PassiveGalaxy => ObjectClass::Galaxy,
            Kind::Quasar => ObjectClass::Qso,
            Kind::JunkSmooth | Kind::JunkNoise | Kind::JunkWiggles => ObjectClass::Unknown,
        }
    }

    /// Subclass name recorded in the truth: `early`, `solar`, `cool`,
    /// `star-forming`, `agn`, `passive`, `broad-line`, `smooth`, `noise`, `wiggles`.
    pub fn subclass(self) -> &'static str {
        match self {
            Kind::EarlyStar => "early",
            Kind::SolarStar => "solar",
            Kind::CoolStar => "cool",
            Kind::StarFormingGalaxy => "star-forming",
            Kind::AgnGalaxy => "agn",
            Kind::PassiveGalaxy => "passive",
            Kind::Quasar => "broad-line",
            Kind::JunkSmooth => "smooth",
            Kind::JunkNoise => "noise",
            Kind::JunkWiggles => "wiggles",
        }
    }

    /// A short name for tables (`star-early`, `galaxy-sf`, ...).
    pub fn label(self) -> &'static str {
        match self {
            Kind::EarlyStar => "star-early",
            Kind::SolarStar => "star-solar",
            Kind::CoolStar => "star-cool",
            Kind::StarFormingGalaxy => "galaxy-sf",
            Kind::AgnGalaxy => "galaxy-agn",
            Kind::PassiveGalaxy => "galaxy-passive",
            Kind::Quasar => "qso",
            Kind::JunkSmooth => "junk-smooth",
            Kind::JunkNoise => "junk-noise",
            Kind::JunkWiggles => "junk-wiggles",
        }
    }

    /// Redshift range this kind is drawn from by [`SynthSpec::random`]
    /// (stars: the z of +-500 km/s).
    pub fn z_range(self) -> (f64, f64) {
        match self.class() {
            ObjectClass::Star => (z_from_velocity(-500.0), z_from_velocity(500.0)),
            ObjectClass::Galaxy if self == Kind::PassiveGalaxy => (0.005, 0.8),
            ObjectClass::Galaxy => (0.005, 1.5),
            ObjectClass::Qso => (0.2, 4.0),
            ObjectClass::Unknown => (0.0, 0.0),
        }
    }
}

/// How pixels are spaced.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Sampling {
    /// Constant step in Angstrom.
    Linear {
        /// Pixel step, Angstrom.
        step: f64,
    },
    /// Constant step in log10(wavelength).
    Log10 {
        /// Pixel step in log10(wavelength / Angstrom).
        dlog10: f64,
    },
}

/// A spectrograph set-up: coverage, resolving power, sampling and the medium
/// in which its pixel grid is regular.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Instrument {
    /// Name (invented), e.g. `KESTREL blue-red`.
    pub name: String,
    /// First pixel's wavelength (in `medium`), Angstrom.
    pub lo: f64,
    /// Upper end of coverage (in `medium`), Angstrom.
    pub hi: f64,
    /// Resolving power R = lambda / FWHM of the line-spread function.
    pub resolution: f64,
    /// Pixel spacing.
    pub sampling: Sampling,
    /// Medium in which the grid is regular (and in which files are written by default).
    pub medium: Medium,
}

impl Instrument {
    /// 3600-9800 A at R ~ 2000, 1.5 A pixels, vacuum grid.
    pub fn wide() -> Instrument {
        Instrument {
            name: "KESTREL wide".into(),
            lo: 3600.0,
            hi: 9800.0,
            resolution: 2000.0,
            sampling: Sampling::Linear { step: 1.5 },
            medium: Medium::Vacuum,
        }
    }

    /// 3800-7200 A at R ~ 1000, 2.5 A pixels, air grid.
    pub fn low_res() -> Instrument {
        Instrument {
            name: "KESTREL low".into(),
            lo: 3800.0,
            hi: 7200.0,
            resolution: 1000.0,
            sampling: Sampling::Linear { step: 2.5 },
            medium: Medium::Air,
        }
    }

    /// 4500-9000 A at R ~ 3000, 1.0 A pixels, air grid.
    pub fn high_res() -> Instrument {
        Instrument {
            name: "KESTREL fine".into(),
            lo: 4500.0,
            hi: 9000.0,
            resolution: 3000.0,
            sampling: Sampling::Linear { step: 1.0 },
            medium: Medium::Air,
        }
    }

    /// 5000-10000 A at R ~ 2000, log-lambda pixels of 1e-4 dex (69 km/s), vacuum.
    pub fn red_log() -> Instrument {
        Instrument {
            name: "KESTREL red".into(),
            lo: 5000.0,
            hi: 10000.0,
            resolution: 2000.0,
            sampling: Sampling::Log10 { dlog10: 1.0e-4 },
            medium: Medium::Vacuum,
        }
    }

    /// 3700-9300 A at R ~ 1500, log-lambda pixels of 1.5e-4 dex, vacuum.
    pub fn survey_log() -> Instrument {
        Instrument {
            name: "KESTREL survey".into(),
            lo: 3700.0,
            hi: 9300.0,
            resolution: 1500.0,
            sampling: Sampling::Log10 { dlog10: 1.5e-4 },
            medium: Medium::Vacuum,
        }
    }

    /// The preset set-ups, in a fixed order.
    pub fn presets() -> Vec<Instrument> {
        vec![
            Instrument::wide(),
            Instrument::low_res(),
            Instrument::high_res(),
            Instrument::red_log(),
            Instrument::survey_log(),
        ]
    }

    /// The pixel grid in the instrument's medium.
    pub fn native_grid(&self) -> Vec<f64> {
        match self.sampling {
            Sampling::Linear { step } => {
                let n = ((self.hi - self.lo) / step).floor() as usize + 1;
                (0..n).map(|i| self.lo + i as f64 * step).collect()
            }
            Sampling::Log10 { dlog10 } => {
                let n = ((self.hi / self.lo).log10() / dlog10).floor() as usize + 1;
                (0..n)
                    .map(|i| self.lo * 10f64.powf(i as f64 * dlog10))
                    .collect()
            }
        }
    }

    /// The pixel grid as vacuum wavelengths.
    pub fn vacuum_grid(&self) -> Vec<f64> {
        let mut g = self.native_grid();
        if self.medium == Medium::Air {
            crate::physics::airvac::air_to_vacuum_in_place(&mut g);
        }
        g
    }
}

/// Things that are not the target, switched on and scaled per spectrum.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Nuisances {
    /// Leave imperfect sky subtraction at the night-sky lines (observed frame).
    pub sky_residuals: bool,
    /// Imprint telluric absorption (O2 A and B bands, H2O bands).
    pub telluric: bool,
    /// Airmass scaling the telluric depth.
    pub airmass: f64,
    /// Number of cosmic-ray spikes (single pixels, not in the error array).
    pub cosmic_rays: usize,
    /// Fractional amplitude of flux-calibration ripples (0 = none).
    pub wiggle: f64,
    /// Include the sky spectrum in the output.
    pub include_sky: bool,
    /// Factor applied to the true sigma in the reported error array (1 = honest).
    pub error_scale: f64,
    /// Sky continuum level relative to the object's median continuum.
    pub sky_level: f64,
}

impl Default for Nuisances {
    fn default() -> Self {
        Nuisances {
            sky_residuals: true,
            telluric: true,
            airmass: 1.2,
            cosmic_rays: 1,
            wiggle: 0.01,
            include_sky: true,
            error_scale: 1.0,
            sky_level: 1.0,
        }
    }
}

impl Nuisances {
    /// No nuisances at all (still noisy): for clean tests.
    pub fn none() -> Nuisances {
        Nuisances {
            sky_residuals: false,
            telluric: false,
            airmass: 1.0,
            cosmic_rays: 0,
            wiggle: 0.0,
            include_sky: false,
            error_scale: 1.0,
            sky_level: 0.5,
        }
    }
}

/// What to generate.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SynthSpec {
    /// Kind of object.
    pub kind: Kind,
    /// Redshift (for stars, the z of the radial velocity; ignored for junk).
    pub z: f64,
    /// Median continuum S/N per pixel (for noise-only junk, ignored).
    pub snr: f64,
    /// The set-up.
    pub instrument: Instrument,
    /// Nuisances.
    pub nuisances: Nuisances,
    /// Metadata copied into the spectrum (target name, coordinates, time, site).
    pub meta: Metadata,
}

impl SynthSpec {
    /// A spec with default nuisances and empty metadata.
    pub fn new(kind: Kind, z: f64, snr: f64, instrument: Instrument) -> SynthSpec {
        SynthSpec {
            kind,
            z,
            snr,
            instrument,
            nuisances: Nuisances::default(),
            meta: Metadata::default(),
        }
    }

    /// A random but identifiable spec of `kind` at `snr` through `instrument`:
    /// z is drawn from [`Kind::z_range`] (uniform; stars uniform in velocity)
    /// among values that put enough of the kind's key features inside the
    /// coverage for a careful person to solve it, and the nuisances are drawn
    /// as they come on a typical night.
    pub fn random(kind: Kind, snr: f64, instrument: Instrument, seed: u64) -> SynthSpec {
        let mut r = rng::Rng::new(seed ^ 0x5EED_5EED_0000_0001);
        let z = model::draw_visible_z(kind, &instrument, &mut r);
        let nuisances = Nuisances {
            sky_residuals: r.chance(0.85),
            telluric: r.chance(0.7),
            airmass: r.range(1.0, 2.0),
            cosmic_rays: [0usize, 0, 1, 1, 2, 3, 5][r.below(7)],
            wiggle: if r.chance(0.6) {
                r.range(0.0, 0.04)
            } else {
                0.0
            },
            include_sky: r.chance(0.5),
            error_scale: if r.chance(0.7) {
                1.0
            } else {
                r.range(0.8, 1.25)
            },
            sky_level: r.log_range(0.3, 4.0),
        };
        SynthSpec {
            kind,
            z,
            snr,
            instrument,
            nuisances,
            meta: Metadata::default(),
        }
    }
}

/// One line the generator put in.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TruthLine {
    /// Line name (catalogue notation).
    pub name: String,
    /// Rest vacuum wavelength, Angstrom.
    pub rest_wavelength: f64,
    /// Observed vacuum wavelength of the line centre, Angstrom (includes any
    /// intrinsic shift, e.g. a blueshifted quasar C IV).
    pub observed_wavelength: f64,
    /// Integrated observed-frame line flux (flux units x Angstrom) before the
    /// instrument; negative for absorption (minus equivalent width times continuum).
    pub flux: f64,
    /// Rest-frame equivalent width, Angstrom (negative = emission).
    pub ew_rest: f64,
    /// Emission or absorption.
    pub kind: LineKind,
    /// Intrinsic FWHM, km/s (before the instrument).
    pub fwhm_kms: f64,
}

/// What a placed nuisance is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum NuisanceKind {
    /// Sky-subtraction residual at a night-sky line.
    SkyResidual,
    /// Telluric absorption band.
    Telluric,
    /// Cosmic-ray spike (one pixel).
    CosmicRay,
    /// Flux-calibration ripple (whole spectrum).
    Wiggle,
    /// An intervening absorber unrelated to the target (quasar sight lines).
    Intervening,
}

/// A nuisance as placed (observed frame, vacuum Angstrom).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlacedNuisance {
    /// What it is.
    pub kind: NuisanceKind,
    /// Name (sky line, band, ...).
    pub name: String,
    /// Lower edge (or position), vacuum Angstrom.
    pub lo: f64,
    /// Upper edge (equal to `lo` for a position).
    pub hi: f64,
    /// Size: residual peak in units of the pixel sigma, band depth, spike
    /// height in sigma, ripple amplitude.
    pub amplitude: f64,
}

/// What went into a synthetic spectrum.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Truth {
    /// Kind generated.
    pub kind: Kind,
    /// Class an identifier should report.
    pub class: ObjectClass,
    /// Subclass (see [`Kind::subclass`]).
    pub subclass: String,
    /// Redshift (stars: from the radial velocity; junk: 0).
    pub z: f64,
    /// Velocity, km/s (relativistic, from z).
    pub velocity_kms: f64,
    /// Median continuum S/N per pixel actually achieved.
    pub snr: f64,
    /// Instrument name.
    pub instrument: String,
    /// Lines placed inside the coverage.
    pub lines: Vec<TruthLine>,
    /// Nuisances placed inside the coverage.
    pub nuisances: Vec<PlacedNuisance>,
    /// Physical parameters drawn (temperature, line ratios, ...): name -> value.
    pub params: Vec<(String, f64)>,
}

/// A generated spectrum and its truth.
#[derive(Debug, Clone, PartialEq)]
pub struct Synthetic {
    /// The spectrum, as a reader would return it (vacuum wavelengths).
    pub spectrum: Spectrum,
    /// What went into it.
    pub truth: Truth,
    /// The instrument, for writers that need the regular grid (FITS WCS).
    pub instrument: Instrument,
}

/// Make the spectrum `spec` describes, with noise and nuisances from `seed`.
/// Deterministic: equal inputs give bit-identical output.
pub fn generate(spec: &SynthSpec, seed: u64) -> Synthetic {
    model::build(spec, seed)
}

/// Redshift of a radial velocity (km/s), relativistic: the project's
/// [`crate::physics::doppler::z_from_velocity`], so truth and identifier share
/// one convention.
pub fn z_from_velocity(v_kms: f64) -> f64 {
    crate::physics::doppler::z_from_velocity(v_kms)
}

/// Radial velocity (km/s) of a redshift, the inverse of [`z_from_velocity`].
pub fn velocity_from_z(z: f64) -> f64 {
    crate::physics::doppler::velocity_from_z(z)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn every_kind(snr: f64) -> Vec<Synthetic> {
        Kind::ALL
            .iter()
            .enumerate()
            .map(|(i, k)| {
                let inst = Instrument::presets()[i % 5].clone();
                generate(&SynthSpec::random(*k, snr, inst, i as u64), 100 + i as u64)
            })
            .collect()
    }

    #[test]
    fn the_same_spec_and_seed_give_a_bit_identical_spectrum() {
        let spec = SynthSpec::random(Kind::Quasar, 10.0, Instrument::wide(), 3);
        let a = generate(&spec, 9);
        let b = generate(&spec, 9);
        assert_eq!(a, b);
        let c = generate(&spec, 10);
        assert_ne!(a.spectrum.flux, c.spectrum.flux);
    }

    #[test]
    fn the_median_continuum_signal_to_noise_is_the_one_asked_for() {
        for syn in every_kind(12.0) {
            if syn.truth.kind == Kind::JunkNoise {
                continue;
            }
            assert!(
                (syn.truth.snr - 12.0).abs() < 0.05,
                "{:?}: {}",
                syn.truth.kind,
                syn.truth.snr
            );
        }
    }

    #[test]
    fn every_kind_gets_its_class_and_a_redshift_in_its_range() {
        for syn in every_kind(20.0) {
            let t = &syn.truth;
            assert_eq!(t.class, t.kind.class());
            let (lo, hi) = t.kind.z_range();
            assert!(t.z >= lo && t.z <= hi, "{:?} z={}", t.kind, t.z);
            match t.class {
                ObjectClass::Unknown => assert!(t.lines.is_empty(), "{:?}", t.kind),
                ObjectClass::Star => assert!(t.velocity_kms.abs() <= 500.0 + 1e-9),
                _ => assert!(
                    t.lines.len() >= 2,
                    "{:?} has {} lines",
                    t.kind,
                    t.lines.len()
                ),
            }
            let s = &syn.spectrum;
            assert!(s.wave.windows(2).all(|w| w[1] > w[0]));
            assert!(s.flux.iter().all(|f| f.is_finite()));
        }
    }

    #[test]
    fn velocity_and_redshift_conversions_invert_each_other() {
        for v in [-500.0, -37.5, 0.0, 120.0, 500.0, 30000.0] {
            let back = velocity_from_z(z_from_velocity(v));
            assert!((back - v).abs() < 1e-9, "{v} -> {back}");
        }
        // At small v, z ~ v/c (common practice, no source).
        assert!((z_from_velocity(299.792458) - 1.0e-3).abs() < 1e-6);
    }

    #[test]
    fn oxygen_and_nitrogen_doublets_keep_their_fixed_ratios() {
        let spec = SynthSpec::new(Kind::StarFormingGalaxy, 0.1, 30.0, Instrument::wide());
        let t = generate(&spec, 5).truth;
        let flux = |n: &str| {
            t.lines
                .iter()
                .find(|l| l.name == n && l.kind == LineKind::Emission)
                .map(|l| l.flux)
                .unwrap()
        };
        // Intrinsic ratios: Storey & Zeippen (2000) 2.98, Osterbrock & Ferland
        // (2006) 3.05; the truth holds observed (reddened) fluxes, so undo the
        // dust between the two members first.
        let ebv = t.params.iter().find(|p| p.0 == "ebv_gas").unwrap().1;
        let dered =
            |a: f64, b: f64| 10f64.powf(0.4 * ebv * (model::calzetti_k(a) - model::calzetti_k(b)));
        let o3 = flux("[O III] 5007") / flux("[O III] 4959") * dered(5008.24, 4960.30);
        let n2 = flux("[N II] 6584") / flux("[N II] 6548") * dered(6585.27, 6549.86);
        assert!((o3 / 2.98 - 1.0).abs() < 0.01, "{o3}");
        assert!((n2 / 3.05 - 1.0).abs() < 0.01, "{n2}");
        // Dust can only steepen the Balmer decrement from Case B's 2.86.
        assert!(flux("H-alpha") / flux("H-beta") >= 2.86 * 0.999);
    }

    #[test]
    fn an_emission_line_carries_the_flux_the_truth_says() {
        let mut spec = SynthSpec::new(Kind::StarFormingGalaxy, 0.05, 200.0, Instrument::wide());
        spec.nuisances = Nuisances::none();
        let syn = generate(&spec, 11);
        let s = &syn.spectrum;
        let line = syn
            .truth
            .lines
            .iter()
            .find(|l| l.name == "H-alpha" && l.kind == LineKind::Emission)
            .unwrap();
        let w0 = line.observed_wavelength;
        // Integrate flux minus a continuum from side bands 40-60 A away.
        let side: Vec<f64> = (0..s.len())
            .filter(|&i| (s.wave[i] - w0).abs() > 40.0 && (s.wave[i] - w0).abs() < 60.0)
            .map(|i| s.flux[i])
            .collect();
        let c = side.iter().sum::<f64>() / side.len() as f64;
        let total: f64 = (1..s.len())
            .filter(|&i| (s.wave[i] - w0).abs() < 12.0)
            .filter(|&i| {
                // Keep clear of [N II] 6548/6584, 20 A either side of H-alpha.
                let dn1 = (s.wave[i] - 6549.86 * 1.05).abs();
                let dn2 = (s.wave[i] - 6585.27 * 1.05).abs();
                dn1 > 6.0 && dn2 > 6.0
            })
            .map(|i| (s.flux[i] - c) * (s.wave[i] - s.wave[i - 1]))
            .sum();
        assert!(
            (total / line.flux - 1.0).abs() < 0.1,
            "measured {total}, truth {}",
            line.flux
        );
    }

    #[test]
    fn cosmic_rays_stand_out_of_the_noise_and_are_not_in_the_errors() {
        let mut spec = SynthSpec::new(Kind::JunkSmooth, 0.0, 20.0, Instrument::wide());
        spec.nuisances.cosmic_rays = 4;
        let syn = generate(&spec, 2);
        let s = &syn.spectrum;
        let sig = s.sigma.as_ref().unwrap();
        let rays: Vec<_> = syn
            .truth
            .nuisances
            .iter()
            .filter(|n| n.kind == NuisanceKind::CosmicRay)
            .collect();
        assert_eq!(rays.len(), 4);
        for r in rays {
            let i = s.wave.iter().position(|w| *w == r.lo).unwrap();
            let around = 0.5 * (s.flux[i - 1] + s.flux[i + 1]);
            assert!((s.flux[i] - around) / sig[i] > 5.0);
            assert!((sig[i] / sig[i - 1] - 1.0).abs() < 0.2);
        }
    }

    #[test]
    fn an_air_grid_is_regular_in_air_and_stored_in_vacuum() {
        let inst = Instrument::low_res();
        let vac = inst.vacuum_grid();
        let native = inst.native_grid();
        for (v, a) in vac.iter().zip(&native) {
            let back = crate::physics::airvac::vacuum_to_air(*v);
            assert!((back - a).abs() < 1e-9);
            // Vacuum is longer than air by about 1.1-2.0 A across the optical
            // (Morton 2000; common practice).
            assert!(v - a > 1.0 && v - a < 2.8, "{a} -> {v}");
        }
    }
}
