//! Doppler and redshift algebra.
//!
//! Conventions (each function says which it uses):
//! - **Redshift** `z = lambda_obs / lambda_rest - 1` (wavelengths in the same
//!   medium; inside zsift always vacuum).
//! - **Velocity** ([`velocity_from_z`], [`z_from_velocity`]) is the
//!   *relativistic* radial velocity of special relativity for motion along
//!   the line of sight: `1 + z = sqrt((1 + beta) / (1 - beta))`, `beta = v/c`,
//!   hence `v = c ((1+z)^2 - 1) / ((1+z)^2 + 1)`. Positive is receding. This
//!   is the convention of stellar radial velocities and of astropy's
//!   `doppler_relativistic` equivalency.
//! - The **optical convention** `cz` ([`optical_velocity`]) is what many
//!   galaxy catalogues quote as "velocity"; it equals the relativistic value
//!   only to first order (at z = 0.01 they differ by 15 km/s). The **radio
//!   convention** `c z / (1 + z)` ([`radio_velocity`]) is given for
//!   completeness. Neither is a physical velocity at cosmological z.
//! - Redshifts **compose** multiplicatively: `(1 + z) = (1 + z1)(1 + z2)`
//!   ([`compose`]), e.g. a star's velocity inside a galaxy, or the
//!   barycentric correction on top of a measured z.

use crate::physics::constants::C_KM_S;

/// Relativistic radial velocity (km/s) for redshift `z` (`z > -1`).
/// Returns NaN for `z <= -1` or NaN input.
pub fn velocity_from_z(z: f64) -> f64 {
    if z.is_nan() || z <= -1.0 {
        return f64::NAN;
    }
    if z.is_infinite() {
        return C_KM_S;
    }
    let s = (1.0 + z) * (1.0 + z);
    C_KM_S * (s - 1.0) / (s + 1.0)
}

/// Redshift for a relativistic radial velocity `v_kms` (km/s), the inverse of
/// [`velocity_from_z`]. `|v| < c` required: returns NaN outside (and for NaN),
/// `+inf` at exactly `v = c`.
pub fn z_from_velocity(v_kms: f64) -> f64 {
    let beta = v_kms / C_KM_S;
    if beta.is_nan() || beta.abs() > 1.0 {
        return f64::NAN;
    }
    if beta == 1.0 {
        return f64::INFINITY;
    }
    if beta == -1.0 {
        return f64::NAN;
    }
    // 1 + z = sqrt((1+b)/(1-b)) = exp(atanh b); exp_m1 keeps full precision
    // for small velocities.
    beta.atanh().exp_m1()
}

/// Optical-convention velocity `c z` (km/s). Not a physical velocity; see the
/// module notes.
pub fn optical_velocity(z: f64) -> f64 {
    C_KM_S * z
}

/// Redshift from an optical-convention velocity `cz` (km/s).
pub fn z_from_optical_velocity(cz_kms: f64) -> f64 {
    cz_kms / C_KM_S
}

/// Radio-convention velocity `c z / (1 + z)` (km/s), i.e. `c (1 - f/f0)`.
pub fn radio_velocity(z: f64) -> f64 {
    C_KM_S * z / (1.0 + z)
}

/// Compose two redshifts: `(1 + z) = (1 + z1)(1 + z2)`.
pub fn compose(z1: f64, z2: f64) -> f64 {
    // z1 + z2 + z1 z2, which keeps precision for small z.
    z1 + z2 + z1 * z2
}

/// The redshift `z2` that, composed with `z1`, gives `z`: `(1+z)/(1+z1) - 1`.
pub fn decompose(z: f64, z1: f64) -> f64 {
    (z - z1) / (1.0 + z1)
}

/// Redshift of an observed wavelength relative to a rest wavelength (same
/// medium): `observed / rest - 1`.
pub fn z_from_wavelengths(rest: f64, observed: f64) -> f64 {
    (observed - rest) / rest
}

/// Relativistic velocity (km/s) of wavelength `lambda` relative to the
/// reference wavelength `lambda_ref`, i.e. the velocity that shifts
/// `lambda_ref` to `lambda`. Positive when `lambda > lambda_ref` (redward).
/// Use it for the velocity offset of a line from its expected position, or
/// between two components of a line.
pub fn velocity_offset(lambda_ref: f64, lambda: f64) -> f64 {
    velocity_from_z(z_from_wavelengths(lambda_ref, lambda))
}

/// Shift a rest wavelength to redshift `z`.
pub fn shift(rest: f64, z: f64) -> f64 {
    rest * (1.0 + z)
}

/// Bring an observed wavelength back to the rest frame of redshift `z`.
pub fn unshift(observed: f64, z: f64) -> f64 {
    observed / (1.0 + z)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn zero_redshift_is_zero_velocity() {
        assert_eq!(velocity_from_z(0.0), 0.0);
        assert_eq!(z_from_velocity(0.0), 0.0);
    }

    #[test]
    fn impossible_inputs_give_nan_not_a_panic() {
        assert!(velocity_from_z(-1.0).is_nan());
        assert!(z_from_velocity(-C_KM_S).is_nan());
        assert!(z_from_velocity(2.0 * C_KM_S).is_nan());
        assert!(z_from_velocity(f64::NAN).is_nan());
    }
}
