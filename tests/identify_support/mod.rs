//! Shared helpers of the identifier tests: a small hand-made catalogue and a
//! seeded generator of synthetic spectra with known truth (stars, galaxies,
//! quasars, junk; sky residuals, cosmic rays, telluric bands, calibration
//! ripples). The generator is invented for synthetic-truth tests; its truth
//! is the check. Rest wavelengths are vacuum Angstrom, from memory of the
//! NIST Atomic Spectra Database values (rounded to 0.01 A).
#![allow(dead_code)]

use zsift::lines::{
    Catalogue, Foreground, ForegroundKind, Line, LineKind, ObjectClass, Ratio, Width,
};
use zsift::spectrum::{Metadata, Spectrum};

/// A small catalogue: enough lines of every class to test the identifier
/// before the built-in one lands, and to keep tests independent of it.
pub fn catalogue() -> Catalogue {
    use LineKind::*;
    use ObjectClass::*;
    let g = [Galaxy];
    let gq = [Galaxy, Qso];
    let s = [Star];
    let gs = [Galaxy, Star];
    let q = [Qso];
    #[allow(clippy::type_complexity)]
    let rows: Vec<(
        &str,
        &str,
        f64,
        LineKind,
        f64,
        &[ObjectClass],
        Width,
        Option<&str>,
    )> = vec![
        (
            "Ly-alpha",
            "H I",
            1215.67,
            Emission,
            1.0,
            &q,
            Width::Broad,
            None,
        ),
        (
            "N V 1240",
            "N V",
            1240.14,
            Emission,
            0.3,
            &q,
            Width::Broad,
            None,
        ),
        (
            "Si IV 1398",
            "Si IV",
            1397.61,
            Emission,
            0.2,
            &q,
            Width::Broad,
            None,
        ),
        (
            "C IV 1549",
            "C IV",
            1549.06,
            Emission,
            0.7,
            &q,
            Width::Broad,
            None,
        ),
        (
            "C III] 1909",
            "C III]",
            1908.73,
            Emission,
            0.5,
            &q,
            Width::Broad,
            None,
        ),
        (
            "Mg II 2799",
            "Mg II",
            2799.12,
            Emission,
            0.6,
            &q,
            Width::Broad,
            None,
        ),
        (
            "[O II] 3726",
            "[O II]",
            3727.09,
            Emission,
            0.8,
            &gq,
            Width::Narrow,
            Some("[O II]"),
        ),
        (
            "[O II] 3729",
            "[O II]",
            3729.88,
            Emission,
            0.8,
            &gq,
            Width::Narrow,
            Some("[O II]"),
        ),
        (
            "[Ne III] 3869",
            "[Ne III]",
            3870.16,
            Emission,
            0.2,
            &gq,
            Width::Narrow,
            None,
        ),
        (
            "Ca II K",
            "Ca II",
            3934.78,
            Absorption,
            1.0,
            &gs,
            Width::Narrow,
            Some("Ca II HK"),
        ),
        (
            "Ca II H",
            "Ca II",
            3969.59,
            Absorption,
            0.9,
            &gs,
            Width::Narrow,
            Some("Ca II HK"),
        ),
        (
            "H-delta",
            "H I",
            4102.89,
            Both,
            0.4,
            &gs,
            Width::Narrow,
            Some("Balmer"),
        ),
        (
            "G band",
            "CH",
            4305.61,
            Absorption,
            0.6,
            &gs,
            Width::Narrow,
            None,
        ),
        (
            "H-gamma",
            "H I",
            4341.69,
            Both,
            0.5,
            &gs,
            Width::Narrow,
            Some("Balmer"),
        ),
        (
            "H-beta",
            "H I",
            4862.68,
            Both,
            0.7,
            &gs,
            Width::Narrow,
            Some("Balmer"),
        ),
        (
            "[O III] 4959",
            "[O III]",
            4960.30,
            Emission,
            0.35,
            &gq,
            Width::Narrow,
            Some("[O III]"),
        ),
        (
            "[O III] 5007",
            "[O III]",
            5008.24,
            Emission,
            1.0,
            &gq,
            Width::Narrow,
            Some("[O III]"),
        ),
        (
            "Mg b 5167",
            "Mg I",
            5168.76,
            Absorption,
            0.4,
            &gs,
            Width::Narrow,
            Some("Mg b"),
        ),
        (
            "Mg b 5173",
            "Mg I",
            5174.13,
            Absorption,
            0.5,
            &gs,
            Width::Narrow,
            Some("Mg b"),
        ),
        (
            "Mg b 5184",
            "Mg I",
            5185.05,
            Absorption,
            0.6,
            &gs,
            Width::Narrow,
            Some("Mg b"),
        ),
        (
            "Na D2",
            "Na I",
            5891.58,
            Absorption,
            0.6,
            &gs,
            Width::Narrow,
            Some("Na D"),
        ),
        (
            "Na D1",
            "Na I",
            5897.56,
            Absorption,
            0.5,
            &gs,
            Width::Narrow,
            Some("Na D"),
        ),
        (
            "[N II] 6548",
            "[N II]",
            6549.86,
            Emission,
            0.3,
            &g,
            Width::Narrow,
            Some("[N II]"),
        ),
        (
            "H-alpha",
            "H I",
            6564.61,
            Both,
            1.0,
            &gs,
            Width::Narrow,
            Some("Balmer"),
        ),
        (
            "[N II] 6584",
            "[N II]",
            6585.27,
            Emission,
            0.6,
            &g,
            Width::Narrow,
            Some("[N II]"),
        ),
        (
            "[S II] 6716",
            "[S II]",
            6718.29,
            Emission,
            0.4,
            &g,
            Width::Narrow,
            Some("[S II]"),
        ),
        (
            "[S II] 6731",
            "[S II]",
            6732.67,
            Emission,
            0.3,
            &g,
            Width::Narrow,
            Some("[S II]"),
        ),
        (
            "Ca II 8498",
            "Ca II",
            8500.36,
            Absorption,
            0.4,
            &s,
            Width::Narrow,
            Some("Ca II triplet"),
        ),
        (
            "Ca II 8542",
            "Ca II",
            8544.44,
            Absorption,
            0.6,
            &s,
            Width::Narrow,
            Some("Ca II triplet"),
        ),
        (
            "Ca II 8662",
            "Ca II",
            8664.52,
            Absorption,
            0.5,
            &s,
            Width::Narrow,
            Some("Ca II triplet"),
        ),
        (
            "H-beta broad",
            "H I",
            4862.68,
            Emission,
            0.6,
            &q,
            Width::Broad,
            None,
        ),
        (
            "H-alpha broad",
            "H I",
            6564.61,
            Emission,
            1.0,
            &q,
            Width::Broad,
            None,
        ),
        (
            "H-gamma broad",
            "H I",
            4341.69,
            Emission,
            0.3,
            &q,
            Width::Broad,
            None,
        ),
    ];
    let mut lines: Vec<Line> = rows
        .into_iter()
        .map(
            |(name, species, wavelength, kind, strength, classes, width, group)| Line {
                name: name.to_string(),
                species: species.to_string(),
                wavelength,
                kind,
                strength,
                classes: classes.to_vec(),
                width,
                group: group.map(str::to_string),
            },
        )
        .collect();
    lines.sort_by(|a, b| a.wavelength.total_cmp(&b.wavelength));
    let ratio = |n: &str, d: &str, v: f64, r: (f64, f64), src: &str| Ratio {
        numerator: n.into(),
        denominator: d.into(),
        value: v,
        range: r,
        source: src.into(),
    };
    let ratios = vec![
        // Osterbrock & Ferland (2006): transition-probability ratios ~2.98 and ~3.05.
        ratio(
            "[O III] 5007",
            "[O III] 4959",
            2.98,
            (2.6, 3.4),
            "Osterbrock & Ferland 2006",
        ),
        ratio(
            "[N II] 6584",
            "[N II] 6548",
            3.05,
            (2.6, 3.5),
            "Osterbrock & Ferland 2006",
        ),
    ];
    let fg = |name: &str, kind, lo: f64, hi: f64, strength| Foreground {
        name: name.into(),
        kind,
        lo,
        hi,
        strength,
    };
    // Sky lines (vacuum) and telluric bands, from memory.
    let foreground = vec![
        fg("[O I] 5577 sky", ForegroundKind::Sky, 5578.89, 5578.89, 1.0),
        fg("[O I] 6300 sky", ForegroundKind::Sky, 6302.05, 6302.05, 0.8),
        fg("[O I] 6364 sky", ForegroundKind::Sky, 6365.54, 6365.54, 0.4),
        fg("O2 B band", ForegroundKind::Telluric, 6868.0, 6960.0, 0.6),
        fg("O2 A band", ForegroundKind::Telluric, 7595.0, 7710.0, 1.0),
    ];
    Catalogue {
        lines,
        ratios,
        foreground,
    }
}

