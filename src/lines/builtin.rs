//! The built-in line catalogue.
//!
//! Every entry is tabulated here in the medium its source uses (air for the
//! optical/near-IR laboratory tables above 2000 A, vacuum below) and is
//! converted to vacuum with [`crate::physics::airvac`] when the catalogue is
//! built, so the tabulated number can be compared with its source directly.
//! The source of each value is carried with the entry ([`Annotated::source`])
//! and printed by `zsift lines --format csv`.
//!
//! Honesty note on sources: the laboratory wavelengths below are the values
//! of the NIST Atomic Spectra Database (Kramida, Ralchenko, Reader & NIST ASD
//! Team) as recalled by the author, not re-fetched while writing (the
//! tool has no network); each says "from memory". They were checked against
//! each other where physics allows (hydrogen against the Bohr formula with
//! reduced mass to 2e-5, doublet spacings), see `tests/lines_catalogue.rs`.
//!
//! Hydrogen lines are computed ([`crate::physics::hydrogen`]) for every
//! series member listed, then replaced by the laboratory wavelength where one
//! is tabulated here (the computed value misses fine structure and the Lamb
//! shift, ~1e-5 relative).

use super::{Catalogue, Foreground, ForegroundKind, Line, LineKind, ObjectClass, Ratio, Width};
use crate::physics::airvac::air_to_vacuum;
use crate::physics::hydrogen::{Ion, Series, member_name};
use crate::spectrum::Medium;

use LineKind::{Absorption as Abs, Both, Emission as Em};
use ObjectClass::{Galaxy as G, Qso as Q, Star as S};
use Width::{Broad, Narrow};

/// A catalogue line with where its wavelength came from.
#[derive(Debug, Clone, PartialEq)]
pub struct Annotated {
    /// The line (vacuum wavelength).
    pub line: Line,
    /// The wavelength as tabulated by its source.
    pub tabulated: f64,
    /// The medium of the tabulated wavelength.
    pub medium: Medium,
    /// Where the value comes from.
    pub source: &'static str,
}

const NIST_AIR: &str = "NIST ASD, air (from memory)";
const NIST_VAC: &str = "NIST ASD, vacuum (from memory)";
const NIST_H: &str = "NIST ASD H I (from memory); Bohr+reduced mass agrees to <2e-5";
const COMPUTED_H: &str = "computed: Bohr levels with reduced mass, CODATA 2018";
const MORTON: &str = "Morton (2003, ApJS 149, 205), vacuum (from memory)";
const MOLECULAR: &str = "molecular line / band head, vacuum (from memory)";
const BLEND: &str = "gf-weighted mean of the NIST doublet (f-values from memory)";
const EMPIRICAL: &str = "usual blend centre in quasar work (from memory)";
const STELLAR: &str = "stellar feature centre, air (from memory)";
const TIO: &str = "TiO band head, air (from memory)";
const OH: &str = "night-sky OH line, air, Osterbrock et al. (1996) atlas (from memory; matches published sky-line lists)";
const TELLURIC: &str = "telluric band edges, air (from memory; common practice)";

/// One tabulated (non-hydrogen) line.
struct Row {
    name: &'static str,
    species: &'static str,
    wave: f64,
    medium: Medium,
    kind: LineKind,
    strength: f64,
    classes: &'static [ObjectClass],
    width: Width,
    group: Option<&'static str>,
    source: &'static str,
}

#[allow(clippy::too_many_arguments)] // a table row constructor: one argument per column
const fn air(
    name: &'static str,
    species: &'static str,
    wave: f64,
    kind: LineKind,
    strength: f64,
    classes: &'static [ObjectClass],
    width: Width,
    group: Option<&'static str>,
    source: &'static str,
) -> Row {
    Row {
        name,
        species,
        wave,
        medium: Medium::Air,
        kind,
        strength,
        classes,
        width,
        group,
        source,
    }
}

#[allow(clippy::too_many_arguments)] // a table row constructor: one argument per column
const fn vac(
    name: &'static str,
    species: &'static str,
    wave: f64,
    kind: LineKind,
    strength: f64,
    classes: &'static [ObjectClass],
    width: Width,
    group: Option<&'static str>,
    source: &'static str,
) -> Row {
    Row {
        name,
        species,
        wave,
        medium: Medium::Vacuum,
        kind,
        strength,
        classes,
        width,
        group,
        source,
    }
}

/// gf-weighted mean of two vacuum wavelengths.
const fn gf_mean(w1: f64, f1: f64, w2: f64, f2: f64) -> f64 {
    (w1 * f1 + w2 * f2) / (f1 + f2)
}

