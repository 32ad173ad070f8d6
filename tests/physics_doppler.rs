//! Doppler and redshift algebra against astropy and worked values.

use zsift::physics::constants::C_KM_S;
use zsift::physics::doppler::{
    compose, decompose, optical_velocity, radio_velocity, shift, unshift, velocity_from_z,
    velocity_offset, z_from_optical_velocity, z_from_velocity, z_from_wavelengths,
};

mod physics_common;
use physics_common::fixture;

#[test]
fn velocity_from_z_matches_astropy_doppler_redshift() {
    // astropy 8.0.2 u.doppler_redshift() (relativistic), fixture written by
    // tests/fixtures/physics/make_fixtures.py.
    let rows = fixture("doppler_astropy.csv");
    assert!(rows.len() >= 10);
    for r in &rows {
        let (z, v) = (r[0], r[1]);
        let got = velocity_from_z(z);
        assert!(
            (got - v).abs() < 1e-6 * v.abs().max(1.0),
            "z={z}: {got} vs astropy {v}"
        );
        let back = z_from_velocity(v);
        assert!(
            (back - z).abs() < 1e-9 * z.abs().max(1e-3),
            "v={v}: {back} vs {z}"
        );
    }
}

#[test]
fn shifting_h_alpha_matches_astropy_doppler_relativistic() {
    // astropy 8.0.2 u.doppler_relativistic(6564.61 A): the wavelength seen
    // at the fixture's velocities (same fixture).
    for r in fixture("doppler_astropy.csv") {
        let obs = shift(6564.61, z_from_velocity(r[1]));
        assert!((obs - r[2]).abs() < 1e-6, "{obs} vs astropy {}", r[2]);
    }
}

#[test]
fn worked_values_of_the_relativistic_formula() {
    // Worked by hand from 1 + z = sqrt((1 + b) / (1 - b)):
    // z = 1 -> (1+z)^2 = 4 -> b = 3/5; b = 0.8 -> 1 + z = sqrt(9) = 3.
    assert!((velocity_from_z(1.0) - 0.6 * C_KM_S).abs() < 1e-9);
    assert!((z_from_velocity(0.8 * C_KM_S) - 2.0).abs() < 1e-12);
    // b = -0.6 -> 1 + z = sqrt(0.4 / 1.6) = 1/2.
    assert!((z_from_velocity(-0.6 * C_KM_S) + 0.5).abs() < 1e-12);
}

#[test]
fn small_velocities_keep_full_precision() {
    // To second order z = b + b^2/2; at 1 m/s the two agree to 1e-20.
    let v = 0.001; // km/s
    let b = v / C_KM_S;
    assert!((z_from_velocity(v) - (b + 0.5 * b * b)).abs() < 1e-20);
    assert!((velocity_from_z(z_from_velocity(v)) - v).abs() < 1e-15);
}

#[test]
fn optical_cz_differs_from_the_relativistic_velocity_beyond_first_order() {
    // cz at z = 0.01 is 2997.92 km/s; the relativistic velocity is 2982.94
    // (astropy fixture row z = 0.01): 15 km/s apart.
    assert!((optical_velocity(0.01) - 2_997.924_58).abs() < 1e-6);
    assert!((optical_velocity(0.01) - velocity_from_z(0.01) - 14.99).abs() < 0.01);
    assert!((z_from_optical_velocity(optical_velocity(0.3)) - 0.3).abs() < 1e-15);
    // Radio convention c z / (1 + z): 0.5 c at z = 1.
    assert!((radio_velocity(1.0) - 0.5 * C_KM_S).abs() < 1e-9);
}

#[test]
fn redshifts_compose_multiplicatively() {
    // (1 + z) = (1 + z1)(1 + z2): 1.5 * 1.2 = 1.8.
    assert!((compose(0.5, 0.2) - 0.8).abs() < 1e-15);
    assert!((decompose(0.8, 0.5) - 0.2).abs() < 1e-15);
    // A star moving at +100 km/s inside a galaxy at z = 0.1: velocities do
    // not add, redshifts multiply.
    let z = compose(0.1, z_from_velocity(100.0));
    assert!((shift(6564.61, z) - shift(shift(6564.61, 0.1), z_from_velocity(100.0))).abs() < 1e-9);
    assert!((unshift(shift(5008.24, z), z) - 5008.24).abs() < 1e-9);
    // Composition with zero is the identity, and it is commutative.
    assert_eq!(compose(0.3, 0.0), 0.3);
    assert_eq!(compose(0.3, 0.7), compose(0.7, 0.3));
}

#[test]
fn velocity_offset_between_two_wavelengths() {
    // 1.8 A at H-alpha is about 82 km/s (the air/vacuum trap); a line at its
    // own wavelength is at 0; blueward is negative.
    let v = velocity_offset(6562.80, 6564.61);
    assert!((v - 82.7).abs() < 0.2, "{v}");
    assert_eq!(velocity_offset(5008.24, 5008.24), 0.0);
    assert!(velocity_offset(5008.24, 5007.0) < 0.0);
    // Two lines of one object give the same z (not the same offset in A).
    let z = 0.25;
    let a = z_from_wavelengths(4960.295, shift(4960.295, z));
    let b = z_from_wavelengths(5008.240, shift(5008.240, z));
    assert!((a - b).abs() < 1e-14);
}

#[test]
fn impossible_velocities_give_nan_never_a_panic() {
    assert!(z_from_velocity(1.5 * C_KM_S).is_nan());
    assert!(z_from_velocity(-C_KM_S).is_nan());
    assert_eq!(z_from_velocity(C_KM_S), f64::INFINITY);
    assert!(velocity_from_z(-2.0).is_nan());
    assert!(velocity_from_z(f64::NAN).is_nan());
}

proptest::proptest! {
    #[test]
    fn velocity_and_z_are_inverse(z in -0.95f64..12.0) {
        let v = velocity_from_z(z);
        proptest::prop_assert!(v.abs() < C_KM_S);
        proptest::prop_assert!((z_from_velocity(v) - z).abs() < 1e-9 * (1.0 + z.abs()));
    }

    #[test]
    fn composition_is_associative_and_undone_by_decompose(
        a in -0.5f64..5.0, b in -0.5f64..5.0, c in -0.5f64..5.0,
    ) {
        let l = compose(compose(a, b), c);
        let r = compose(a, compose(b, c));
        proptest::prop_assert!((l - r).abs() < 1e-12 * (1.0 + l.abs()));
        proptest::prop_assert!((decompose(compose(a, b), a) - b).abs() < 1e-12 * (1.0 + b.abs()));
    }
}