#[path = "../features_common/rng.rs"]
mod rng;
pub use rng::Rng;

/// What to generate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Kind {
    EmissionGalaxy,
    AbsorptionGalaxy,
    StarEarly,
    StarLate,
    Quasar,
    Junk,
}

impl Kind {
    pub fn class(self) -> ObjectClass {
        match self {
            Kind::EmissionGalaxy | Kind::AbsorptionGalaxy => ObjectClass::Galaxy,
            Kind::StarEarly | Kind::StarLate => ObjectClass::Star,
            Kind::Quasar => ObjectClass::Qso,
            Kind::Junk => ObjectClass::Unknown,
        }
    }
    pub fn name(self) -> &'static str {
        match self {
            Kind::EmissionGalaxy => "emission galaxy",
            Kind::AbsorptionGalaxy => "absorption galaxy",
            Kind::StarEarly => "early star",
            Kind::StarLate => "late star",
            Kind::Quasar => "quasar",
            Kind::Junk => "junk",
        }
    }
}

/// Options of one synthetic spectrum.
#[derive(Debug, Clone, Copy)]
pub struct Spec {
    pub kind: Kind,
    /// Redshift (stars: from the velocity).
    pub z: f64,
    /// Continuum S/N per pixel.
    pub snr: f64,
    /// Resolving power.
    pub resolution: f64,
    /// First wavelength.
    pub lo: f64,
    /// Last wavelength.
    pub hi: f64,
    /// Add two sky residuals, a cosmic ray, telluric bands.
    pub nuisances: bool,
    /// Add slow calibration ripples.
    pub ripples: bool,
}