// Doublet components (vacuum A) and oscillator strengths, NIST ASD / Morton
// (2003, ApJS 149, 205), from memory. The f ratio of each doublet is 2:1.
const O_VI: (f64, f64, f64, f64) = (1031.926, 0.133, 1037.617, 0.0660);
const N_V: (f64, f64, f64, f64) = (1238.821, 0.156, 1242.804, 0.0780);
const SI_IV: (f64, f64, f64, f64) = (1393.755, 0.513, 1402.770, 0.255);
const C_IV: (f64, f64, f64, f64) = (1548.195, 0.190, 1550.770, 0.0952);
const MG_II: (f64, f64, f64, f64) = (2796.352, 0.608, 2803.531, 0.303);

const GQ: &[ObjectClass] = &[G, Q];
const GQS: &[ObjectClass] = &[G, Q, S];
const GS: &[ObjectClass] = &[G, S];
const QO: &[ObjectClass] = &[Q];
const GO: &[ObjectClass] = &[G];
const SO: &[ObjectClass] = &[S];

#[rustfmt::skip]
const ROWS: &[Row] = &[
    // ---- quasar broad emission lines (rest-frame UV), vacuum ----
    vac("O VI 1034", "O VI", gf_mean(O_VI.0, O_VI.1, O_VI.2, O_VI.3), Em, 0.2, QO, Broad, Some("O VI 1032,1038"), BLEND),
    vac("N V 1240", "N V", gf_mean(N_V.0, N_V.1, N_V.2, N_V.3), Em, 0.3, QO, Broad, Some("N V 1239,1243"), BLEND),
    vac("Si IV+O IV] 1400", "Si IV", 1399.8, Em, 0.15, QO, Broad, None, EMPIRICAL),
    vac("C IV 1549", "C IV", gf_mean(C_IV.0, C_IV.1, C_IV.2, C_IV.3), Em, 0.6, QO, Broad, Some("C IV 1548,1551"), BLEND),
    vac("He II 1640", "He II", 1640.42, Em, 0.1, GQ, Narrow, Some("He II"), NIST_VAC),
    vac("Al III 1857", "Al III", 1857.4, Em, 0.05, QO, Broad, None, EMPIRICAL),
    vac("Si III] 1892", "Si III]", 1892.03, Em, 0.05, QO, Broad, None, NIST_VAC),
    vac("C III] 1909", "C III]", 1908.734, Em, 0.3, GQ, Broad, None, NIST_VAC),
    vac("C II] 2326", "C II]", 2326.44, Em, 0.05, QO, Broad, None, EMPIRICAL),
    vac("Mg II 2798", "Mg II", gf_mean(MG_II.0, MG_II.1, MG_II.2, MG_II.3), Em, 0.5, QO, Broad, Some("Mg II 2796,2803"), BLEND),
    // ---- interstellar / galaxy absorption in the UV, vacuum ----
    vac("Si II 1260", "Si II", 1260.422, Abs, 0.2, GQ, Narrow, Some("ISM UV"), MORTON),
    vac("O I 1302", "O I", 1302.168, Abs, 0.2, GQ, Narrow, Some("ISM UV"), MORTON),
    vac("Si II 1304", "Si II", 1304.370, Abs, 0.15, GQ, Narrow, Some("ISM UV"), MORTON),
    vac("C II 1335", "C II", 1334.532, Abs, 0.25, GQ, Narrow, Some("ISM UV"), MORTON),
    vac("Si IV 1394", "Si IV", SI_IV.0, Abs, 0.2, GQ, Narrow, Some("Si IV 1394,1403"), NIST_VAC),
    vac("Si IV 1403", "Si IV", SI_IV.2, Abs, 0.15, GQ, Narrow, Some("Si IV 1394,1403"), NIST_VAC),
    vac("Si II 1527", "Si II", 1526.707, Abs, 0.2, GQ, Narrow, Some("ISM UV"), MORTON),
    vac("C IV 1548", "C IV", C_IV.0, Abs, 0.3, GQ, Narrow, Some("C IV 1548,1551"), NIST_VAC),
    vac("C IV 1551", "C IV", C_IV.2, Abs, 0.2, GQ, Narrow, Some("C IV 1548,1551"), NIST_VAC),
    vac("Fe II 1608", "Fe II", 1608.451, Abs, 0.1, GQ, Narrow, Some("ISM UV"), MORTON),
    vac("Al II 1671", "Al II", 1670.789, Abs, 0.2, GQ, Narrow, Some("ISM UV"), MORTON),
    vac("Fe II 2344", "Fe II", 2344.213, Abs, 0.2, GQ, Narrow, Some("Fe II UV"), NIST_VAC),
    vac("Fe II 2374", "Fe II", 2374.460, Abs, 0.1, GQ, Narrow, Some("Fe II UV"), NIST_VAC),
    vac("Fe II 2382", "Fe II", 2382.764, Abs, 0.3, GQ, Narrow, Some("Fe II UV"), NIST_VAC),
    vac("Fe II 2587", "Fe II", 2586.650, Abs, 0.2, GQ, Narrow, Some("Fe II UV"), NIST_VAC),
    vac("Fe II 2600", "Fe II", 2600.173, Abs, 0.3, GQ, Narrow, Some("Fe II UV"), NIST_VAC),
    vac("Mg II 2796", "Mg II", MG_II.0, Abs, 0.5, GQ, Narrow, Some("Mg II 2796,2803"), NIST_VAC),
    vac("Mg II 2803", "Mg II", MG_II.2, Abs, 0.4, GQ, Narrow, Some("Mg II 2796,2803"), NIST_VAC),
    vac("Mg I 2853", "Mg I", 2852.964, Abs, 0.2, GQ, Narrow, None, NIST_VAC),
    // ---- nebular and AGN narrow emission, optical, air ----
    air("[Ne V] 3346", "[Ne V]", 3345.83, Em, 0.03, GQ, Narrow, Some("[Ne V] 3346,3426"), NIST_AIR),
    air("[Ne V] 3426", "[Ne V]", 3425.87, Em, 0.08, GQ, Narrow, Some("[Ne V] 3346,3426"), NIST_AIR),
    air("[O II] 3726", "[O II]", 3726.03, Em, 0.6, GQ, Narrow, Some("[O II] 3726,3729"), NIST_AIR),
    air("[O II] 3729", "[O II]", 3728.82, Em, 0.7, GQ, Narrow, Some("[O II] 3726,3729"), NIST_AIR),
    air("[Ne III] 3869", "[Ne III]", 3868.76, Em, 0.2, GQ, Narrow, Some("[Ne III] 3869,3968"), NIST_AIR),
    air("[Ne III] 3968", "[Ne III]", 3967.47, Em, 0.06, GQ, Narrow, Some("[Ne III] 3869,3968"), NIST_AIR),
    air("[O III] 4363", "[O III]", 4363.21, Em, 0.05, GQ, Narrow, None, NIST_AIR),
    air("He I 3889", "He I", 3888.648, Both, 0.03, GQS, Narrow, Some("He I"), NIST_AIR),
    air("He I 4026", "He I", 4026.191, Both, 0.03, GQS, Narrow, Some("He I"), NIST_AIR),
    air("He I 4471", "He I", 4471.479, Both, 0.05, GQS, Narrow, Some("He I"), NIST_AIR),
    air("He II 3203", "He II", 3203.10, Em, 0.02, GQ, Narrow, Some("He II"), NIST_AIR),
    air("He II 4686", "He II", 4685.71, Em, 0.05, GQ, Narrow, Some("He II"), NIST_AIR),
    air("He I 4922", "He I", 4921.931, Both, 0.02, GQS, Narrow, Some("He I"), NIST_AIR),
    air("[O III] 4959", "[O III]", 4958.911, Em, 0.35, GQ, Narrow, Some("[O III] 4959,5007"), NIST_AIR),
    air("[O III] 5007", "[O III]", 5006.843, Em, 1.0, GQ, Narrow, Some("[O III] 4959,5007"), NIST_AIR),
    air("He I 5016", "He I", 5015.678, Both, 0.03, GQS, Narrow, Some("He I"), NIST_AIR),
    // Blend of NIST 5197.90 and 5200.26 (air), intensity-weighted (from memory).
    air("[N I] 5200", "[N I]", 5199.35, Em, 0.03, GO, Narrow, None, NIST_AIR),
    air("He II 5412", "He II", 5411.52, Em, 0.02, GQ, Narrow, Some("He II"), NIST_AIR),
    air("[N II] 5755", "[N II]", 5754.59, Em, 0.02, GO, Narrow, None, NIST_AIR),
    air("He I 5876", "He I", 5875.621, Both, 0.1, GQS, Narrow, Some("He I"), NIST_AIR),
    air("[O I] 6300", "[O I]", 6300.304, Em, 0.1, GQ, Narrow, Some("[O I] 6300,6364"), NIST_AIR),
    air("[S III] 6312", "[S III]", 6312.06, Em, 0.02, GO, Narrow, None, NIST_AIR),
    air("[O I] 6364", "[O I]", 6363.776, Em, 0.03, GQ, Narrow, Some("[O I] 6300,6364"), NIST_AIR),
    air("[N II] 6548", "[N II]", 6548.05, Em, 0.15, GQ, Narrow, Some("[N II] 6548,6584"), NIST_AIR),
    air("[N II] 6584", "[N II]", 6583.45, Em, 0.45, GQ, Narrow, Some("[N II] 6548,6584"), NIST_AIR),
    air("He I 6678", "He I", 6678.152, Both, 0.04, GQS, Narrow, Some("He I"), NIST_AIR),
    air("[S II] 6716", "[S II]", 6716.44, Em, 0.3, GQ, Narrow, Some("[S II] 6716,6731"), NIST_AIR),
    air("[S II] 6731", "[S II]", 6730.82, Em, 0.22, GQ, Narrow, Some("[S II] 6716,6731"), NIST_AIR),
    air("[Fe X] 6375", "[Fe X]", 6374.51, Em, 0.02, GQ, Narrow, None, NIST_AIR),
    air("He I 7065", "He I", 7065.19, Em, 0.03, GO, Narrow, Some("He I"), NIST_AIR),
    air("He I 7281", "He I", 7281.349, Em, 0.02, GO, Narrow, Some("He I"), NIST_AIR),
    air("[Ar III] 7136", "[Ar III]", 7135.79, Em, 0.05, GO, Narrow, None, NIST_AIR),
    air("[O II] 7320", "[O II]", 7319.99, Em, 0.03, GO, Narrow, Some("[O II] 7320,7330"), NIST_AIR),
    air("[O II] 7330", "[O II]", 7330.73, Em, 0.03, GO, Narrow, Some("[O II] 7320,7330"), NIST_AIR),
    air("[S III] 9069", "[S III]", 9068.6, Em, 0.15, GO, Narrow, Some("[S III] 9069,9531"), NIST_AIR),
    air("[S III] 9531", "[S III]", 9530.6, Em, 0.35, GO, Narrow, Some("[S III] 9069,9531"), NIST_AIR),
    air("He I 10830", "He I", 10830.3, Both, 0.1, GQS, Narrow, Some("He I"), NIST_AIR),
    // ---- near-infrared galaxy lines, vacuum ----
    vac("[Fe II] 12570", "[Fe II]", 12570.2, Em, 0.05, GO, Narrow, Some("[Fe II] NIR"), NIST_VAC),
    vac("[Fe II] 16440", "[Fe II]", 16440.0, Em, 0.05, GO, Narrow, Some("[Fe II] NIR"), NIST_VAC),
    vac("H2 1-0 S(1)", "H2", 21218.3, Em, 0.05, GO, Narrow, None, MOLECULAR),
    // ---- stellar and galaxy absorption, air ----
    air("Ca II K", "Ca II", 3933.663, Abs, 0.9, GS, Narrow, Some("Ca II H&K"), NIST_AIR),
    air("Ca II H", "Ca II", 3968.468, Abs, 0.8, GS, Narrow, Some("Ca II H&K"), NIST_AIR),
    air("Fe I 4046", "Fe I", 4045.813, Abs, 0.15, GS, Narrow, Some("Fe I"), NIST_AIR),
    air("Ca I 4227", "Ca I", 4226.728, Abs, 0.3, GS, Narrow, None, NIST_AIR),
    air("G band", "CH", 4304.4, Abs, 0.5, GS, Narrow, Some("G band"), STELLAR),
    air("Fe I 4384", "Fe I", 4383.545, Abs, 0.2, GS, Narrow, Some("Fe I"), NIST_AIR),
    air("Mg I 5167", "Mg I", 5167.321, Abs, 0.4, GS, Narrow, Some("Mg b"), NIST_AIR),
    air("Mg I 5173", "Mg I", 5172.684, Abs, 0.5, GS, Narrow, Some("Mg b"), NIST_AIR),
    air("Mg I 5184", "Mg I", 5183.604, Abs, 0.55, GS, Narrow, Some("Mg b"), NIST_AIR),
    air("Fe I 5270", "Fe I", 5269.537, Abs, 0.25, GS, Narrow, Some("Fe I"), NIST_AIR),
    air("Fe I 5328", "Fe I", 5328.039, Abs, 0.2, GS, Narrow, Some("Fe I"), NIST_AIR),
    air("Na D2", "Na I", 5889.951, Abs, 0.6, GS, Narrow, Some("Na D"), NIST_AIR),
    air("Na D1", "Na I", 5895.924, Abs, 0.5, GS, Narrow, Some("Na D"), NIST_AIR),
    air("K I 7665", "K I", 7664.899, Abs, 0.2, SO, Narrow, Some("K I 7665,7699"), NIST_AIR),
    air("K I 7699", "K I", 7698.965, Abs, 0.15, SO, Narrow, Some("K I 7665,7699"), NIST_AIR),
    air("Na I 8183", "Na I", 8183.256, Abs, 0.2, SO, Narrow, Some("Na I 8183,8195"), NIST_AIR),
    air("Na I 8195", "Na I", 8194.824, Abs, 0.25, SO, Narrow, Some("Na I 8183,8195"), NIST_AIR),
    air("Ca II 8498", "Ca II", 8498.02, Abs, 0.5, GS, Narrow, Some("Ca II triplet"), NIST_AIR),
    air("Ca II 8542", "Ca II", 8542.09, Abs, 0.8, GS, Narrow, Some("Ca II triplet"), NIST_AIR),
    air("Ca II 8662", "Ca II", 8662.14, Abs, 0.7, GS, Narrow, Some("Ca II triplet"), NIST_AIR),
    // ---- molecular bands of cool (M) stars: the band head, air ----
    air("TiO 4954", "TiO", 4954.0, Abs, 0.3, SO, Broad, Some("TiO"), TIO),
    air("TiO 5448", "TiO", 5448.0, Abs, 0.3, SO, Broad, Some("TiO"), TIO),
    air("TiO 5847", "TiO", 5847.0, Abs, 0.4, SO, Broad, Some("TiO"), TIO),
    air("TiO 6158", "TiO", 6158.0, Abs, 0.5, SO, Broad, Some("TiO"), TIO),
    air("TiO 6651", "TiO", 6651.0, Abs, 0.5, SO, Broad, Some("TiO"), TIO),
    air("TiO 7054", "TiO", 7054.0, Abs, 0.7, SO, Broad, Some("TiO"), TIO),
    air("TiO 7589", "TiO", 7589.0, Abs, 0.5, SO, Broad, Some("TiO"), TIO),
    air("TiO 8432", "TiO", 8432.0, Abs, 0.4, SO, Broad, Some("TiO"), TIO),
    vac("CO 2-0 bandhead", "CO", 22935.0, Abs, 0.5, GS, Broad, Some("CO"), MOLECULAR),
];

