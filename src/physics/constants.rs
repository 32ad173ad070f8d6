//! Physical constants, CODATA 2018 recommended values (Tiesinga et al. 2021,
//! Rev. Mod. Phys. 93, 025010), SI units unless the name says otherwise.

/// Speed of light in vacuum, m/s (exact by definition of the metre).
pub const C_M_S: f64 = 299_792_458.0;
/// Speed of light in vacuum, km/s.
pub const C_KM_S: f64 = C_M_S / 1000.0;