/// One generated spectrum and its truth.
pub struct Synth {
    pub spectrum: Spectrum,
    pub spec: Spec,
}

fn gauss(x: f64, c: f64, s: f64) -> f64 {
    (-0.5 * ((x - c) / s).powi(2)).exp()
}

/// A random spectrum of `kind` with continuum S/N `snr`.
pub fn random_spec(kind: Kind, snr: f64, rng: &mut Rng) -> Spec {
    let resolution = [600.0, 1200.0, 2500.0, 4500.0][(rng.uniform() * 4.0) as usize % 4];
    let lo = rng.range(3600.0, 4200.0);
    let hi = rng.range(8200.0, 9600.0);
    let z = match kind {
        Kind::EmissionGalaxy => rng.range(0.01, 0.45),
        Kind::AbsorptionGalaxy => rng.range(0.02, 0.5),
        Kind::StarEarly | Kind::StarLate => {
            let v: f64 = rng.range(-400.0, 400.0);
            let b = v / 299_792.458;
            ((1.0 + b) / (1.0 - b)).sqrt() - 1.0
        }
        Kind::Quasar => rng.range(0.25, 4.0),
        Kind::Junk => 0.0,
    };
    Spec {
        kind,
        z,
        snr,
        resolution,
        lo,
        hi,
        nuisances: rng.uniform() < 0.5,
        ripples: false,
    }
}