/// Hydrogen laboratory wavelengths: (series lower level, upper level,
/// tabulated wavelength, medium). NIST ASD (from memory): vacuum below
/// 2000 A and above 2 um, air in between, as NIST tabulates them.
#[rustfmt::skip]
pub(crate) const HYDROGEN_LAB: &[(u32, u32, f64, Medium)] = &[
    (1, 2, 1215.6701, Medium::Vacuum), (1, 3, 1025.7220, Medium::Vacuum),
    (1, 4, 972.53650, Medium::Vacuum), (1, 5, 949.74287, Medium::Vacuum),
    (1, 6, 937.80331, Medium::Vacuum), (1, 7, 930.748142, Medium::Vacuum),
    (1, 8, 926.225605, Medium::Vacuum), (1, 9, 923.150275, Medium::Vacuum),
    (1, 10, 920.963006, Medium::Vacuum),
    // H-alpha: the vacuum value 6564.61 (air 6562.80).
    (2, 3, 6564.61, Medium::Vacuum), (2, 4, 4861.35, Medium::Air),
    (2, 5, 4340.472, Medium::Air), (2, 6, 4101.734, Medium::Air),
    (2, 7, 3970.075, Medium::Air), (2, 8, 3889.064, Medium::Air),
    (2, 9, 3835.397, Medium::Air), (2, 10, 3797.90, Medium::Air),
    (2, 11, 3770.63, Medium::Air), (2, 12, 3750.15, Medium::Air),
    (3, 4, 18751.0, Medium::Air), (3, 5, 12818.08, Medium::Air),
    (3, 6, 10938.09, Medium::Air), (3, 7, 10049.37, Medium::Air),
    (3, 8, 9545.97, Medium::Air), (3, 9, 9229.01, Medium::Air),
    (3, 10, 9014.91, Medium::Air), (3, 11, 8862.78, Medium::Air),
    (3, 12, 8750.47, Medium::Air), (3, 13, 8665.02, Medium::Air),
    (3, 14, 8598.39, Medium::Air), (3, 15, 8545.38, Medium::Air),
    (4, 5, 40522.62, Medium::Vacuum), (4, 6, 26258.67, Medium::Vacuum),
    (4, 7, 21661.20, Medium::Vacuum),
];

