//! The physical model behind [`super::generate`].
//!
//! Numbers marked "invented" are choices for synthetic truth, picked to look
//! like real spectra of each kind; they are the truth of these tests, never a
//! published value. Published relations used are cited where they appear.

use super::restlines::rest;
use super::rng::Rng;
use super::{
    Instrument, Kind, NuisanceKind, PlacedNuisance, SynthSpec, Synthetic, Truth, TruthLine,
    velocity_from_z, z_from_velocity,
};
use crate::lines::{LineKind, ObjectClass};
use crate::physics::airvac::air_to_vacuum;
use crate::physics::constants::C_KM_S;
use crate::spectrum::Spectrum;

/// FWHM of a Gaussian in units of its sigma, 2 sqrt(2 ln 2).
const FWHM_PER_SIGMA: f64 = 2.354_820_045_030_949;
/// Second radiation constant h c / k in Angstrom Kelvin (CODATA 2018).
const HC_OVER_K_AA_K: f64 = 1.438_776_877e8;

/// The fine, logarithmic working grid: lambda_k = exp(ln0 + k dln).
struct Fine {
    ln0: f64,
    dln: f64,
    wave: Vec<f64>,
}

impl Fine {
    fn new(lo: f64, hi: f64, dv_kms: f64) -> Fine {
        let dln = dv_kms / C_KM_S;
        let ln0 = lo.ln();
        let n = ((hi.ln() - ln0) / dln).ceil() as usize + 1;
        let wave = (0..n).map(|k| (ln0 + k as f64 * dln).exp()).collect();
        Fine { ln0, dln, wave }
    }

    fn len(&self) -> usize {
        self.wave.len()
    }

    /// Call `f(k, x)` for the fine pixels within `nsig` of a Gaussian centred
    /// at `obs` with width `sig_ln` in ln(lambda), x in units of that width.
    fn around(&self, obs: f64, sig_ln: f64, nsig: f64, mut f: impl FnMut(usize, f64)) {
        let (a, b) = self.span(obs * (-nsig * sig_ln).exp(), obs * (nsig * sig_ln).exp());
        let lc = obs.ln();
        for k in a..b {
            f(k, (self.ln0 + k as f64 * self.dln - lc) / sig_ln);
        }
    }

    /// Index range [a, b) of fine pixels within `lo..hi` (observed Angstrom).
    fn span(&self, lo: f64, hi: f64) -> (usize, usize) {
        let n = self.len();
        let a = ((lo.max(1.0).ln() - self.ln0) / self.dln).floor();
        let b = ((hi.max(1.0).ln() - self.ln0) / self.dln).ceil() + 1.0;
        let a = a.clamp(0.0, n as f64) as usize;
        let b = b.clamp(0.0, n as f64) as usize;
        (a, b.max(a))
    }
}

/// Builds one object on the fine grid.
struct Builder {
    fine: Fine,
    /// 1 + z of the object.
    s: f64,
    /// Object continuum (observed frame, flux per Angstrom).
    cont: Vec<f64>,
    /// The object's own absorption (acts on the continuum only).
    absorb: Vec<f64>,
    /// The object's emission (flux per Angstrom).
    emis: Vec<f64>,
    /// Transmission of everything in front of the emitting regions (forest,
    /// intervening absorbers, the Earth's atmosphere).
    trans: Vec<f64>,
    lines: Vec<TruthLine>,
    nuisances: Vec<PlacedNuisance>,
    params: Vec<(String, f64)>,
}

impl Builder {
    fn cont_at(&self, obs: f64) -> f64 {
        let (a, _) = self.fine.span(obs, obs);
        let k = a.min(self.fine.len() - 1);
        self.cont[k]
    }

    /// Set the continuum from a rest-frame shape.
    fn set_continuum(&mut self, f: impl Fn(f64) -> f64) {
        let s = self.s;
        for (c, w) in self.cont.iter_mut().zip(&self.fine.wave) {
            *c = f(w / s);
        }
    }

    fn param(&mut self, name: &str, v: f64) {
        self.params.push((name.to_string(), v));
    }

    /// Add an emission line of integrated observed flux `flux` (flux x A),
    /// intrinsic FWHM `fwhm_kms`, shifted by `shift_kms` from the systemic z.
    fn emission_flux(&mut self, name: &str, shift_kms: f64, fwhm_kms: f64, flux: f64) {
        let rw = rest(name);
        let obs = rw * self.s * (1.0 + shift_kms / C_KM_S);
        let c = self.cont_at(obs);
        let ew_rest = if c > 0.0 { -flux / c / self.s } else { 0.0 };
        self.add_gaussian_emission(obs, fwhm_kms, flux);
        self.lines.push(TruthLine {
            name: name.to_string(),
            rest_wavelength: rw,
            observed_wavelength: obs,
            flux,
            ew_rest,
            kind: LineKind::Emission,
            fwhm_kms,
        });
    }

    /// Add an emission line of rest equivalent width `ew_rest` (> 0, Angstrom)
    /// against the local continuum; returns the flux.
    fn emission_ew(&mut self, name: &str, shift_kms: f64, fwhm_kms: f64, ew_rest: f64) -> f64 {
        let obs = rest(name) * self.s * (1.0 + shift_kms / C_KM_S);
        let flux = ew_rest * self.s * self.cont_at(obs);
        self.emission_flux(name, shift_kms, fwhm_kms, flux);
        flux
    }

    fn add_gaussian_emission(&mut self, obs: f64, fwhm_kms: f64, flux: f64) {
        let sig_ln = fwhm_kms / FWHM_PER_SIGMA / C_KM_S;
        let sig_aa = obs * sig_ln;
        let norm = flux / (sig_aa * (std::f64::consts::TAU).sqrt());
        let emis = &mut self.emis;
        self.fine.around(obs, sig_ln, 6.0, |k, x| {
            emis[k] += norm * (-0.5 * x * x).exp();
        });
    }

    /// Multiply `target` by a Gaussian absorption of rest equivalent width
    /// `ew_rest` (> 0). Returns the depth used (capped at 0.95).
    fn gaussian_absorption(
        fine: &Fine,
        target: &mut [f64],
        obs: f64,
        fwhm_kms: f64,
        ew_obs: f64,
    ) -> f64 {
        let sig_ln = fwhm_kms / FWHM_PER_SIGMA / C_KM_S;
        let sig_aa = obs * sig_ln;
        let depth = (ew_obs / (sig_aa * (std::f64::consts::TAU).sqrt())).min(0.95);
        fine.around(obs, sig_ln, 6.0, |k, x| {
            target[k] *= 1.0 - depth * (-0.5 * x * x).exp();
        });
        depth
    }

