//! Test sets: many seeded synthetic spectra of every kind, S/N, set-up,
//! layout and medium, and the rule that says whether an answer is right.
//!
//! Used by the accuracy benchmark (`benches/accuracy.rs`), the fast accuracy
//! test, and the comparison with the reference numpy/scipy pipeline (which
//! reads the files [`write_set`] writes, listed in `manifest.csv`).

use super::write::{Format, write};
use super::{Instrument, Kind, SynthSpec, Synthetic, Truth, generate, rng::Rng};
use crate::lines::ObjectClass;
use crate::spectrum::Medium;
use std::fmt::Write as _;
use std::io;
use std::path::{Path, PathBuf};

/// One planned test spectrum.
#[derive(Debug, Clone, PartialEq)]
pub struct Case {
    /// Index in the set.
    pub index: usize,
    /// The spec (kind, z, S/N, set-up, nuisances).
    pub spec: SynthSpec,
    /// Seed for [`generate`].
    pub seed: u64,
    /// File layout it is written in.
    pub format: Format,
    /// Medium of the written wavelengths.
    pub medium: Medium,
}

impl Case {
    /// Generate the spectrum.
    pub fn generate(&self) -> Synthetic {
        generate(&self.spec, self.seed)
    }

    /// File name used by [`write_set`].
    pub fn file_name(&self) -> String {
        format!(
            "{:04}_{}_{}_{}.{}",
            self.index,
            self.spec.kind.label(),
            self.format.label(),
            self.medium.as_str(),
            self.format.extension()
        )
    }
}

/// Kinds in the order a set cycles through them: every class well
/// represented (stars 3/13, galaxies 5/13, quasars 3/13, junk 2/13... per cycle).
const CYCLE: [Kind; 13] = [
    Kind::EarlyStar,
    Kind::SolarStar,
    Kind::CoolStar,
    Kind::StarFormingGalaxy,
    Kind::AgnGalaxy,
    Kind::PassiveGalaxy,
    Kind::Quasar,
    Kind::Quasar,
    Kind::StarFormingGalaxy,
    Kind::PassiveGalaxy,
    Kind::Quasar,
    Kind::JunkSmooth,
    Kind::JunkWiggles,
];

/// A set of `n` cases from `seed`: kinds cycle (with noise-only junk every
/// 26th), S/N log-uniform in 3-50, set-up, layout and medium drawn at random
/// (images in their set-up's medium).
pub fn plan(n: usize, seed: u64) -> Vec<Case> {
    let mut r = Rng::new(seed ^ 0xACC0_0000_5E75);
    let presets = Instrument::presets();
    (0..n)
        .map(|i| {
            let kind = if i % 26 == 25 {
                Kind::JunkNoise
            } else {
                CYCLE[i % CYCLE.len()]
            };
            let snr = r.log_range(3.0, 50.0);
            let inst = presets[r.below(presets.len())].clone();
            let format = *r.pick(&Format::ALL);
            let medium = if format.is_image() {
                inst.medium
            } else if r.chance(0.5) {
                Medium::Air
            } else {
                Medium::Vacuum
            };
            let spec_seed = r.next_u64();
            let spec = SynthSpec::random(kind, snr, inst, spec_seed);
            Case {
                index: i,
                spec,
                seed: r.next_u64(),
                format,
                medium,
            }
        })
        .collect()
}