/// Highest upper level put in the catalogue for each series.
const SERIES_TOP: [(Series, u32); 6] = [
    (Series::Lyman, 10),
    (Series::Balmer, 16),
    (Series::Paschen, 20),
    (Series::Brackett, 20),
    (Series::Pfund, 10),
    (Series::Humphreys, 10),
];

fn to_vacuum(w: f64, m: Medium) -> f64 {
    match m {
        Medium::Air => air_to_vacuum(w),
        Medium::Vacuum => w,
    }
}

/// Case B emission strength of a Balmer line relative to H-alpha, used as
/// the typical strength ([`crate::physics::hydrogen::case_b_balmer`]),
/// floored at 0.1 because the whole series is strong in absorption in A
/// stars and post-starburst galaxies.
fn balmer_strength(n_upper: u32) -> f64 {
    let to_hbeta = crate::physics::hydrogen::case_b_balmer(n_upper).unwrap_or(0.0);
    (to_hbeta / 2.86_f64).max(0.1)
}

fn hydrogen_lines(out: &mut Vec<Annotated>) {
    let h = Ion::hydrogen();
    for (series, top) in SERIES_TOP {
        let nl = series.lower();
        for nu in nl + 1..=top {
            let Ok(t) = h.transition(nl, nu) else {
                continue;
            };
            let lab = HYDROGEN_LAB
                .iter()
                .find(|(l, u, _, _)| *l == nl && *u == nu);
            let (wave, tabulated, medium, source) = match lab {
                Some(&(_, _, w, m)) => (to_vacuum(w, m), w, m, NIST_H),
                None => (
                    t.vacuum_angstrom,
                    t.vacuum_angstrom,
                    Medium::Vacuum,
                    COMPUTED_H,
                ),
            };
            let k = nu - nl;
            let (kind, strength, classes): (LineKind, f64, &[ObjectClass]) = match series {
                Series::Lyman if k == 1 => (Both, 1.0, GQ),
                Series::Lyman => (Abs, (0.5 / f64::from(k)).max(0.05), GQ),
                Series::Balmer => (Both, balmer_strength(nu), GQS),
                Series::Paschen => (Both, (0.3 / f64::from(k)).max(0.03), GQS),
                Series::Brackett => (Both, (0.1 / f64::from(k)).max(0.02), GQS),
                _ => (Both, 0.02, GQS),
            };
            out.push(Annotated {
                line: Line {
                    name: t.name(),
                    species: "H I".into(),
                    wavelength: wave,
                    kind,
                    strength,
                    classes: classes.to_vec(),
                    width: Narrow,
                    group: Some(series.name().into()),
                },
                tabulated,
                medium,
                source,
            });
        }
    }
    // Quasar broad lines of hydrogen: the same laboratory wavelengths, broad.
    let broad = [
        (Series::Lyman, 2, 1.0, "Lyman broad"),
        (Series::Balmer, 3, 1.0, "Balmer broad"),
        (Series::Balmer, 4, 0.4, "Balmer broad"),
        (Series::Balmer, 5, 0.15, "Balmer broad"),
    ];
    for (series, nu, strength, group) in broad {
        let name = member_name(series, nu, false);
        let Some(narrow) = out.iter().find(|a| a.line.name == name).cloned() else {
            continue;
        };
        out.push(Annotated {
            line: Line {
                name: format!("{name} broad"),
                kind: Em,
                strength,
                classes: vec![Q],
                width: Broad,
                group: Some(group.into()),
                ..narrow.line
            },
            ..narrow
        });
    }
}