    /// An absorption line of the object (rest EW in Angstrom, > 0).
    fn absorption(&mut self, name: &str, fwhm_kms: f64, ew_rest: f64) {
        let rw = rest(name);
        let obs = rw * self.s;
        let sig_aa = obs * fwhm_kms / FWHM_PER_SIGMA / C_KM_S;
        let d = Self::gaussian_absorption(
            &self.fine,
            &mut self.absorb,
            obs,
            fwhm_kms,
            ew_rest * self.s,
        );
        let ew_used = d * sig_aa * (std::f64::consts::TAU).sqrt() / self.s;
        let c = self.cont_at(obs);
        self.lines.push(TruthLine {
            name: name.to_string(),
            rest_wavelength: rw,
            observed_wavelength: obs,
            flux: -ew_used * self.s * c,
            ew_rest: ew_used,
            kind: LineKind::Absorption,
            fwhm_kms,
        });
    }

    /// A strong line with core and wings (two Gaussians sharing the EW):
    /// pressure-broadened Balmer lines of hot stars, Ca II H and K of cool ones.
    fn broad_absorption(&mut self, name: &str, fwhm_kms: f64, ew_rest: f64) {
        let rw = rest(name);
        let obs = rw * self.s;
        let mut used = 0.0;
        for (frac, wmul) in [(0.55, 1.0), (0.45, 2.6)] {
            let f = fwhm_kms * wmul;
            let sig_aa = obs * f / FWHM_PER_SIGMA / C_KM_S;
            let d = Self::gaussian_absorption(
                &self.fine,
                &mut self.absorb,
                obs,
                f,
                frac * ew_rest * self.s,
            );
            used += d * sig_aa * (std::f64::consts::TAU).sqrt() / self.s;
        }
        let c = self.cont_at(obs);
        self.lines.push(TruthLine {
            name: name.to_string(),
            rest_wavelength: rw,
            observed_wavelength: obs,
            flux: -used * self.s * c,
            ew_rest: used,
            kind: LineKind::Absorption,
            fwhm_kms,
        });
    }

    /// A molecular band: sharp head at `name`'s wavelength, absorption fading
    /// redward over `scale` rest Angstrom, peak depth `depth`.
    fn band_head(&mut self, name: &str, depth: f64, scale: f64) {
        let head = rest(name);
        let s = self.s;
        let (a, b) = self.fine.span(head * s, (head + 8.0 * scale) * s);
        for k in a..b {
            let x = self.fine.wave[k] / s - head;
            if x >= 0.0 {
                self.absorb[k] *= 1.0 - depth * (-x / scale).exp();
            }
        }
        let c = self.cont_at(head * s);
        self.lines.push(TruthLine {
            name: name.to_string(),
            rest_wavelength: head,
            observed_wavelength: head * s,
            flux: -depth * scale * s * c,
            ew_rest: depth * scale,
            kind: LineKind::Absorption,
            fwhm_kms: 0.0,
        });
    }

    /// The fixed list of weak metal lines (invented positions and strengths,
    /// the same for every star), scaled by `scale`, broadened to `fwhm_kms`.
    fn metal_forest(&mut self, scale: f64, fwhm_kms: f64) {
        let mut r = Rng::new(0x00ED_6E5E_A11E_0001);
        for _ in 0..420 {
            let w = r.range(3300.0, 9300.0);
            let ew = r.log_range(0.03, 0.35) * scale;
            let obs = w * self.s;
            Self::gaussian_absorption(&self.fine, &mut self.absorb, obs, fwhm_kms, ew * self.s);
        }
    }
}

/// Planck B_lambda(T) shape (arbitrary normalisation), lambda in Angstrom.
fn planck(w: f64, t: f64) -> f64 {
    let x = HC_OVER_K_AA_K / (w * t);
    (5500.0 / w).powi(5) / x.exp_m1()
}

/// A smooth step from 0 (well below `at`) to 1 (well above), width `w`.
fn step(x: f64, at: f64, w: f64) -> f64 {
    0.5 * (1.0 + ((x - at) / w).tanh())
}

/// Calzetti et al. (2000, ApJ 533, 682, eq. 4) starburst attenuation curve
/// k(lambda) with R_V = 4.05, lambda in Angstrom (coefficients from memory).
pub(super) fn calzetti_k(w: f64) -> f64 {
    let x = w / 1.0e4;
    if x >= 0.63 {
        2.659 * (-1.857 + 1.040 / x) + 4.05
    } else {
        let x = x.max(0.12);
        2.659 * (-2.156 + 1.509 / x - 0.198 / (x * x) + 0.011 / (x * x * x)) + 4.05
    }
}

/// Draw a redshift for `kind` that puts enough key features inside the coverage.
pub(super) fn draw_visible_z(kind: Kind, inst: &Instrument, r: &mut Rng) -> f64 {
    let (zlo, zhi) = kind.z_range();
    if kind.class() == ObjectClass::Star {
        return z_from_velocity(r.range(-500.0, 500.0));
    }
    if kind.class() == ObjectClass::Unknown {
        return 0.0;
    }
    let (keys, need): (&[&str], usize) = match kind {
        Kind::PassiveGalaxy => (
            &[
                "Ca II K",
                "Ca II H",
                "G band",
                "Mg I 5173",
                "Na D2",
                "H-beta",
                "Ca II 8542",
            ],
            3,
        ),
        Kind::Quasar => (
            &[
                "Ly-alpha",
                "Si IV+O IV] 1400",
                "C IV 1549",
                "C III] 1909",
                "Mg II 2798",
                "H-beta",
                "H-alpha",
            ],
            2,
        ),
        _ => (
            &[
                "[O II] 3726",
                "[O II] 3729",
                "H-beta",
                "[O III] 4959",
                "[O III] 5007",
                "H-alpha",
                "[N II] 6584",
            ],
            2,
        ),
    };
    let g = inst.vacuum_grid();
    let (lo, hi) = (g[0] + 30.0, g[g.len() - 1] - 30.0);
    let mut z = zlo;
    for _ in 0..4000 {
        z = r.range(zlo, zhi);
        let n = keys
            .iter()
            .filter(|k| {
                let o = rest(k) * (1.0 + z);
                o > lo && o < hi
            })
            .count();
        if n >= need {
            return z;
        }
    }
    z
}