/// Write every case of `cases` into `dir` and a `manifest.csv` describing
/// them (`path,kind,class,subclass,z,velocity_kms,snr,instrument,format,medium,pixels`).
/// Returns the file paths in case order.
pub fn write_set(dir: &Path, cases: &[Case]) -> io::Result<Vec<PathBuf>> {
    std::fs::create_dir_all(dir)?;
    let mut manifest = String::from(
        "path,kind,class,subclass,z,velocity_kms,snr,instrument,format,medium,pixels\n",
    );
    let mut out = Vec::with_capacity(cases.len());
    for c in cases {
        let syn = c.generate();
        let name = c.file_name();
        let path = dir.join(&name);
        write(&path, &syn, c.format, c.medium)?;
        let t = &syn.truth;
        let _ = writeln!(
            manifest,
            "{name},{},{},{},{:.8},{:.4},{:.3},{},{},{},{}",
            t.kind.label(),
            t.class.as_str(),
            t.subclass,
            t.z,
            t.velocity_kms,
            t.snr,
            t.instrument,
            c.format.label(),
            c.medium.as_str(),
            syn.spectrum.len()
        );
        out.push(path);
    }
    std::fs::write(dir.join("manifest.csv"), manifest)?;
    Ok(out)
}

/// Whether an answer is right.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Verdict {
    /// The rank-1 redshift (velocity for stars) is within tolerance; for junk,
    /// true when the class is unknown (there is no redshift to get right).
    pub z_ok: bool,
    /// The rank-1 class is the true class.
    pub class_ok: bool,
}

/// Redshift tolerance for a galaxy: |dz| <= 0.001 (1 + z).
pub const GALAXY_DZ: f64 = 0.001;
/// Redshift tolerance for a quasar: |dz| <= 0.003 (1 + z).
pub const QSO_DZ: f64 = 0.003;
/// Velocity tolerance for a star, km/s.
pub const STAR_DV_KMS: f64 = 50.0;

/// Judge a rank-1 answer (`class`, `z`; `None` when there is no candidate)
/// against the truth. Stars compare relativistic velocities.
pub fn judge(truth: &Truth, answer: Option<(ObjectClass, f64)>) -> Verdict {
    judge_values(truth.class, truth.z, answer)
}

/// [`judge`] from the true class and redshift alone.
pub fn judge_values(class: ObjectClass, z: f64, answer: Option<(ObjectClass, f64)>) -> Verdict {
    let Some((c, za)) = answer else {
        let unknown = class == ObjectClass::Unknown;
        return Verdict {
            z_ok: unknown,
            class_ok: unknown,
        };
    };
    let class_ok = c == class;
    let z_ok = match class {
        ObjectClass::Star => {
            let dv = super::velocity_from_z(za) - super::velocity_from_z(z);
            dv.abs() <= STAR_DV_KMS
        }
        ObjectClass::Galaxy => (za - z).abs() <= GALAXY_DZ * (1.0 + z),
        ObjectClass::Qso => (za - z).abs() <= QSO_DZ * (1.0 + z),
        ObjectClass::Unknown => c == ObjectClass::Unknown,
    };
    Verdict { z_ok, class_ok }
}

/// S/N bins used in the tables: 3-5, 5-10, 10-20, 20-50.
pub const SNR_BINS: [(f64, f64); 4] = [(3.0, 5.0), (5.0, 10.0), (10.0, 20.0), (20.0, 50.0)];

/// Index of the S/N bin holding `snr` (the last bin takes anything above 20,
/// the first anything below 5).
pub fn snr_bin(snr: f64) -> usize {
    SNR_BINS
        .iter()
        .position(|(lo, hi)| snr >= *lo && snr < *hi)
        .unwrap_or(if snr < SNR_BINS[0].0 {
            0
        } else {
            SNR_BINS.len() - 1
        })
}

/// One judged result, for [`table`].
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    /// True class.
    pub class: ObjectClass,
    /// Kind generated.
    pub kind: Kind,
    /// S/N of the spectrum.
    pub snr: f64,
    /// The verdict.
    pub verdict: Verdict,
}

