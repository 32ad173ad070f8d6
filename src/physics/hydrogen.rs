//! Hydrogen-like ions (one electron, nuclear charge `Z`, finite nuclear mass):
//! energy levels, transitions, series and their limits.
//!
//! The model is Bohr's with the reduced-mass correction:
//!
//! ```text
//! E_n = -R_M h c Z^2 / n^2,   R_M = R_inf / (1 + m_e / M)
//! ```
//!
//! with `R_inf`, `m_e` and the nuclear masses from CODATA 2018
//! ([`crate::physics::constants`]). Transition wavelengths follow from
//! `1 / lambda = R_M Z^2 (1/n_l^2 - 1/n_u^2)` (vacuum) and the air wavelength
//! from [`crate::physics::airvac`].
//!
//! # Accuracy
//! The formula ignores fine structure (the Dirac `j` dependence, relative size
//! about `(Z alpha)^2 / n`), the Lamb shift (QED, smaller again) and hyperfine
//! structure. For hydrogen these move the observed (blended) lines by about
//! 1e-5 relative: H-alpha comes out at 6564.70 A against the laboratory
//! 6564.61 A (NIST ASD). The tests hold every NIST line checked to better
//! than 2e-5. Fine structure grows as `Z^2`, so for He II the difference is
//! up to about 1e-4 relative. Where laboratory wavelengths are more accurate,
//! the line catalogue ([`crate::lines::builtin()`]) uses them.
//!
//! Two reading conventions (common practice, no source): `n = 1` is the
//! ground state, so no level lies below it; a series is named by its lower
//! level (Lyman `n_l = 1`, Balmer 2, Paschen 3, Brackett 4, Pfund 5,
//! Humphreys 6).

use crate::physics::airvac;
use crate::physics::constants::{
    ALPHA_ELECTRON_MASS_RATIO, DEUTERON_ELECTRON_MASS_RATIO, HC_EV_ANGSTROM,
    PROTON_ELECTRON_MASS_RATIO, RYDBERG_INF_PER_M,
};
use thiserror::Error;

/// Errors for requests that have no physical meaning.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum HydrogenError {
    /// A principal quantum number below 1 (n = 1 is the ground state).
    #[error(
        "principal quantum number n = {0} is invalid: n = 1 is the ground state, n must be >= 1"
    )]
    BelowGroundState(u32),
    /// A transition whose lower level is not below its upper level.
    #[error(
        "no transition from n = {n_upper} down to n = {n_lower}: the lower level must be below the upper (n_lower < n_upper)"
    )]
    NotDownward {
        /// Requested lower level.
        n_lower: u32,
        /// Requested upper level.
        n_upper: u32,
    },
    /// A nuclear charge of zero.
    #[error("nuclear charge Z must be >= 1")]
    ZeroCharge,
    /// A nuclear mass that is not a positive finite multiple of the electron's.
    #[error("nuclear mass must be a positive, finite multiple of the electron mass (got {0})")]
    BadMass(f64),
    /// A series name that is not one of the six named series.
    #[error("unknown series '{0}' (known: Lyman, Balmer, Paschen, Brackett, Pfund, Humphreys)")]
    UnknownSeries(String),
    /// An ion name that is not known.
    #[error("unknown ion '{0}' (known: H, D, He+)")]
    UnknownIon(String),
}

/// A one-electron ion: nuclear charge and nuclear mass.
#[derive(Debug, Clone, PartialEq)]
pub struct Ion {
    /// Short name used in line names, e.g. `H`, `D`, `He+`.
    pub name: String,
    /// Spectroscopic species notation, e.g. `H I`, `D I`, `He II`.
    pub species: String,
    /// Nuclear charge Z.
    pub z: u32,
    /// Nuclear mass in electron masses (`f64::INFINITY` for the infinite-mass limit).
    pub mass_ratio: f64,
}

impl Ion {
    /// Hydrogen (protium): Z = 1, proton nucleus.
    pub fn hydrogen() -> Ion {
        Ion {
            name: "H".into(),
            species: "H I".into(),
            z: 1,
            mass_ratio: PROTON_ELECTRON_MASS_RATIO,
        }
    }

    /// Deuterium: Z = 1, deuteron nucleus.
    pub fn deuterium() -> Ion {
        Ion {
            name: "D".into(),
            species: "D I".into(),
            z: 1,
            mass_ratio: DEUTERON_ELECTRON_MASS_RATIO,
        }
    }