/// Night-sky emission lines: (name, air wavelength, relative strength).
/// Positions from memory (approximate for the fainter OH lines); strengths invented.
const SKY_LINES: &[(&str, f64, f64)] = &[
    ("Hg I 4358", 4358.34, 0.25),
    ("Hg I 5461", 5460.75, 0.35),
    ("[O I] 5577", 5577.34, 3.0),
    ("Na I 5890", 5889.95, 0.5),
    ("Na I 5896", 5895.92, 0.4),
    ("[O I] 6300", 6300.30, 1.2),
    ("[O I] 6364", 6363.78, 0.4),
    ("OH 6499", 6498.73, 0.4),
    ("OH 6533", 6533.04, 0.5),
    ("OH 6554", 6553.62, 0.4),
    ("OH 6864", 6863.96, 0.6),
    ("OH 6923", 6923.22, 0.5),
    ("OH 7316", 7316.28, 0.8),
    ("OH 7341", 7340.89, 0.9),
    ("OH 7369", 7369.25, 0.6),
    ("OH 7402", 7401.69, 0.5),
    ("OH 7751", 7750.64, 0.6),
    ("OH 7794", 7794.11, 0.8),
    ("OH 7822", 7821.50, 0.7),
    ("OH 7853", 7853.13, 0.6),
    ("OH 7914", 7913.71, 1.0),
    ("OH 7965", 7964.65, 0.9),
    ("OH 7993", 7993.33, 1.0),
    ("OH 8345", 8344.60, 1.5),
    ("OH 8399", 8399.17, 1.3),
    ("OH 8430", 8430.17, 1.1),
    ("OH 8465", 8465.36, 1.2),
    ("OH 8493", 8493.39, 1.0),
    ("OH 8505", 8505.05, 0.8),
    ("OH 8761", 8761.31, 1.0),
    ("OH 8827", 8827.10, 1.5),
    ("OH 8886", 8885.85, 1.6),
    ("OH 8920", 8919.64, 1.0),
    ("OH 8943", 8943.40, 1.1),
    ("OH 8988", 8988.38, 1.2),
    ("OH 9001", 9001.25, 1.0),
    ("OH 9376", 9375.98, 1.5),
    ("OH 9440", 9439.67, 1.5),
    ("OH 9477", 9476.90, 1.0),
    ("OH 9521", 9520.60, 1.0),
    ("OH 9568", 9567.60, 0.9),
    ("OH 9788", 9788.20, 1.3),
    ("OH 9872", 9872.00, 1.0),
];

/// Telluric bands: (name, air lo, air hi, depth at airmass 1, O2-like head).
/// Band limits from common practice (from memory); depths invented.
const TELLURIC: &[(&str, f64, f64, f64, bool)] = &[
    ("O2 gamma band", 6276.0, 6320.0, 0.06, true),
    ("O2 B band", 6867.0, 6960.0, 0.35, true),
    ("H2O 7200 band", 7160.0, 7340.0, 0.15, false),
    ("O2 A band", 7594.0, 7700.0, 0.75, true),
    ("H2O 8200 band", 8120.0, 8350.0, 0.15, false),
    ("H2O 9300 band", 8950.0, 9800.0, 0.35, false),
];