/// The built-in catalogue with the source of every wavelength.
pub fn annotated() -> Vec<Annotated> {
    let mut out = Vec::with_capacity(ROWS.len() + 120);
    hydrogen_lines(&mut out);
    for r in ROWS {
        out.push(Annotated {
            line: Line {
                name: r.name.into(),
                species: r.species.into(),
                wavelength: to_vacuum(r.wave, r.medium),
                kind: r.kind,
                strength: r.strength,
                classes: r.classes.to_vec(),
                width: r.width,
                group: r.group.map(Into::into),
            },
            tabulated: r.wave,
            medium: r.medium,
            source: r.source,
        });
    }
    out.sort_by(|a, b| a.line.wavelength.total_cmp(&b.line.wavelength));
    out
}

/// Where the built-in wavelength of the line called `name` comes from.
pub fn source_of(name: &str) -> Option<&'static str> {
    annotated()
        .into_iter()
        .find(|a| a.line.name == name)
        .map(|a| a.source)
}

/// The ratios atomic physics (or recombination theory) fixes, each cited.
pub fn ratios() -> Vec<Ratio> {
    let r = |n: &str, d: &str, value: f64, range: (f64, f64), source: &str| Ratio {
        numerator: n.into(),
        denominator: d.into(),
        value,
        range,
        source: source.into(),
    };
    vec![
        r(
            "[O III] 5007",
            "[O III] 4959",
            2.98,
            (2.9, 3.1),
            "Storey & Zeippen (2000, MNRAS 312, 813): ratio of A-values and photon energies",
        ),
        r(
            "[N II] 6584",
            "[N II] 6548",
            3.05,
            (2.9, 3.2),
            "Osterbrock & Ferland (2006): ratio of A-values and photon energies",
        ),
        r(
            "[O I] 6300",
            "[O I] 6364",
            3.0,
            (2.9, 3.3),
            "ratio of A-values, Storey & Zeippen (2000) (from memory)",
        ),
        r(
            "[S III] 9531",
            "[S III] 9069",
            2.44,
            (2.3, 2.6),
            "ratio of A-values, Mendoza & Zeippen (1982) (from memory)",
        ),
        r(
            "H-alpha",
            "H-beta",
            2.86,
            // Case B is the floor (2.75 at 2e4 K); dust only raises it.
            (2.7, 8.0),
            "Case B, 10^4 K, n_e = 100 cm^-3: Osterbrock & Ferland (2006) Table 4.2; larger with dust",
        ),
        r(
            "H-gamma",
            "H-beta",
            0.468,
            (0.3, 0.5),
            "Case B, 10^4 K, n_e = 100 cm^-3: Osterbrock & Ferland (2006) Table 4.2; smaller with dust",
        ),
        r(
            "H-delta",
            "H-beta",
            0.259,
            (0.15, 0.28),
            "Case B, 10^4 K, n_e = 100 cm^-3: Osterbrock & Ferland (2006) Table 4.2; smaller with dust",
        ),
        r(
            "[S II] 6716",
            "[S II] 6731",
            1.4,
            // Low-density limit ~1.45, high-density limit ~0.44.
            (0.44, 1.45),
            "density-dependent, Osterbrock & Ferland (2006) Fig. 5.8 (limits from memory)",
        ),
        r(
            "[O II] 3729",
            "[O II] 3726",
            1.3,
            // Low-density limit ~1.5, high-density limit ~0.35.
            (0.35, 1.5),
            "density-dependent, Osterbrock & Ferland (2006) Fig. 5.8 (limits from memory)",
        ),
        r(
            "Mg II 2796",
            "Mg II 2803",
            2.0,
            (1.0, 2.0),
            "oscillator-strength ratio 2 (optically thin) to 1 (saturated); Morton (2003) f-values (from memory)",
        ),
        r(
            "C IV 1548",
            "C IV 1551",
            2.0,
            (1.0, 2.0),
            "oscillator-strength ratio 2 (optically thin) to 1 (saturated); Morton (2003) f-values (from memory)",
        ),
    ]
}