    /// Singly ionised helium-4: Z = 2, alpha-particle nucleus.
    pub fn helium_ii() -> Ion {
        Ion {
            name: "He+".into(),
            species: "He II".into(),
            z: 2,
            mass_ratio: ALPHA_ELECTRON_MASS_RATIO,
        }
    }

    /// Any one-electron ion with nuclear charge `z` and nuclear mass
    /// `mass_ratio` electron masses (`f64::INFINITY` allowed).
    pub fn new(name: &str, species: &str, z: u32, mass_ratio: f64) -> Result<Ion, HydrogenError> {
        if z == 0 {
            return Err(HydrogenError::ZeroCharge);
        }
        if mass_ratio.is_nan() || mass_ratio <= 0.0 {
            return Err(HydrogenError::BadMass(mass_ratio));
        }
        Ok(Ion {
            name: name.into(),
            species: species.into(),
            z,
            mass_ratio,
        })
    }

    /// One of the named ions: `H`, `D`, `He+` (also `He II`, `HeII`, `He2`),
    /// case-insensitive.
    pub fn by_name(name: &str) -> Result<Ion, HydrogenError> {
        match name.trim().to_ascii_lowercase().as_str() {
            "h" | "h i" | "hi" | "hydrogen" => Ok(Ion::hydrogen()),
            "d" | "d i" | "di" | "deuterium" => Ok(Ion::deuterium()),
            "he+" | "he ii" | "heii" | "he2" | "he2+" | "helium" => Ok(Ion::helium_ii()),
            _ => Err(HydrogenError::UnknownIon(name.into())),
        }
    }

    /// The reduced-mass Rydberg constant R_M = R_inf / (1 + m_e / M), 1/m.
    pub fn rydberg_per_m(&self) -> f64 {
        RYDBERG_INF_PER_M / (1.0 + 1.0 / self.mass_ratio)
    }

    /// Energy of level `n` in eV (negative: bound), E_n = -R_M h c Z^2 / n^2.
    pub fn energy_ev(&self, n: u32) -> Result<f64, HydrogenError> {
        if n < 1 {
            return Err(HydrogenError::BelowGroundState(n));
        }
        let z2 = f64::from(self.z).powi(2);
        let n2 = f64::from(n).powi(2);
        // R_M [1/m] * 1e-10 [m/A] * hc [eV A] = R_M h c in eV.
        Ok(-self.rydberg_per_m() * 1e-10 * HC_EV_ANGSTROM * z2 / n2)
    }

    /// Ionisation energy from level `n`, eV (positive).
    pub fn ionisation_ev(&self, n: u32) -> Result<f64, HydrogenError> {
        Ok(-self.energy_ev(n)?)
    }

    /// The transition between levels `n_lower < n_upper`.
    pub fn transition(&self, n_lower: u32, n_upper: u32) -> Result<Transition, HydrogenError> {
        if n_lower < 1 {
            return Err(HydrogenError::BelowGroundState(n_lower));
        }
        if n_upper <= n_lower {
            return Err(HydrogenError::NotDownward { n_lower, n_upper });
        }
        let wavenumber = self.wavenumber_per_cm(n_lower, Some(n_upper));
        Ok(Transition::from_wavenumber(
            self,
            n_lower,
            Some(n_upper),
            wavenumber,
        ))
    }

    /// The series limit (n_upper -> infinity) onto `n_lower`: the shortest
    /// wavelength of the series and the photo-ionisation edge of that level.
    pub fn series_limit(&self, n_lower: u32) -> Result<Transition, HydrogenError> {
        if n_lower < 1 {
            return Err(HydrogenError::BelowGroundState(n_lower));
        }
        let wavenumber = self.wavenumber_per_cm(n_lower, None);
        Ok(Transition::from_wavenumber(self, n_lower, None, wavenumber))
    }

    /// The first `count` members of the series onto `n_lower`
    /// (n_upper = n_lower + 1, n_lower + 2, ...).
    pub fn series(&self, n_lower: u32, count: u32) -> Result<Vec<Transition>, HydrogenError> {
        (n_lower.saturating_add(1)..n_lower.saturating_add(1).saturating_add(count))
            .map(|nu| self.transition(n_lower, nu))
            .collect()
    }