/// Build the synthetic spectrum.
pub(super) fn build(spec: &SynthSpec, seed: u64) -> Synthetic {
    let root = Rng::new(seed);
    let mut r_phys = root.fork(1);
    let mut r_noise = root.fork(2);
    let mut r_nuis = root.fork(3);
    let inst = &spec.instrument;
    let kind = spec.kind;
    let z = if kind.class() == ObjectClass::Unknown {
        0.0
    } else {
        spec.z
    };
    let out_wave = inst.vacuum_grid();
    let n_out = out_wave.len();
    let (vlo, vhi) = (out_wave[0], out_wave[n_out - 1]);
    let lsf_sig_ln = 1.0 / (FWHM_PER_SIGMA * inst.resolution);
    let dv = (C_KM_S * lsf_sig_ln / 3.0).min(8.0);
    let pad = 8.0 * lsf_sig_ln;
    let fine = Fine::new(vlo * (-pad).exp() - 5.0, vhi * pad.exp() + 5.0, dv);
    let nf = fine.len();
    let mut b = Builder {
        fine,
        s: 1.0 + z,
        cont: vec![1.0; nf],
        absorb: vec![1.0; nf],
        emis: vec![0.0; nf],
        trans: vec![1.0; nf],
        lines: Vec::new(),
        nuisances: Vec::new(),
        params: Vec::new(),
    };

    // Object continuum level (flux units of 1e-17 erg/s/cm2/A, invented range).
    let level = r_phys.log_range(2.0, 40.0);
    object(&mut b, kind, level, &mut r_phys, vlo, vhi);

    // Earth's atmosphere.
    if spec.nuisances.telluric {
        telluric(&mut b, spec.nuisances.airmass, vlo, vhi);
    }

    // Sky: continuum plus lines (observed frame), and its residual after subtraction.
    let sky_cont_level =
        spec.nuisances.sky_level * if kind == Kind::JunkNoise { 1.0 } else { level };
    let mut sky = vec![0.0; nf];
    let mut resid = vec![0.0; nf];
    for (k, w) in b.fine.wave.iter().enumerate() {
        sky[k] = sky_cont_level * (0.55 + 0.45 * (w / 6000.0).powi(2));
    }
    let mut resid_lines = Vec::new();
    let mut step_aa = out_wave[n_out / 2] - out_wave[n_out / 2 - 1];
    if !step_aa.is_finite() || step_aa <= 0.0 {
        step_aa = 1.0;
    }
    for &(name, air, strength) in SKY_LINES {
        let w = air_to_vacuum(air);
        if w < vlo - 20.0 || w > vhi + 20.0 {
            continue;
        }
        let flux = strength * 8.0 * sky_cont_level;
        add_line(&b.fine, &mut sky, w, flux);
        if spec.nuisances.sky_residuals {
            // Imperfect subtraction: a scale error and a sub-pixel shift.
            let eps = 0.03 * r_nuis.normal();
            let shift = 0.06 * step_aa * r_nuis.normal();
            add_line(&b.fine, &mut resid, w + shift, flux * (1.0 + eps));
            add_line(&b.fine, &mut resid, w, -flux);
            resid_lines.push((name, w));
        }
    }

    // Everything through the instrument.
    let obj: Vec<f64> = (0..nf)
        .map(|k| (b.cont[k] * b.absorb[k] + b.emis[k]) * b.trans[k])
        .collect();
    let kernel = gaussian_kernel(lsf_sig_ln / b.fine.dln);
    let obj = rebin(&b.fine, &convolve(&obj, &kernel), &out_wave);
    let sky_out = rebin(&b.fine, &convolve(&sky, &kernel), &out_wave);
    let resid_out = rebin(&b.fine, &convolve(&resid, &kernel), &out_wave);

    // Flux-calibration ripples (object only).
    let mut wig_amp = spec.nuisances.wiggle;
    let mut periods = (r_nuis.range(500.0, 2000.0), r_nuis.range(250.0, 900.0));
    if kind == Kind::JunkWiggles {
        wig_amp = wig_amp.max(r_nuis.range(0.06, 0.15));
        periods = (r_nuis.range(150.0, 500.0), r_nuis.range(90.0, 300.0));
    }
    let phases = (r_nuis.range(0.0, 6.3), r_nuis.range(0.0, 6.3));
    let split = r_nuis.range(0.3, 0.7);
    let mut obj = obj;
    if wig_amp > 0.0 {
        for (o, w) in obj.iter_mut().zip(&out_wave) {
            let f = 1.0
                + wig_amp * split * (std::f64::consts::TAU * w / periods.0 + phases.0).sin()
                + wig_amp
                    * (1.0 - split)
                    * (std::f64::consts::TAU * w / periods.1 + phases.1).sin();
            *o *= f;
        }
        b.nuisances.push(PlacedNuisance {
            kind: NuisanceKind::Wiggle,
            name: format!("ripple periods {:.0} A and {:.0} A", periods.0, periods.1),
            lo: vlo,
            hi: vhi,
            amplitude: wig_amp,
        });
    }

    // Noise: variance from object, sky, and a read-noise floor; scaled so the
    // median continuum S/N is the one asked for.
    let median_obj = median(&obj).max(0.0);
    let floor = 0.3
        * if median_obj > 0.0 {
            median_obj
        } else {
            sky_cont_level
        };
    let var0: Vec<f64> = (0..n_out)
        .map(|i| obj[i].max(0.0) + sky_out[i] + floor)
        .collect();
    let kvar = if kind == Kind::JunkNoise || median_obj <= 0.0 {
        let m = median(&var0.iter().map(|v| v.sqrt()).collect::<Vec<_>>());
        1.0 / (m * m)
    } else {
        let ratio: Vec<f64> = (0..n_out).map(|i| obj[i] / var0[i].sqrt()).collect();
        let m = median(&ratio);
        (m / spec.snr.max(0.1)).powi(2)
    };
    let sigma: Vec<f64> = var0.iter().map(|v| (kvar * v).sqrt()).collect();
    let mut flux: Vec<f64> = (0..n_out)
        .map(|i| {
            let res = if spec.nuisances.sky_residuals {
                resid_out[i]
            } else {
                0.0
            };
            obj[i] + res + sigma[i] * r_noise.normal()
        })
        .collect();
    let achieved = if kind == Kind::JunkNoise {
        0.0
    } else {
        median(&(0..n_out).map(|i| obj[i] / sigma[i]).collect::<Vec<_>>())
    };

    // Sky residuals worth recording (peak above one sigma).
    for (name, w) in resid_lines {
        let i = nearest(&out_wave, w);
        let lo_i = i.saturating_sub(4);
        let hi_i = (i + 5).min(n_out);
        let peak = (lo_i..hi_i)
            .map(|j| resid_out[j].abs() / sigma[j])
            .fold(0.0, f64::max);
        if w >= vlo && w <= vhi && peak > 1.0 {
            b.nuisances.push(PlacedNuisance {
                kind: NuisanceKind::SkyResidual,
                name: name.to_string(),
                lo: w,
                hi: w,
                amplitude: peak,
            });
        }
    }

    // Cosmic rays: single pixels, not in the error array.
    for _ in 0..spec.nuisances.cosmic_rays {
        let i = 2 + r_nuis.below(n_out.saturating_sub(4).max(1));
        let h = r_nuis.log_range(10.0, 80.0);
        flux[i] += h * sigma[i];
        b.nuisances.push(PlacedNuisance {
            kind: NuisanceKind::CosmicRay,
            name: "cosmic ray".into(),
            lo: out_wave[i],
            hi: out_wave[i],
            amplitude: h,
        });
    }

    let reported: Vec<f64> = sigma
        .iter()
        .map(|s| s * spec.nuisances.error_scale)
        .collect();
    let mut meta = spec.meta.clone();
    meta.medium_declared = Some(inst.medium);
    meta.medium_used = Some(inst.medium);
    meta.wave_unit = Some("Angstrom".into());
    meta.flux_unit = Some("1e-17 erg/s/cm2/Angstrom".into());
    let mut spectrum = Spectrum::new(out_wave, flux, Some(reported), meta)
        .expect("the generator's grid is finite and increasing");
    if spec.nuisances.include_sky {
        spectrum.sky = Some(sky_out);
    }

    let mut lines = b.lines;
    lines.retain(|l| l.observed_wavelength >= vlo && l.observed_wavelength <= vhi);
    let mut nuisances = b.nuisances;
    nuisances.retain(|n| n.hi >= vlo && n.lo <= vhi);
    let mut params = b.params;
    params.push(("continuum_level".into(), level));
    params.push(("error_scale".into(), spec.nuisances.error_scale));
    let truth = Truth {
        kind,
        class: kind.class(),
        subclass: kind.subclass().to_string(),
        z,
        velocity_kms: velocity_from_z(z),
        snr: achieved,
        instrument: inst.name.clone(),
        lines,
        nuisances,
        params,
    };
    Synthetic {
        spectrum,
        truth,
        instrument: inst.clone(),
    }
}

/// A narrow (unresolved) emission line on the fine grid, integrated flux `flux`.
fn add_line(fine: &Fine, v: &mut [f64], w: f64, flux: f64) {
    let sig_ln = 6.0 / C_KM_S;
    let sig_aa = w * sig_ln;
    let norm = flux / (sig_aa * (std::f64::consts::TAU).sqrt());
    fine.around(w, sig_ln, 6.0, |k, x| {
        v[k] += norm * (-0.5 * x * x).exp();
    });
}

fn gaussian_kernel(sig_px: f64) -> Vec<f64> {
    let half = (5.0 * sig_px).ceil().max(1.0) as isize;
    let mut k: Vec<f64> = (-half..=half)
        .map(|i| (-0.5 * (i as f64 / sig_px).powi(2)).exp())
        .collect();
    let s: f64 = k.iter().sum();
    for x in &mut k {
        *x /= s;
    }
    k
}

fn convolve(v: &[f64], kernel: &[f64]) -> Vec<f64> {
    let n = v.len() as isize;
    let half = (kernel.len() / 2) as isize;
    (0..n)
        .map(|i| {
            if i >= half && i + half < n {
                let base = (i - half) as usize;
                v[base..base + kernel.len()]
                    .iter()
                    .zip(kernel)
                    .map(|(a, b)| a * b)
                    .sum()
            } else {
                let mut acc = 0.0;
                for (j, kv) in kernel.iter().enumerate() {
                    let idx = (i + j as isize - half).clamp(0, n - 1);
                    acc += kv * v[idx as usize];
                }
                acc
            }
        })
        .collect()
}

