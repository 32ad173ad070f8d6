//! CODATA 2018 constants against astropy's copy of the same release.

use zsift::physics::constants::{
    C_M_S, E_C, ELECTRON_MASS_KG, H_J_S, PROTON_ELECTRON_MASS_RATIO, PROTON_MASS_KG,
    RYDBERG_INF_PER_M,
};

#[test]
fn constants_match_astropy_codata_2018() {
    // astropy 8.0.2 astropy.constants.codata2018, written by
    // tests/fixtures/physics/make_fixtures.py.
    let path = format!(
        "{}/tests/fixtures/physics/codata_astropy.csv",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(path).expect("fixture present");
    let mut seen = 0;
    for line in text.lines().filter(|l| !l.starts_with('#')).skip(1) {
        let (name, v) = line.split_once(',').expect("two columns");
        let v: f64 = v.parse().expect("number");
        let ours = match name {
            "m_e" => ELECTRON_MASS_KG,
            "m_p" => PROTON_MASS_KG,
            "h" => H_J_S,
            "c" => C_M_S,
            "e" => E_C,
            "Ryd" => RYDBERG_INF_PER_M,
            other => panic!("unexpected constant {other}"),
        };
        assert!(
            ((ours - v) / v).abs() < 1e-15,
            "{name}: {ours} vs astropy {v}"
        );
        seen += 1;
    }
    assert_eq!(seen, 6);
}

#[test]
fn proton_to_electron_mass_ratio_is_the_codata_2018_value() {
    // CODATA 2018: m_p / m_e = 1836.152 673 43(11).
    assert!((PROTON_MASS_KG / ELECTRON_MASS_KG - 1_836.152_673_43).abs() < 2e-6);
    assert_eq!(PROTON_ELECTRON_MASS_RATIO, 1_836.152_673_43);
}