/// One tabulated foreground feature (air, observed frame).
struct Fg(&'static str, ForegroundKind, f64, f64, f64, &'static str);

use ForegroundKind::{Sky, Telluric};

#[rustfmt::skip]
const FOREGROUND: &[Fg] = &[
    // Night-sky emission: airglow, and street-lamp lines (Hg I, Na I).
    Fg("Hg I 4047 sky", Sky, 4046.565, 4046.565, 0.1, NIST_AIR),
    Fg("Hg I 4358 sky", Sky, 4358.335, 4358.335, 0.2, NIST_AIR),
    Fg("Hg I 5461 sky", Sky, 5460.735, 5460.735, 0.2, NIST_AIR),
    Fg("[O I] 5577 sky", Sky, 5577.338, 5577.338, 1.0, NIST_AIR),
    Fg("Na D2 sky", Sky, 5889.951, 5889.951, 0.3, NIST_AIR),
    Fg("Na D1 sky", Sky, 5895.924, 5895.924, 0.25, NIST_AIR),
    Fg("[O I] 6300 sky", Sky, 6300.304, 6300.304, 0.6, NIST_AIR),
    Fg("[O I] 6364 sky", Sky, 6363.776, 6363.776, 0.2, NIST_AIR),
    Fg("OH 6864 sky", Sky, 6863.955, 6863.955, 0.3, OH),
    Fg("OH 7316 sky", Sky, 7316.282, 7316.282, 0.4, OH),
    Fg("OH 7341 sky", Sky, 7340.885, 7340.885, 0.4, OH),
    Fg("OH 7751 sky", Sky, 7750.640, 7750.640, 0.4, OH),
    Fg("OH 7794 sky", Sky, 7794.112, 7794.112, 0.4, OH),
    Fg("OH 7914 sky", Sky, 7913.708, 7913.708, 0.4, OH),
    Fg("OH 7993 sky", Sky, 7993.332, 7993.332, 0.5, OH),
    Fg("OH 8345 sky", Sky, 8344.602, 8344.602, 0.6, OH),
    Fg("OH 8399 sky", Sky, 8399.170, 8399.170, 0.5, OH),
    Fg("OH 8430 sky", Sky, 8430.174, 8430.174, 0.5, OH),
    Fg("OH 8827 sky", Sky, 8827.096, 8827.096, 0.6, OH),
    Fg("OH 8886 sky", Sky, 8885.850, 8885.850, 0.6, OH),
    Fg("OH 8943 sky", Sky, 8943.395, 8943.395, 0.5, OH),
    Fg("OH 6499 sky", Sky, 6498.729, 6498.729, 0.3, OH),
    Fg("OH 6533 sky", Sky, 6533.044, 6533.044, 0.3, OH),
    Fg("OH 6554 sky", Sky, 6553.617, 6553.617, 0.3, OH),
    Fg("OH 6923 sky", Sky, 6923.220, 6923.220, 0.3, OH),
    Fg("OH 7369 sky", Sky, 7369.248, 7369.248, 0.3, OH),
    Fg("OH 7402 sky", Sky, 7401.689, 7401.689, 0.3, OH),
    Fg("OH 7822 sky", Sky, 7821.503, 7821.503, 0.3, OH),
    Fg("OH 7853 sky", Sky, 7853.130, 7853.130, 0.3, OH),
    Fg("OH 7965 sky", Sky, 7964.650, 7964.650, 0.4, OH),
    Fg("OH 8465 sky", Sky, 8465.358, 8465.358, 0.5, OH),
    Fg("OH 8493 sky", Sky, 8493.389, 8493.389, 0.4, OH),
    Fg("OH 8505 sky", Sky, 8505.048, 8505.048, 0.3, OH),
    Fg("OH 8761 sky", Sky, 8761.310, 8761.310, 0.4, OH),
    Fg("OH 8920 sky", Sky, 8919.640, 8919.640, 0.4, OH),
    Fg("OH 8988 sky", Sky, 8988.380, 8988.380, 0.5, OH),
    Fg("OH 9376 sky", Sky, 9375.980, 9375.980, 0.6, OH),
    Fg("OH 9440 sky", Sky, 9439.670, 9439.670, 0.6, OH),
    // Telluric absorption bands.
    Fg("O2 gamma band", Telluric, 6274.0, 6330.0, 0.1, TELLURIC),
    Fg("H2O 6500 band", Telluric, 6470.0, 6560.0, 0.1, TELLURIC),
    Fg("O2 B band", Telluric, 6867.0, 6884.0, 0.6, TELLURIC),
    Fg("O2 B band tail", Telluric, 6884.0, 6955.0, 0.2, TELLURIC),
    Fg("H2O 7200 band", Telluric, 7160.0, 7340.0, 0.4, TELLURIC),
    Fg("O2 A band", Telluric, 7594.0, 7621.0, 1.0, TELLURIC),
    Fg("O2 A band tail", Telluric, 7621.0, 7690.0, 0.4, TELLURIC),
    Fg("H2O 8200 band", Telluric, 8130.0, 8350.0, 0.5, TELLURIC),
    Fg("H2O 9300 band", Telluric, 8950.0, 9800.0, 0.9, TELLURIC),
    Fg("H2O 1.13 um band", Telluric, 11000.0, 11700.0, 0.9, TELLURIC),
    Fg("H2O 1.4 um band", Telluric, 13300.0, 14700.0, 1.0, TELLURIC),
    Fg("H2O 1.9 um band", Telluric, 17900.0, 19600.0, 1.0, TELLURIC),
];

/// Observed-frame foreground features, converted from the tabulated air
/// wavelengths to vacuum; with sources.
pub fn foreground_annotated() -> Vec<(Foreground, f64, f64, &'static str)> {
    let mut v: Vec<_> = FOREGROUND
        .iter()
        .map(|f| {
            (
                Foreground {
                    name: f.0.into(),
                    kind: f.1,
                    lo: air_to_vacuum(f.2),
                    hi: air_to_vacuum(f.3),
                    strength: f.4,
                },
                f.2,
                f.3,
                f.5,
            )
        })
        .collect();
    v.sort_by(|a, b| a.0.lo.total_cmp(&b.0.lo));
    v
}

/// The built-in catalogue: lines sorted by vacuum wavelength, fixed ratios,
/// and observed-frame foreground features (vacuum, sorted by `lo`).
pub fn builtin() -> Catalogue {
    Catalogue {
        lines: annotated().into_iter().map(|a| a.line).collect(),
        ratios: ratios(),
        foreground: foreground_annotated().into_iter().map(|f| f.0).collect(),
    }
}