/// Integrate the fine-grid density over each output pixel (edges halfway
/// between pixel centres) and divide by the pixel width: flux is conserved.
fn rebin(fine: &Fine, v: &[f64], out: &[f64]) -> Vec<f64> {
    let n = fine.len();
    let mut cum = vec![0.0; n];
    for k in 1..n {
        cum[k] = cum[k - 1] + 0.5 * (v[k] + v[k - 1]) * (fine.wave[k] - fine.wave[k - 1]);
    }
    let at = |w: f64| -> f64 {
        let x = (w.ln() - fine.ln0) / fine.dln;
        let k = (x.floor().max(0.0) as usize).min(n - 2);
        let f = (w - fine.wave[k]) / (fine.wave[k + 1] - fine.wave[k]);
        cum[k] + f.clamp(0.0, 1.0) * (cum[k + 1] - cum[k])
    };
    let m = out.len();
    let edge = |i: usize| -> f64 {
        if i == 0 {
            out[0] - 0.5 * (out[1] - out[0])
        } else if i == m {
            out[m - 1] + 0.5 * (out[m - 1] - out[m - 2])
        } else {
            0.5 * (out[i - 1] + out[i])
        }
    };
    (0..m)
        .map(|i| {
            let (a, b) = (edge(i), edge(i + 1));
            (at(b) - at(a)) / (b - a)
        })
        .collect()
}

fn median(v: &[f64]) -> f64 {
    let mut s: Vec<f64> = v.iter().copied().filter(|x| x.is_finite()).collect();
    if s.is_empty() {
        return 0.0;
    }
    s.sort_by(f64::total_cmp);
    let n = s.len();
    if n % 2 == 1 {
        s[n / 2]
    } else {
        0.5 * (s[n / 2 - 1] + s[n / 2])
    }
}

fn nearest(wave: &[f64], w: f64) -> usize {
    match wave.binary_search_by(|x| x.total_cmp(&w)) {
        Ok(i) => i,
        Err(i) => {
            if i == 0 {
                0
            } else if i >= wave.len() {
                wave.len() - 1
            } else if (wave[i] - w).abs() < (w - wave[i - 1]).abs() {
                i
            } else {
                i - 1
            }
        }
    }
}

/// Telluric transmission on the fine grid.
fn telluric(b: &mut Builder, airmass: f64, vlo: f64, vhi: f64) {
    for &(name, alo, ahi, depth, o2) in TELLURIC {
        let (lo, hi) = (air_to_vacuum(alo), air_to_vacuum(ahi));
        if hi < vlo || lo > vhi {
            continue;
        }
        let tau0 = -(1.0 - depth).ln() * airmass.powf(0.6);
        let (a, e) = b.fine.span(lo - 2.0, hi);
        let width = hi - lo;
        for k in a..e {
            let w = b.fine.wave[k];
            let x = w - lo;
            let env = if o2 {
                step(x, 0.0, 0.7) * (-x / (0.3 * width)).exp()
            } else {
                (std::f64::consts::PI * (x / width).clamp(0.0, 1.0))
                    .sin()
                    .powf(0.7)
            };
            let structure = if o2 {
                0.5 + 0.5 * (std::f64::consts::PI * x / 3.6).cos().powi(2)
            } else {
                0.6 + 0.2 * (w / 2.3).sin() + 0.2 * (w / 0.97).cos()
            };
            b.trans[k] *= (-tau0 * env * structure).exp();
        }
        b.nuisances.push(PlacedNuisance {
            kind: NuisanceKind::Telluric,
            name: name.to_string(),
            lo,
            hi,
            amplitude: 1.0 - (-tau0).exp(),
        });
    }
}

/// The object itself, by kind.
fn object(b: &mut Builder, kind: Kind, level: f64, r: &mut Rng, vlo: f64, vhi: f64) {
    match kind {
        Kind::EarlyStar => early_star(b, r),
        Kind::SolarStar => solar_star(b, r),
        Kind::CoolStar => cool_star(b, r),
        Kind::StarFormingGalaxy | Kind::AgnGalaxy => emission_galaxy(b, kind, level, r, vlo, vhi),
        Kind::PassiveGalaxy => passive_galaxy(b, r),
        Kind::Quasar => quasar(b, r),
        Kind::JunkSmooth | Kind::JunkWiggles => {
            if r.chance(0.4) {
                b.set_continuum(|_| 1.0);
                b.param("flat", 1.0);
            } else {
                let t = r.log_range(3500.0, 20000.0);
                let tilt = r.range(-0.5, 0.5);
                b.set_continuum(|w| planck(w, t) * (w / 6000.0).powf(tilt));
                b.param("temperature_k", t);
            }
        }
        Kind::JunkNoise => {
            b.set_continuum(|_| 0.0);
        }
    }
    if kind != Kind::JunkNoise {
        normalise(b, level, vlo, vhi);
    }
}

/// Scale continuum and lines so the median continuum in the coverage is `level`.
fn normalise(b: &mut Builder, level: f64, vlo: f64, vhi: f64) {
    let (a, e) = b.fine.span(vlo, vhi);
    let m = median(&b.cont[a..e]);
    if m > 0.0 {
        let f = level / m;
        for c in &mut b.cont {
            *c *= f;
        }
        for x in &mut b.emis {
            *x *= f;
        }
        for l in &mut b.lines {
            l.flux *= f;
        }
    }
}

fn early_star(b: &mut Builder, r: &mut Rng) {
    let t = r.range(8000.0, 15000.0);
    let jump = r.range(0.3, 0.55);
    b.set_continuum(|w| planck(w, t) * (1.0 - jump * (1.0 - step(w, 3660.0, 18.0))));
    b.param("temperature_k", t);
    b.param("balmer_jump", jump);
    let ew = 3.0 + 12.0 * (-((t - 9500.0) / 5000.0).powi(2)).exp();
    let fw = r.range(1200.0, 2200.0);
    for (name, f) in [
        ("H-alpha", 0.8),
        ("H-beta", 1.0),
        ("H-gamma", 1.0),
        ("H-delta", 1.0),
        ("H-epsilon", 0.85),
        ("H8", 0.7),
        ("H9", 0.6),
        ("H10", 0.5),
        ("H11", 0.4),
        ("H12", 0.3),
    ] {
        b.broad_absorption(name, fw, ew * f);
    }
    let ca = if t < 10000.0 {
        r.range(0.6, 2.0)
    } else {
        r.range(0.2, 0.6)
    };
    let vsini = r.range(60.0, 200.0);
    b.absorption("Ca II K", vsini.max(120.0), ca);
    b.absorption("Mg I 4481", vsini.max(120.0), r.range(0.25, 0.6));
    if t > 11000.0 {
        b.absorption("He I 4471", vsini.max(120.0), r.range(0.3, 0.9));
    }
    b.metal_forest(0.12, vsini);
}