    /// What a photon of energy `photon_ev` does to the ion in level `n_from`,
    /// with an energy tolerance `tol_ev` (e.g. the line width): it is absorbed
    /// in a bound-bound transition only if its energy equals a level
    /// difference `E_n - E_from` within the tolerance (upper levels up to
    /// `n_max` are tried); above the ionisation energy it is absorbed at any
    /// energy (photo-ionisation, the electron takes the excess).
    pub fn absorption(
        &self,
        n_from: u32,
        photon_ev: f64,
        tol_ev: f64,
        n_max: u32,
    ) -> Result<Absorption, HydrogenError> {
        let e_from = self.energy_ev(n_from)?;
        let ionise = -e_from;
        if photon_ev >= ionise {
            return Ok(Absorption::Ionisation {
                electron_ev: photon_ev - ionise,
            });
        }
        let mut best: Option<(u32, f64)> = None;
        for n in n_from.saturating_add(1)..=n_max {
            let de = self.energy_ev(n)? - e_from;
            let miss = (de - photon_ev).abs();
            if miss <= tol_ev && best.is_none_or(|(_, m)| miss < m) {
                best = Some((n, miss));
            }
        }
        Ok(match best {
            Some((n_upper, miss)) => Absorption::BoundBound {
                n_upper,
                miss_ev: miss,
            },
            None => Absorption::None,
        })
    }

    /// The transition (any pair of levels up to `n_max`) whose photon energy
    /// is closest to `photon_ev`, if it is within `tol_ev`: which line, if any,
    /// a photon of that energy belongs to.
    pub fn transition_at(&self, photon_ev: f64, tol_ev: f64, n_max: u32) -> Option<Transition> {
        let mut best: Option<(f64, Transition)> = None;
        for nl in 1..n_max {
            for nu in nl + 1..=n_max {
                let Ok(t) = self.transition(nl, nu) else {
                    continue;
                };
                let miss = (t.energy_ev - photon_ev).abs();
                if miss <= tol_ev && best.as_ref().is_none_or(|(m, _)| miss < *m) {
                    best = Some((miss, t));
                }
            }
        }
        best.map(|(_, t)| t)
    }

    /// Wavenumber (1/cm) of n_lower <- n_upper (`None`: the series limit).
    fn wavenumber_per_cm(&self, n_lower: u32, n_upper: Option<u32>) -> f64 {
        let z2 = f64::from(self.z).powi(2);
        let inv_u = n_upper.map_or(0.0, |n| 1.0 / f64::from(n).powi(2));
        let inv_l = 1.0 / f64::from(n_lower).powi(2);
        self.rydberg_per_m() * 1e-2 * z2 * (inv_l - inv_u)
    }
}

/// The outcome of [`Ion::absorption`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Absorption {
    /// The photon energy matches no level difference: it passes.
    None,
    /// Absorbed, lifting the electron to `n_upper`.
    BoundBound {
        /// The upper level reached.
        n_upper: u32,
        /// |photon energy - level difference|, eV.
        miss_ev: f64,
    },
    /// Absorbed by photo-ionisation; the free electron carries the excess.
    Ionisation {
        /// Kinetic energy of the freed electron, eV.
        electron_ev: f64,
    },
}

/// One transition (or a series limit) of a hydrogen-like ion.
#[derive(Debug, Clone, PartialEq)]
pub struct Transition {
    /// The ion's short name (`H`, `D`, `He+`).
    pub ion: String,
    /// Lower level.
    pub n_lower: u32,
    /// Upper level; `None` for the series limit.
    pub n_upper: Option<u32>,
    /// Photon energy, eV.
    pub energy_ev: f64,
    /// Vacuum wavenumber, 1/cm.
    pub wavenumber_per_cm: f64,
    /// Frequency, Hz.
    pub frequency_hz: f64,
    /// Vacuum wavelength, Angstrom.
    pub vacuum_angstrom: f64,
    /// Air wavelength (IAU standard air, Morton 2000), Angstrom; equal to the
    /// vacuum wavelength below 2000 A by convention.
    pub air_angstrom: f64,
}

impl Transition {
    fn from_wavenumber(ion: &Ion, n_lower: u32, n_upper: Option<u32>, sigma: f64) -> Transition {
        let vac = 1.0e8 / sigma;
        Transition {
            ion: ion.name.clone(),
            n_lower,
            n_upper,
            energy_ev: HC_EV_ANGSTROM / vac,
            wavenumber_per_cm: sigma,
            frequency_hz: sigma * 1e2 * crate::physics::constants::C_M_S,
            vacuum_angstrom: vac,
            air_angstrom: airvac::vacuum_to_air(vac),
        }
    }

    /// The series this transition belongs to, if it is one of the six named.
    pub fn series(&self) -> Option<Series> {
        Series::from_lower(self.n_lower)
    }