/// A success-rate table by class (rows) and S/N bin (columns): each cell
/// `z% / class%  (n)`, plus totals, as Markdown.
pub fn table(outcomes: &[Outcome]) -> String {
    let classes = [
        ObjectClass::Star,
        ObjectClass::Galaxy,
        ObjectClass::Qso,
        ObjectClass::Unknown,
    ];
    let mut s = String::from("| class | S/N 3-5 | S/N 5-10 | S/N 10-20 | S/N 20-50 | all |\n");
    s.push_str("|---|---|---|---|---|---|\n");
    let cell = |sel: &dyn Fn(&Outcome) -> bool| -> String {
        let v: Vec<&Outcome> = outcomes.iter().filter(|o| sel(o)).collect();
        if v.is_empty() {
            return "-".into();
        }
        let z = v.iter().filter(|o| o.verdict.z_ok).count() as f64 / v.len() as f64;
        let c = v.iter().filter(|o| o.verdict.class_ok).count() as f64 / v.len() as f64;
        format!("{:.0}% / {:.0}% ({})", 100.0 * z, 100.0 * c, v.len())
    };
    for class in classes {
        let _ = write!(s, "| {} |", class.as_str());
        for b in 0..SNR_BINS.len() {
            let _ = write!(
                s,
                " {} |",
                cell(&|o| o.class == class && snr_bin(o.snr) == b)
            );
        }
        let _ = writeln!(s, " {} |", cell(&|o| o.class == class));
    }
    let _ = write!(s, "| **all** |");
    for b in 0..SNR_BINS.len() {
        let _ = write!(s, " {} |", cell(&|o| snr_bin(o.snr) == b));
    }
    let _ = writeln!(s, " {} |", cell(&|_| true));
    s
}

/// The same table by kind (rows), all S/N together.
pub fn kind_table(outcomes: &[Outcome]) -> String {
    let mut s = String::from("| kind | z right | class right | n |\n|---|---|---|---|\n");
    for k in Kind::ALL {
        let v: Vec<&Outcome> = outcomes.iter().filter(|o| o.kind == k).collect();
        if v.is_empty() {
            continue;
        }
        let z = v.iter().filter(|o| o.verdict.z_ok).count() as f64 / v.len() as f64;
        let c = v.iter().filter(|o| o.verdict.class_ok).count() as f64 / v.len() as f64;
        let _ = writeln!(
            s,
            "| {} | {:.0}% | {:.0}% | {} |",
            k.label(),
            100.0 * z,
            100.0 * c,
            v.len()
        );
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tolerances_follow_the_stated_rules() {
        use ObjectClass::*;
        let z = 1.0;
        assert!(judge_values(Galaxy, z, Some((Galaxy, z + 0.0019))).z_ok);
        assert!(!judge_values(Galaxy, z, Some((Galaxy, z + 0.0021))).z_ok);
        assert!(judge_values(Qso, z, Some((Qso, z - 0.0059))).z_ok);
        assert!(!judge_values(Qso, z, Some((Qso, z - 0.0061))).z_ok);
        let zs = super::super::z_from_velocity(100.0);
        let z_ok = |v: f64| judge_values(Star, zs, Some((Star, super::super::z_from_velocity(v))));
        assert!(z_ok(149.0).z_ok && !z_ok(151.0).z_ok);
        assert!(judge_values(Unknown, 0.0, None).class_ok);
        assert!(!judge_values(Galaxy, 0.3, None).z_ok);
        let v = judge_values(Galaxy, 0.3, Some((Qso, 0.3)));
        assert!(v.z_ok && !v.class_ok);
    }

    #[test]
    fn a_plan_is_reproducible_and_covers_every_class_layout_and_medium() {
        let a = plan(60, 1);
        assert_eq!(a, plan(60, 1));
        for f in Format::ALL {
            assert!(a.iter().any(|c| c.format == f), "{f:?}");
        }
        for k in [
            Kind::EarlyStar,
            Kind::Quasar,
            Kind::JunkNoise,
            Kind::PassiveGalaxy,
        ] {
            assert!(a.iter().any(|c| c.spec.kind == k), "{k:?}");
        }
        assert!(a.iter().any(|c| c.medium == Medium::Air));
        assert!(a.iter().any(|c| c.medium == Medium::Vacuum));
        assert!(a.iter().all(|c| (3.0..50.0).contains(&c.spec.snr)));
    }
}