fn solar_star(b: &mut Builder, r: &mut Rng) {
    let t = r.range(4800.0, 6500.0);
    let q = (6500.0 - t) / 1700.0;
    let blanket = 0.15 + 0.2 * q;
    b.set_continuum(|w| planck(w, t) * (1.0 - blanket * (1.0 - step(w, 4000.0, 60.0))));
    b.param("temperature_k", t);
    let j = |r: &mut Rng| r.range(0.85, 1.15);
    b.broad_absorption("Ca II K", 700.0, (9.0 + 8.0 * q) * j(r));
    b.broad_absorption("Ca II H", 700.0, (8.0 + 7.0 * q) * j(r));
    for (name, ew) in [
        ("H-alpha", 3.5 - 1.5 * q),
        ("H-beta", 3.5 - 1.5 * q),
        ("H-gamma", 2.5 - 1.0 * q),
        ("H-delta", 2.5 - 1.0 * q),
    ] {
        b.absorption(name, 450.0, ew * j(r));
    }
    b.absorption("G band", 1000.0, (4.0 + 3.0 * q) * j(r));
    for name in ["Mg I 5167", "Mg I 5173", "Mg I 5184"] {
        b.absorption(name, 160.0, (1.1 + 0.8 * q) * j(r));
    }
    b.absorption("Na D2", 110.0, (0.8 + 0.9 * q) * j(r));
    b.absorption("Na D1", 110.0, (0.7 + 0.8 * q) * j(r));
    b.absorption("Fe I 5270", 200.0, (1.2 + 0.8 * q) * j(r));
    b.absorption("Fe I 5328", 200.0, (1.0 + 0.7 * q) * j(r));
    b.absorption("Ca I 4227", 150.0, (0.9 + 1.5 * q) * j(r));
    for name in ["Fe I 4046", "Fe I 4384", "Fe I 4958"] {
        b.absorption(name, 120.0, (0.5 + 0.4 * q) * j(r));
    }
    b.absorption("Ca II 8498", 200.0, (1.0 + 0.3 * q) * j(r));
    b.absorption("Ca II 8542", 200.0, (2.6 + 0.8 * q) * j(r));
    b.absorption("Ca II 8662", 200.0, (2.1 + 0.6 * q) * j(r));
    b.metal_forest(1.0 + q, r.range(12.0, 30.0));
}

fn cool_star(b: &mut Builder, r: &mut Rng) {
    let t = r.range(3000.0, 3900.0);
    let q = (3900.0 - t) / 900.0;
    b.set_continuum(|w| planck(w, t) * (1.0 - 0.4 * (1.0 - step(w, 4100.0, 80.0))));
    b.param("temperature_k", t);
    for (name, d0, d1) in [
        ("TiO 4954", 0.15, 0.30),
        ("TiO 5167", 0.15, 0.35),
        ("TiO 5448", 0.10, 0.25),
        ("TiO 5847", 0.10, 0.20),
        ("TiO 6158", 0.20, 0.30),
        ("CaH 6382", 0.10, 0.15),
        ("TiO 6651", 0.10, 0.20),
        ("CaH 6750", 0.10, 0.10),
        ("TiO 7054", 0.30, 0.40),
        ("TiO 7589", 0.25, 0.35),
        ("TiO 8432", 0.10, 0.20),
    ] {
        let scale = r.range(60.0, 150.0);
        b.band_head(name, (d0 + d1 * q) * r.range(0.85, 1.1), scale);
    }
    if q > 0.5 {
        b.band_head("VO 7400", 0.3 * (q - 0.5), 120.0);
        b.band_head("VO 7865", 0.3 * (q - 0.5), 120.0);
    }
    let j = |r: &mut Rng| r.range(0.85, 1.15);
    b.absorption("Na D2", 200.0, (2.0 + 3.0 * q) * j(r));
    b.absorption("Na D1", 200.0, (1.8 + 2.7 * q) * j(r));
    b.absorption("K I 7665", 300.0, (1.5 + 3.0 * q) * j(r));
    b.absorption("K I 7699", 300.0, (1.3 + 2.7 * q) * j(r));
    b.absorption("Ca I 4227", 300.0, (2.0 + 3.0 * q) * j(r));
    for name in ["Mg I 5167", "Mg I 5173", "Mg I 5184"] {
        b.absorption(name, 200.0, 1.4 * j(r));
    }
    b.absorption("Ca II 8498", 200.0, 0.9 * j(r));
    b.absorption("Ca II 8542", 200.0, 2.0 * j(r));
    b.absorption("Ca II 8662", 200.0, 1.6 * j(r));
    b.metal_forest(1.5, r.range(12.0, 30.0));
    if r.chance(0.3) {
        // An active M dwarf: narrow H-alpha (and H-beta) emission.
        let ew = r.range(1.0, 8.0);
        b.param("halpha_emission_ew", ew);
        b.emission_ew("H-alpha", 0.0, 60.0, ew);
        b.emission_ew("H-beta", 0.0, 60.0, 0.5 * ew);
    } else {
        b.absorption("H-alpha", 300.0, 0.5);
    }
}

