//! Physical constants, CODATA 2018 recommended values (Tiesinga, Mohr, Newell
//! & Taylor 2021, Rev. Mod. Phys. 93, 025010; also J. Phys. Chem. Ref. Data 50,
//! 033105), SI units unless the name says otherwise.
//!
//! Since the 2019 revision of the SI, `h`, `c` and `e` are exact; the Rydberg
//! constant and the particle masses carry the CODATA 2018 standard
//! uncertainties quoted beside each value. Derived values (e.g. [`HC_EV_ANGSTROM`])
//! are computed here from the exact constants, so they cannot drift apart.

/// Speed of light in vacuum, m/s (exact by definition of the metre).
pub const C_M_S: f64 = 299_792_458.0;
/// Speed of light in vacuum, km/s.
pub const C_KM_S: f64 = C_M_S / 1000.0;

/// Planck constant, J s (exact, SI 2019).
pub const H_J_S: f64 = 6.626_070_15e-34;

/// Elementary charge, C (exact, SI 2019).
pub const E_C: f64 = 1.602_176_634e-19;

/// One electronvolt in joules (numerically the elementary charge; exact).
pub const EV_J: f64 = E_C;

/// Planck constant times the speed of light, J m (exact product of exact
/// constants; CODATA 2018 lists 1.986 445 857... e-25 J m).
pub const HC_J_M: f64 = H_J_S * C_M_S;

/// h c in eV Angstrom: a photon of wavelength `w` Angstrom (vacuum) carries
/// `HC_EV_ANGSTROM / w` eV. CODATA 2018: 12 398.419 843 320 026 eV A (exact).
pub const HC_EV_ANGSTROM: f64 = HC_J_M / EV_J * 1.0e10;

/// Rydberg constant for an infinitely heavy nucleus, R_inf, 1/m
/// (CODATA 2018: 10 973 731.568 160(21) m^-1).
pub const RYDBERG_INF_PER_M: f64 = 10_973_731.568_160;

/// Fine-structure constant alpha (CODATA 2018: 7.297 352 5693(11) e-3).
pub const FINE_STRUCTURE: f64 = 7.297_352_569_3e-3;

/// Electron mass, kg (CODATA 2018: 9.109 383 7015(28) e-31 kg).
pub const ELECTRON_MASS_KG: f64 = 9.109_383_701_5e-31;

/// Proton mass, kg (CODATA 2018: 1.672 621 923 69(51) e-27 kg).
pub const PROTON_MASS_KG: f64 = 1.672_621_923_69e-27;

/// Deuteron mass, kg (CODATA 2018: 3.343 583 7724(10) e-27 kg).
pub const DEUTERON_MASS_KG: f64 = 3.343_583_772_4e-27;

/// Alpha-particle (helium-4 nucleus) mass, kg (CODATA 2018: 6.644 657 3357(20) e-27 kg).
pub const ALPHA_MASS_KG: f64 = 6.644_657_335_7e-27;

/// Proton-electron mass ratio m_p / m_e (CODATA 2018: 1836.152 673 43(11)).
pub const PROTON_ELECTRON_MASS_RATIO: f64 = 1_836.152_673_43;

/// Deuteron-electron mass ratio m_d / m_e (CODATA 2018: 3670.482 967 88(13)).
pub const DEUTERON_ELECTRON_MASS_RATIO: f64 = 3_670.482_967_88;

/// Alpha particle-electron mass ratio m_alpha / m_e (CODATA 2018: 7294.299 541 42(24)).
pub const ALPHA_ELECTRON_MASS_RATIO: f64 = 7_294.299_541_42;

/// Rydberg energy R_inf h c in eV, derived from the constants above
/// (CODATA 2018 lists 13.605 693 122 994(26) eV).
pub const RYDBERG_ENERGY_EV: f64 = RYDBERG_INF_PER_M * HC_J_M / EV_J;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn derived_rydberg_energy_matches_the_codata_2018_value() {
        // CODATA 2018: R_inf h c = 13.605 693 122 994(26) eV.
        assert!((RYDBERG_ENERGY_EV - 13.605_693_122_994).abs() < 1e-11);
    }

    #[test]
    fn derived_hc_matches_the_codata_2018_value() {
        // CODATA 2018: h c = 1.239 841 984... e-6 eV m (exact).
        assert!((HC_EV_ANGSTROM - 12_398.419_843_320_026).abs() < 1e-9);
    }

    #[test]
    fn mass_ratios_agree_with_the_masses() {
        // CODATA 2018 lists masses and ratios separately; they must agree to
        // their quoted uncertainties (~1e-9 relative here).
        let r = |m: f64| m / ELECTRON_MASS_KG;
        assert!((r(PROTON_MASS_KG) / PROTON_ELECTRON_MASS_RATIO - 1.0).abs() < 2e-9);
        assert!((r(DEUTERON_MASS_KG) / DEUTERON_ELECTRON_MASS_RATIO - 1.0).abs() < 2e-9);
        assert!((r(ALPHA_MASS_KG) / ALPHA_ELECTRON_MASS_RATIO - 1.0).abs() < 2e-9);
    }
}