/// Generate a spectrum for `spec` with noise from `seed`.
pub fn generate(spec: Spec, seed: u64) -> Synth {
    let mut rng = Rng::new(seed);
    let c = 299_792.458;
    let dl = 0.5 * (spec.lo + spec.hi) / (2.5 * spec.resolution);
    let n = ((spec.hi - spec.lo) / dl) as usize;
    let wave: Vec<f64> = (0..n).map(|i| spec.lo + i as f64 * dl).collect();
    let s1 = 1.0 + spec.z;
    let instr = c / spec.resolution / 2.3548;
    // Continuum shape.
    let slope = rng.range(-1.5, 1.0);
    let mut cont: Vec<f64> = wave.iter().map(|w| (w / 6000.0).powf(slope)).collect();
    let mut model = cont.clone();
    let add = |model: &mut [f64], rest: f64, amp: f64, sig_kms: f64| {
        let lam = rest * s1;
        let sl = lam * sig_kms / c;
        for (m, w) in model.iter_mut().zip(&wave) {
            if (w - lam).abs() < 6.0 * sl {
                *m += amp * gauss(*w, lam, sl);
            }
        }
    };
    match spec.kind {
        Kind::EmissionGalaxy => {
            let sig = (instr * instr + rng.range(30.0, 120.0).powi(2)).sqrt();
            // Line peak heights relative to continuum, scaled so lines of a
            // galaxy at continuum S/N 3 are still seen.
            let ha = rng.range(1.5, 6.0) * (60.0 / sig).sqrt();
            let hb = ha / (2.86 * rng.range(1.0, 1.8));
            let n2 = ha * 10f64.powf(rng.range(-1.2, -0.3));
            let o3 = hb * 10f64.powf(rng.range(-0.6, 0.7));
            let o2 = hb * rng.range(1.0, 3.0);
            let q = rng.range(0.7, 1.3);
            for (rest, a) in [
                (6564.61, ha),
                (4862.68, hb),
                (4341.69, hb * 0.47),
                (4102.89, hb * 0.26),
                (6585.27, n2),
                (6549.86, n2 / 3.05),
                (5008.24, o3),
                (4960.30, o3 / 2.98),
                (3727.09, o2 / (1.0 + q)),
                (3729.88, o2 * q / (1.0 + q)),
                (6718.29, ha * 0.18),
                (6732.67, ha * 0.13),
                (3870.16, o3 * 0.08),
            ] {
                add(&mut model, rest, a, sig);
            }
            for (rest, d) in [(3934.78, 0.15), (3969.59, 0.12)] {
                add(
                    &mut model,
                    rest,
                    -d * (rest * s1 / 6000.0).powf(slope),
                    250.0,
                );
            }
        }
        Kind::AbsorptionGalaxy => {
            // 4000 A break.
            for (k, w) in wave.iter().enumerate() {
                if *w < 4000.0 * s1 {
                    cont[k] *= 0.6;
                    model[k] *= 0.6;
                }
            }
            let sig = (instr * instr + rng.range(120.0, 250.0).powi(2)).sqrt();
            for (rest, d) in [
                (3934.78, 0.45),
                (3969.59, 0.4),
                (4305.61, 0.2),
                (4341.69, 0.08),
                (4862.68, 0.08),
                (5168.76, 0.12),
                (5174.13, 0.14),
                (5185.05, 0.15),
                (5891.58, 0.12),
                (5897.56, 0.1),
                (6564.61, 0.06),
                (4102.89, 0.08),
            ] {
                let cl = (rest * s1 / 6000.0).powf(slope) * if rest < 4000.0 { 0.6 } else { 1.0 };
                add(&mut model, rest, -d * cl, sig);
            }
        }
        Kind::StarEarly | Kind::StarLate => {
            let early = spec.kind == Kind::StarEarly;
            let (bal_d, bal_w, met) = if early {
                (0.5, 900.0, 0.08)
            } else {
                (0.15, 150.0, 0.4)
            };
            let sig_m = (instr * instr + 20.0f64.powi(2)).sqrt();
            let sig_b = (instr * instr + bal_w * bal_w).sqrt();
            for (rest, d, s) in [
                (6564.61, bal_d, sig_b),
                (4862.68, bal_d, sig_b),
                (4341.69, bal_d * 0.9, sig_b),
                (4102.89, bal_d * 0.8, sig_b),
                (3971.2, bal_d * 0.7, sig_b),
                (3934.78, met * 1.5, sig_m * 1.5),
                (3969.59, met * 1.2, sig_m * 1.5),
                (4305.61, met, sig_m * 2.0),
                (5168.76, met * 0.6, sig_m),
                (5174.13, met * 0.7, sig_m),
                (5185.05, met * 0.8, sig_m),
                (5891.58, met * 0.8, sig_m),
                (5897.56, met * 0.7, sig_m),
                (8500.36, met * 0.6, sig_m),
                (8544.44, met * 0.9, sig_m),
                (8664.52, met * 0.8, sig_m),
                (5270.0, met * 0.4, sig_m),
                (4383.5, met * 0.4, sig_m),
            ] {
                let cl = (rest * s1 / 6000.0).powf(slope);
                add(&mut model, rest, -d * cl, s);
            }
        }
        Kind::Quasar => {
            let fw = rng.range(2500.0, 6000.0) / 2.3548;
            for (rest, a) in [
                (1215.67, 3.0),
                (1240.14, 0.6),
                (1397.61, 0.3),
                (1549.06, 1.5),
                (1908.73, 0.7),
                (2799.12, 0.8),
                (4341.69, 0.3),
                (4862.68, 0.6),
                (6564.61, 2.0),
            ] {
                let cl = (rest * s1 / 6000.0).powf(slope);
                add(&mut model, rest, a * cl * rng.range(0.6, 1.4), fw);
            }
            for (rest, a) in [(5008.24, 0.4), (4960.30, 0.4 / 2.98), (3727.09, 0.1)] {
                let cl = (rest * s1 / 6000.0).powf(slope);
                add(
                    &mut model,
                    rest,
                    a * cl,
                    (instr * instr + 150.0f64.powi(2)).sqrt(),
                );
            }
            // Lyman-alpha forest: many narrow absorbers blueward of Ly-alpha.
            let edge = 1215.67 * s1;
            let tau_mean = 0.0036 * s1.powf(3.46);
            let depth = 1.0 - (-tau_mean).exp();
            if edge > spec.lo {
                let nabs = ((edge - spec.lo.max(912.0 * s1)) / 6.0).max(0.0) as usize;
                for _ in 0..nabs {
                    let lam = rng.range(spec.lo.max(912.0 * s1), edge - 5.0);
                    let d = (depth * rng.range(0.5, 1.8)).min(0.95);
                    let sl = lam * (instr * instr + 25.0f64.powi(2)).sqrt() / c;
                    for (m, w) in model.iter_mut().zip(&wave) {
                        if (w - lam).abs() < 5.0 * sl {
                            *m *= 1.0 - d * gauss(*w, lam, sl);
                        }
                    }
                }
            }
        }
        Kind::Junk => {}
    }
    if spec.ripples {
        let p = rng.range(400.0, 900.0);
        let ph = rng.range(0.0, 6.3);
        for (m, w) in model.iter_mut().zip(&wave) {
            *m *= 1.0 + 0.12 * (2.0 * std::f64::consts::PI * w / p + ph).sin();
        }
    }
    // Noise from the median continuum.
    let mut sc = cont.clone();
    sc.sort_by(f64::total_cmp);
    let sigma = sc[sc.len() / 2] / spec.snr;
    if spec.nuisances {
        // Telluric bands (observed frame).
        for (a, b, d) in [(6868.0, 6960.0, 0.3), (7595.0, 7710.0, 0.6)] {
            for (m, w) in model.iter_mut().zip(&wave) {
                if *w > a && *w < b {
                    *m *= 1.0 - d * (1.0 - ((w - a) / (b - a) - 0.3).abs()).max(0.0);
                }
            }
        }
        // Sky residuals: one emission, one over-subtraction.
        for (lam, a) in [(5578.89, 8.0 * sigma), (6302.05, -5.0 * sigma)] {
            let sl = lam / spec.resolution / 2.3548;
            for (m, w) in model.iter_mut().zip(&wave) {
                if (w - lam).abs() < 5.0 * sl {
                    *m += a * gauss(*w, lam, sl);
                }
            }
        }
        // A cosmic ray.
        let k = (rng.uniform() * n as f64) as usize % n;
        model[k] += 40.0 * sigma;
    }
    let flux: Vec<f64> = model.iter().map(|m| m + sigma * rng.normal()).collect();
    let spectrum = Spectrum::new(
        wave,
        flux,
        Some(vec![sigma; n]),
        Metadata {
            target: format!("synthetic {}", spec.kind.name()),
            ..Metadata::default()
        },
    )
    .expect("valid synthetic spectrum");
    Synth { spectrum, spec }
}

/// Is the rank-1 answer right for this truth?
pub fn z_ok(spec: &Spec, z: f64) -> bool {
    let dz = (z - spec.z).abs();
    match spec.kind.class() {
        ObjectClass::Galaxy => dz <= 0.001 * (1.0 + spec.z),
        ObjectClass::Qso => dz <= 0.003 * (1.0 + spec.z),
        ObjectClass::Star => dz * 299_792.458 <= 50.0,
        ObjectClass::Unknown => true,
    }
}