fn emission_galaxy(b: &mut Builder, kind: Kind, level: f64, r: &mut Rng, vlo: f64, vhi: f64) {
    let agn = kind == Kind::AgnGalaxy;
    let young = if agn {
        r.range(0.1, 0.4)
    } else {
        r.range(0.4, 0.9)
    };
    let brk = if agn {
        r.range(1.3, 1.8)
    } else {
        r.range(1.05, 1.3)
    };
    let ebv = if agn {
        r.range(0.1, 0.7)
    } else {
        r.range(0.0, 0.5)
    };
    b.param("young_fraction", young);
    b.param("ebv_gas", ebv);
    let p_old = planck(5500.0, 4500.0);
    let p_young = planck(5500.0, 15000.0);
    b.set_continuum(|w| {
        let shape =
            young * planck(w, 15000.0) / p_young + (1.0 - young) * planck(w, 4500.0) / p_old;
        // Stars see about 0.44 of the gas reddening (Calzetti et al. 2000).
        shape
            * (1.0 / brk + (1.0 - 1.0 / brk) * step(w, 3990.0, 45.0))
            * 10f64.powf(-0.4 * 0.44 * ebv * calzetti_k(w))
    });
    // Normalise now so equivalent widths refer to the final continuum.
    normalise(b, level, vlo, vhi);
    // Stellar absorption under the emission.
    let balmer_abs = r.range(1.0, 3.5) * young.max(0.3);
    for name in ["H-beta", "H-gamma", "H-delta", "H8", "H9"] {
        b.absorption(name, 1500.0, balmer_abs);
    }
    b.absorption("Ca II K", 500.0, r.range(1.0, 3.0) * (1.0 - young) * 2.5);
    b.absorption("Mg I 5173", 400.0, r.range(0.8, 2.0) * (1.0 - young) * 2.0);
    b.absorption("Na D2", 300.0, r.range(0.8, 2.0) * (1.0 - young) * 1.5);

    // Line ratios on the diagnostic diagram.
    let x = if agn {
        r.range(-0.35, 0.25)
    } else {
        r.range(-1.3, -0.45)
    };
    let y = if agn {
        // Above Kewley et al. (2001): y > 0.61 / (x - 0.47) + 1.19.
        let yk = 0.61 / (x - 0.47) + 1.19;
        r.range((yk + 0.15).max(0.5), 1.25)
    } else {
        // Below Kauffmann et al. (2003): y < 0.61 / (x - 0.05) + 1.3.
        let yk = 0.61 / (x - 0.05) + 1.3;
        r.range((yk - 1.0).max(-1.0), (yk - 0.1).min(0.9))
    };
    b.param("log_nii_halpha", x);
    b.param("log_oiii_hbeta", y);
    let fwhm = if agn {
        r.range(250.0, 600.0)
    } else {
        r.range(60.0, 250.0)
    };
    let ew_ha = if agn {
        10f64.powf(r.range(0.7, 1.7))
    } else {
        10f64.powf(r.range(1.0, 2.3))
    };
    let att = |w: f64| 10f64.powf(-0.4 * ebv * calzetti_k(w));
    // Intrinsic H-alpha flux from its observed equivalent width.
    let ha_obs = ew_ha * b.s * b.cont_at(rest("H-alpha") * b.s);
    let ha = ha_obs / att(rest("H-alpha"));
    // Case B at 10^4 K (Osterbrock & Ferland 2006, table 4.4).
    let hb = ha / 2.86;
    let put = |b: &mut Builder, name: &str, intrinsic: f64| {
        let f = intrinsic * att(rest(name));
        b.emission_flux(name, 0.0, fwhm, f);
    };
    put(b, "H-alpha", ha);
    put(b, "H-beta", hb);
    put(b, "H-gamma", 0.468 * hb);
    put(b, "H-delta", 0.259 * hb);
    put(b, "H-epsilon", 0.159 * hb);
    let o3 = hb * 10f64.powf(y);
    put(b, "[O III] 5007", o3);
    // [O III] 5007/4959 = 2.98 (Storey & Zeippen 2000).
    put(b, "[O III] 4959", o3 / 2.98);
    let n2 = ha * 10f64.powf(x);
    put(b, "[N II] 6584", n2);
    // [N II] 6584/6548 = 3.05 (Osterbrock & Ferland 2006).
    put(b, "[N II] 6548", n2 / 3.05);
    let (s2_lo, s2_hi, sr_lo, sr_hi) = if agn {
        (-0.4, 0.0, 0.7, 1.2)
    } else {
        (-0.7, -0.35, 0.9, 1.4)
    };
    let s2 = ha * 10f64.powf(r.range(s2_lo, s2_hi));
    let sr = r.range(sr_lo, sr_hi);
    put(b, "[S II] 6716", s2 * sr / (1.0 + sr));
    put(b, "[S II] 6731", s2 / (1.0 + sr));
    let (o2_lo, o2_hi, or_lo, or_hi) = if agn {
        (0.3, 0.8, 0.8, 1.3)
    } else {
        (0.0, 0.6, 1.0, 1.45)
    };
    let o2 = hb * 10f64.powf(r.range(o2_lo, o2_hi));
    let orat = r.range(or_lo, or_hi);
    put(b, "[O II] 3729", o2 * orat / (1.0 + orat));
    put(b, "[O II] 3726", o2 / (1.0 + orat));
    put(b, "[Ne III] 3869", o3 * r.range(0.05, 0.15));
    let o1 = if agn {
        10f64.powf(r.range(-1.1, -0.6))
    } else {
        10f64.powf(r.range(-1.8, -1.3))
    };
    put(b, "[O I] 6300", ha * o1);
    if agn {
        put(b, "He II 4686", hb * r.range(0.15, 0.35));
        put(b, "[Ne V] 3426", hb * 10f64.powf(r.range(-0.5, 0.0)));
    } else {
        put(b, "He I 5876", hb * r.range(0.09, 0.13));
    }
}

fn passive_galaxy(b: &mut Builder, r: &mut Rng) {
    let t = r.range(4200.0, 5200.0);
    let brk = r.range(1.4, 2.1);
    b.set_continuum(|w| planck(w, t) * (1.0 / brk + (1.0 - 1.0 / brk) * step(w, 3990.0, 45.0)));
    b.param("temperature_k", t);
    b.param("break_ratio", brk);
    let disp = r.range(120.0, 300.0);
    b.param("velocity_dispersion_kms", disp);
    let broad = |fw: f64| (fw * fw + (FWHM_PER_SIGMA * disp).powi(2)).sqrt();
    b.band_head("CN 3883", r.range(0.08, 0.18), 70.0);
    b.absorption("Ca II K", broad(900.0), r.range(7.0, 12.0));
    b.absorption("Ca II H", broad(900.0), r.range(6.0, 10.0));
    b.absorption("Ca I 4227", broad(300.0), r.range(1.0, 1.5));
    b.absorption("G band", broad(1000.0), r.range(3.5, 6.0));
    b.absorption("H-delta", broad(500.0), r.range(1.0, 2.5));
    b.absorption("H-gamma", broad(500.0), r.range(1.0, 2.5));
    b.absorption("H-beta", broad(500.0), r.range(1.5, 3.0));
    for name in ["Mg I 5167", "Mg I 5173", "Mg I 5184"] {
        b.absorption(name, broad(160.0), r.range(1.3, 2.2));
    }
    b.absorption("Fe I 5270", broad(200.0), r.range(2.0, 3.0));
    b.absorption("Fe I 5328", broad(200.0), r.range(1.5, 2.5));
    b.absorption("Na D2", broad(150.0), r.range(1.3, 2.5));
    b.absorption("Na D1", broad(150.0), r.range(1.2, 2.3));
    b.absorption("H-alpha", broad(500.0), r.range(1.0, 2.0));
    b.absorption("Ca II 8498", broad(200.0), r.range(1.0, 2.0));
    b.absorption("Ca II 8542", broad(200.0), r.range(2.0, 3.0));
    b.absorption("Ca II 8662", broad(200.0), r.range(1.5, 2.5));
    b.metal_forest(1.0, broad(20.0));
    if r.chance(0.2) {
        let ew = r.range(2.0, 6.0);
        b.emission_ew("[O II] 3729", 0.0, broad(100.0), 0.55 * ew);
        b.emission_ew("[O II] 3726", 0.0, broad(100.0), 0.45 * ew);
    }
}