    /// Name in the trade's notation: `H-alpha`, `Ly-beta`, `Pa-gamma`, `H8`,
    /// `Br10`, `Balmer limit`; `D-alpha`, `D Ly-alpha` for deuterium;
    /// `He II 4-3` and `He II Lyman limit` (the 228 A edge) for He+, and
    /// `<name> <upper>-<lower>` for other ions.
    pub fn name(&self) -> String {
        let series = self.series();
        let ion = if self.ion == "He+" {
            "He II"
        } else {
            self.ion.as_str()
        };
        match (self.n_upper, series) {
            (None, Some(s)) if ion == "H" => format!("{} limit", s.name()),
            (None, Some(s)) => format!("{ion} {} limit", s.name()),
            (None, None) => format!("{ion} n={} limit", self.n_lower),
            (Some(nu), Some(s)) if ion == "H" || ion == "D" => member_name(s, nu, ion == "D"),
            (Some(nu), _) => format!("{ion} {nu}-{}", self.n_lower),
        }
    }
}

/// The six named series, by their lower level.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Series {
    /// Lower level 1 (ultraviolet for hydrogen).
    Lyman,
    /// Lower level 2 (optical for hydrogen).
    Balmer,
    /// Lower level 3 (near infrared).
    Paschen,
    /// Lower level 4.
    Brackett,
    /// Lower level 5.
    Pfund,
    /// Lower level 6.
    Humphreys,
}

impl Series {
    /// All six, in order of lower level.
    pub const ALL: [Series; 6] = [
        Series::Lyman,
        Series::Balmer,
        Series::Paschen,
        Series::Brackett,
        Series::Pfund,
        Series::Humphreys,
    ];

    /// The lower level of the series.
    pub fn lower(self) -> u32 {
        match self {
            Series::Lyman => 1,
            Series::Balmer => 2,
            Series::Paschen => 3,
            Series::Brackett => 4,
            Series::Pfund => 5,
            Series::Humphreys => 6,
        }
    }

    /// The series with lower level `n`, if named.
    pub fn from_lower(n: u32) -> Option<Series> {
        Series::ALL.into_iter().find(|s| s.lower() == n)
    }

    /// The series' name (`Lyman`, `Balmer`, ...).
    pub fn name(self) -> &'static str {
        match self {
            Series::Lyman => "Lyman",
            Series::Balmer => "Balmer",
            Series::Paschen => "Paschen",
            Series::Brackett => "Brackett",
            Series::Pfund => "Pfund",
            Series::Humphreys => "Humphreys",
        }
    }

    /// The prefix of member names (`Ly`, `H`, `Pa`, `Br`, `Pf`, `Hu`).
    pub fn prefix(self) -> &'static str {
        match self {
            Series::Lyman => "Ly",
            Series::Balmer => "H",
            Series::Paschen => "Pa",
            Series::Brackett => "Br",
            Series::Pfund => "Pf",
            Series::Humphreys => "Hu",
        }
    }

    /// Parse a series by name or prefix (case-insensitive): `Balmer`, `H`,
    /// `Ly`, `pa`, ...
    pub fn parse(s: &str) -> Result<Series, HydrogenError> {
        let k = s.trim().to_ascii_lowercase();
        Series::ALL
            .into_iter()
            .find(|x| x.name().to_ascii_lowercase() == k || x.prefix().to_ascii_lowercase() == k)
            .ok_or_else(|| HydrogenError::UnknownSeries(s.into()))
    }
}

/// Greek letters for the first members of a series; the trade names the
/// first five this way and, less often, up to kappa (`H-zeta` = `H8`).
const GREEK: [&str; 10] = [
    "alpha", "beta", "gamma", "delta", "epsilon", "zeta", "eta", "theta", "iota", "kappa",
];

/// Trade name of the member `n_upper -> series.lower()`: the first five by
/// Greek letter (`H-alpha` ... `H-epsilon`, `Ly-alpha`, `Pa-beta`, `Br-gamma`),
/// later ones by the upper level (`H8`, `Pa9`, `Br11`), as is usual
/// (common practice, no source). `deuterium` gives `D-alpha`, `D8`, ... for
/// the Balmer series and `D Ly-alpha` etc. otherwise.
pub fn member_name(series: Series, n_upper: u32, deuterium: bool) -> String {
    let k = n_upper.saturating_sub(series.lower());
    let prefix = series.prefix();
    let base = if (1..=5).contains(&k) {
        format!("{prefix}-{}", GREEK[(k - 1) as usize])
    } else {
        format!("{prefix}{n_upper}")
    };
    match (deuterium, series) {
        (false, _) => base,
        (true, Series::Balmer) => base.replacen('H', "D", 1),
        (true, _) => format!("D {base}"),
    }
}