fn quasar(b: &mut Builder, r: &mut Rng) {
    let beta = r.range(-2.0, -1.0);
    let bump = r.range(0.08, 0.25);
    b.set_continuum(|w| {
        (w / 3000.0).powf(beta) * (1.0 + bump * (-0.5 * ((w - 3000.0) / 550.0).powi(2)).exp())
    });
    b.param("power_law_beta", beta);
    let f0 = r.range(2000.0, 8000.0);
    b.param("fwhm_kms", f0);
    let c4_shift = -r.range(0.0, 600.0);
    b.param("civ_shift_kms", c4_shift);
    for (name, ew_lo, ew_hi, fmul, shift) in [
        ("Ly-alpha broad", 50.0, 120.0, 1.0, 0.0),
        ("N V 1240", 8.0, 25.0, 0.8, 0.0),
        ("Si IV+O IV] 1400", 4.0, 12.0, 1.0, 0.6 * c4_shift),
        ("C IV 1549", 20.0, 50.0, 1.0, c4_shift),
        ("He II 1640", 1.0, 4.0, 1.0, 0.0),
        ("C III] 1909", 12.0, 30.0, 1.2, 0.0),
        ("Mg II 2798", 20.0, 50.0, 0.9, 0.0),
        ("H-delta", 4.0, 10.0, 1.0, 0.0),
        ("H-gamma broad", 8.0, 20.0, 1.0, 0.0),
        ("H-beta broad", 30.0, 70.0, 1.0, 0.0),
        ("H-alpha broad", 150.0, 350.0, 0.9, 0.0),
    ] {
        let ew = r.range(ew_lo, ew_hi);
        b.emission_ew(name, shift, f0 * fmul, ew);
    }
    let o3 = r.range(3.0, 25.0);
    let nfw = r.range(300.0, 700.0);
    let f = b.emission_ew("[O III] 5007", 0.0, nfw, o3);
    // [O III] 5007/4959 = 2.98 (Storey & Zeippen 2000).
    b.emission_flux("[O III] 4959", 0.0, nfw, f / 2.98);
    b.emission_ew("[O II] 3729", 0.0, nfw, r.range(0.5, 2.0));
    forest(b, r);
    // An intervening Mg II absorber on a quarter of the sight lines.
    if r.chance(0.25) && b.s > 1.4 {
        let za = r.range(0.3, b.s - 1.05);
        let s_a = 1.0 + za;
        let ew1 = r.range(0.5, 2.5);
        let ew2 = ew1 * r.range(0.5, 1.0);
        for (name, ew) in [("Mg II 2796", ew1), ("Mg II 2803", ew2)] {
            let obs = rest(name) * s_a;
            Builder::gaussian_absorption(&b.fine, &mut b.trans, obs, 40.0, ew * s_a);
            b.nuisances.push(PlacedNuisance {
                kind: NuisanceKind::Intervening,
                name: format!("{name} absorber z={za:.4}"),
                lo: obs,
                hi: obs,
                amplitude: ew,
            });
        }
    }
}

/// The Lyman-alpha (and beta) forest and the Lyman limit, as optical depth.
fn forest(b: &mut Builder, r: &mut Rng) {
    let lya = rest("Ly-alpha");
    let lyb = rest("Ly-beta");
    let lyman_limit = 911.75;
    let s = b.s;
    let wmin = b.fine.wave[0];
    let z_lo = (wmin / lya - 1.0).max(0.0);
    // Proximity zone: no absorbers within ~1500 km/s of the quasar.
    let z_hi = s * (1.0 - 1500.0 / C_KM_S) - 1.0;
    if z_hi <= z_lo {
        return;
    }
    let nf = b.fine.len();
    let mut tau = vec![0.0; nf];
    let mut za = z_lo;
    let mut count = 0usize;
    loop {
        // Poisson process with dN/dz = 40 (1 + z)^2.4 (invented, near the
        // observed growth of the forest with z).
        let rate = 40.0 * (1.0 + za).powf(2.4);
        za += -(1.0 - r.uniform()).ln() / rate;
        if za >= z_hi {
            break;
        }
        count += 1;
        // Central optical depth, p(tau) ~ tau^-1.6 on [0.05, 30].
        let u = r.uniform();
        let (a, c) = (0.05f64.powf(-0.6), 30f64.powf(-0.6));
        let tau0 = (a + u * (c - a)).powf(-1.0 / 0.6);
        let bkms = r.range(18.0, 45.0);
        for (wr, f) in [(lya, 1.0), (lyb, 0.16)] {
            let obs = wr * (1.0 + za);
            let sig_ln = bkms / C_KM_S;
            b.fine.around(obs, sig_ln, 4.0, |k, x| {
                tau[k] += f * tau0 * (-x * x).exp();
            });
        }
    }
    // Rescale so the mean transmission follows the effective optical depth
    // tau_eff = 0.0018 (1 + z)^3.92 (Faucher-Giguere et al. 2008, from memory).
    let (p, q) = b.fine.span(lyb * s, lya * s);
    let mut target = 0.0;
    let mut m = 0usize;
    for k in p..q {
        let zk = b.fine.wave[k] / lya - 1.0;
        target += (-0.0018 * (1.0 + zk).powf(3.92)).exp();
        m += 1;
    }
    let mut scale = 1.0;
    if m > 50 {
        target /= m as f64;
        let mean_t =
            |sc: f64| -> f64 { (p..q).map(|k| (-sc * tau[k]).exp()).sum::<f64>() / m as f64 };
        let (mut lo, mut hi) = (0.01f64, 50.0f64);
        for _ in 0..40 {
            let mid = (lo * hi).sqrt();
            if mean_t(mid) > target {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        scale = (lo * hi).sqrt();
        b.param("forest_mean_transmission", mean_t(scale));
    }
    let tau_ll = r.range(0.5, 4.0);
    let ll = lyman_limit * s;
    for ((tr, w), tk) in b.trans.iter_mut().zip(&b.fine.wave).zip(&tau) {
        let mut t = scale * tk;
        if *w < ll {
            t += tau_ll * (w / ll).powi(3);
        }
        *tr *= (-t).exp();
    }
    b.param("forest_absorbers", count as f64);
    b.param("lyman_limit_tau", tau_ll);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn calzetti_curve_gives_the_usual_balmer_line_values() {
        // k(H-alpha) = 3.33 and k(H-beta) = 4.60 for the Calzetti et al. (2000)
        // curve, as commonly quoted (from memory).
        assert!((calzetti_k(6564.6) - 3.33).abs() < 0.01);
        assert!((calzetti_k(4862.7) - 4.60).abs() < 0.01);
        // The published branches meet at 0.63 um to within about 0.03; a
        // mistyped coefficient would open a much larger gap.
        let gap = (calzetti_k(6299.9) - calzetti_k(6300.1)).abs();
        assert!(gap < 0.05, "{gap}");
    }

    #[test]
    fn rebinning_conserves_flux() {
        let fine = Fine::new(4000.0, 6000.0, 5.0);
        let mut v = vec![0.0; fine.len()];
        add_line(&fine, &mut v, 5000.0, 10.0);
        let out: Vec<f64> = (0..1000).map(|i| 4100.0 + i as f64 * 1.7).collect();
        let o = rebin(&fine, &v, &out);
        let total: f64 = o.iter().sum::<f64>() * 1.7;
        assert!((total - 10.0).abs() < 1e-3, "{total}");
    }
}