/// The Greek-letter form of a member beyond epsilon, used as an alias
/// (`H-zeta` for `H8`, `Pa-eta` for `Pa10`), up to theta; `None` otherwise.
pub fn greek_alias(series: Series, n_upper: u32) -> Option<String> {
    let k = n_upper.saturating_sub(series.lower());
    (6..=8)
        .contains(&k)
        .then(|| format!("{}-{}", series.prefix(), GREEK[(k - 1) as usize]))
}

/// Case B flux of a Balmer line relative to H-beta, by upper level, at
/// T = 10^4 K, n_e = 100 cm^-3 (Osterbrock & Ferland 2006, Astrophysics of
/// Gaseous Nebulae, table 4.2: H-alpha 2.86, H-gamma 0.468, H-delta 0.259,
/// H-epsilon 0.159, H8 0.105, H9 0.0731, H10 0.0530; from memory). Above
/// n = 10 the fluxes are extrapolated from H10 as n^-3, the slope of H8-H10
/// in that table (approximate). `None` below n = 3.
pub fn case_b_balmer(n_upper: u32) -> Option<f64> {
    Some(match n_upper {
        3 => 2.86,
        4 => 1.0,
        5 => 0.468,
        6 => 0.259,
        7 => 0.159,
        8 => 0.105,
        9 => 0.0731,
        10 => 0.0530,
        n if n > 10 => 0.0530 * (10.0 / n as f64).powi(3),
        _ => return None,
    })
}

/// Parse a member name such as `H-alpha`, `Hbeta`, `Ly-gamma`, `Pa-beta`,
/// `Br-gamma`, `H8`, `H-zeta`, `Pa10` into (series, n_upper).
pub fn parse_member(name: &str) -> Option<(Series, u32)> {
    let s = name.trim().replace([' ', '_'], "-");
    let lower = s.to_ascii_lowercase();
    // Longest prefixes first so `Hu` is not read as `H` + `u`.
    let order = [
        Series::Humphreys,
        Series::Lyman,
        Series::Paschen,
        Series::Brackett,
        Series::Pfund,
        Series::Balmer,
    ];
    for series in order {
        let p = series.prefix().to_ascii_lowercase();
        if let Some(rest) = lower.strip_prefix(&p) {
            let rest = rest.trim_start_matches('-');
            if let Some(i) = GREEK.iter().position(|g| *g == rest) {
                return Some((series, series.lower() + 1 + i as u32));
            }
            if let Ok(n) = rest.parse::<u32>() {
                if n > series.lower() {
                    return Some((series, n));
                }
            }
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn case_b_balmer_fluxes_follow_the_table_and_fall_with_level() {
        // Osterbrock & Ferland (2006) table 4.2, from memory.
        assert_eq!(case_b_balmer(4), Some(1.0));
        assert_eq!(case_b_balmer(5), Some(0.468));
        assert_eq!(case_b_balmer(10), Some(0.0530));
        assert_eq!(case_b_balmer(2), None);
        // The n^-3 extrapolation continues the table's own slope: H8 -> H10
        // falls as (8/10)^3.1 in the table.
        let slope = (0.105f64 / 0.0530).ln() / (10.0f64 / 8.0).ln();
        assert!((slope - 3.0).abs() < 0.15, "{slope}");
        let mut last = f64::INFINITY;
        for n in 3..40 {
            let r = case_b_balmer(n).unwrap();
            assert!(r < last, "H{n}");
            last = r;
        }
        assert!((case_b_balmer(20).unwrap() - 0.0530 / 8.0).abs() < 1e-12);
    }

    #[test]
    fn hydrogen_ground_state_is_minus_13_6_ev_less_the_reduced_mass_part() {
        // CODATA 2018 R_inf h c = 13.605 693 122 994 eV, times 1/(1 + m_e/m_p).
        let e1 = Ion::hydrogen().energy_ev(1).unwrap();
        let expect = -13.605_693_122_994 / (1.0 + 1.0 / 1_836.152_673_43);
        assert!((e1 - expect).abs() < 1e-10, "{e1}");
    }

    #[test]
    fn member_names_round_trip_through_the_parser() {
        for s in Series::ALL {
            for nu in s.lower() + 1..s.lower() + 15 {
                let name = member_name(s, nu, false);
                assert_eq!(parse_member(&name), Some((s, nu)), "{name}");
            }
        }
    }
}
