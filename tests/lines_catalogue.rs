//! The built-in catalogue: coverage, wavelengths against NIST, hydrogen
//! against physics, ratios against their published values, foreground.

use zsift::lines::{self, ForegroundKind, LineKind, ObjectClass, Width, builtin};
use zsift::physics::airvac::vacuum_to_air;
use zsift::physics::hydrogen::{Ion, parse_member};

fn wl(name: &str) -> f64 {
    lines::builtin()
        .line(name)
        .unwrap_or_else(|| panic!("{name} missing"))
        .wavelength
}

#[test]
fn lines_are_sorted_unique_and_well_formed() {
    let cat = lines::builtin();
    assert!(cat.lines.len() > 100, "{}", cat.lines.len());
    for w in cat.lines.windows(2) {
        assert!(w[0].wavelength <= w[1].wavelength);
    }
    let mut names: Vec<&str> = cat.lines.iter().map(|l| l.name.as_str()).collect();
    names.sort_unstable();
    let n = names.len();
    names.dedup();
    assert_eq!(names.len(), n, "duplicate names");
    for l in &cat.lines {
        assert!(
            l.wavelength.is_finite() && l.wavelength > 900.0,
            "{}",
            l.name
        );
        assert!((0.0..=1.0).contains(&l.strength), "{}", l.name);
        assert!(!l.classes.is_empty() && !l.species.is_empty(), "{}", l.name);
    }
}

#[test]
fn the_required_lines_are_all_there() {
    let cat = lines::builtin();
    for name in [
        // nebular forbidden lines
        "[O II] 3726",
        "[O II] 3729",
        "[Ne III] 3869",
        "[O III] 4363",
        "[O III] 4959",
        "[O III] 5007",
        "[O I] 6300",
        "[O I] 6364",
        "[N II] 6548",
        "[N II] 6584",
        "[S II] 6716",
        "[S II] 6731",
        "[Ar III] 7136",
        "[S III] 9069",
        "[S III] 9531",
        // helium
        "He I 5876",
        "He I 4471",
        "He II 4686",
        "He II 1640",
        // quasar broad lines
        "Ly-alpha broad",
        "N V 1240",
        "Si IV+O IV] 1400",
        "C IV 1549",
        "C III] 1909",
        "Mg II 2798",
        "H-beta broad",
        "H-alpha broad",
        // stellar and galaxy absorption
        "Ca II K",
        "Ca II H",
        "Ca II 8498",
        "Ca II 8542",
        "Ca II 8662",
        "Na D1",
        "Na D2",
        "Mg I 5167",
        "Mg I 5173",
        "Mg I 5184",
        "G band",
        "Fe I 5270",
        "TiO 7054",
        // hydrogen series
        "Ly-alpha",
        "Ly-beta",
        "H-alpha",
        "H-beta",
        "H-gamma",
        "H-delta",
        "H-epsilon",
        "H8",
        "Pa-alpha",
        "Pa-beta",
        "Br-gamma",
        "Pf-alpha",
        "Hu-alpha",
    ] {
        assert!(cat.line(name).is_some(), "{name} missing");
    }
}

#[test]
fn catalogue_vacuum_wavelengths_match_nist_vacuum_values() {
    // NIST ASD vacuum (Ritz) wavelengths, from memory. The catalogue holds
    // most of these as air values converted with Morton (2000), so this also
    // checks the conversion against NIST's own; 0.02 A is 1 km/s.
    for (name, nist) in [
        ("[O II] 3726", 3727.092),
        ("[O II] 3729", 3729.875),
        ("[Ne III] 3869", 3869.86),
        ("[O III] 4363", 4364.436),
        ("[O III] 4959", 4960.295),
        ("[O III] 5007", 5008.240),
        ("[O I] 6300", 6302.046),
        ("[N II] 6548", 6549.86),
        ("[N II] 6584", 6585.27),
        ("[S II] 6716", 6718.29),
        ("[S II] 6731", 6732.67),
        ("He I 5876", 5877.25),
        ("Ca II K", 3934.777),
        ("Ca II H", 3969.591),
        ("Na D2", 5891.583),
        ("Na D1", 5897.558),
        ("Ca II 8498", 8500.36),
        ("Ca II 8542", 8544.44),
        ("Ca II 8662", 8664.52),
        ("H-alpha", 6564.61),
        ("H-beta", 4862.71),
        ("H-gamma", 4341.69),
        ("H-delta", 4102.89),
        ("Ly-alpha", 1215.670),
        ("C IV 1548", 1548.195),
        ("Mg II 2796", 2796.352),
    ] {
        let w = wl(name);
        assert!((w - nist).abs() < 0.02, "{name}: {w} vs NIST {nist}");
    }
}

#[test]
fn h_alpha_uses_the_laboratory_value_not_the_bohr_value() {
    // NIST ASD: 6564.61 A vacuum (from memory); Bohr + reduced mass gives
    // 6564.70, off by fine structure.
    assert!((wl("H-alpha") - 6564.61).abs() < 1e-9);
    assert!((wl("H-alpha broad") - 6564.61).abs() < 1e-9);
}

#[test]
fn every_hydrogen_line_agrees_with_the_physics_to_2e_5() {
    // Laboratory overrides and computed members alike stay within fine
    // structure of the Bohr formula with reduced mass.
    let h = Ion::hydrogen();
    let cat = lines::builtin();
    let mut n = 0;
    for l in cat.lines.iter().filter(|l| l.species == "H I") {
        let base = l.name.trim_end_matches(" broad");
        let (series, nu) = parse_member(base).unwrap_or_else(|| panic!("{}", l.name));
        let t = h.transition(series.lower(), nu).unwrap();
        let r = ((l.wavelength - t.vacuum_angstrom) / t.vacuum_angstrom).abs();
        assert!(
            r < 2e-5,
            "{}: {} vs {}",
            l.name,
            l.wavelength,
            t.vacuum_angstrom
        );
        n += 1;
    }
    assert!(n > 60, "{n}");
}

#[test]
fn each_value_names_its_source() {
    for a in builtin::annotated() {
        assert!(!a.source.is_empty(), "{}", a.line.name);
        // The tabulated value converts to the stored vacuum wavelength.
        let back = match a.medium {
            zsift::spectrum::Medium::Air => vacuum_to_air(a.line.wavelength),
            zsift::spectrum::Medium::Vacuum => a.line.wavelength,
        };
        assert!((back - a.tabulated).abs() < 1e-9, "{}", a.line.name);
    }
    assert_eq!(
        builtin::source_of("H-alpha"),
        Some(
            builtin::annotated()
                .iter()
                .find(|a| a.line.name == "H-alpha")
                .unwrap()
                .source
        )
    );
    assert_eq!(builtin::source_of("no such line"), None);
}

#[test]
fn fixed_ratios_have_their_published_values() {
    let cat = lines::builtin();
    let r = |n: &str, d: &str| cat.ratio(n, d).unwrap_or_else(|| panic!("{n}/{d}"));
    // Storey & Zeippen (2000): [O III] 5007/4959 = 2.98.
    assert_eq!(r("[O III] 5007", "[O III] 4959").value, 2.98);
    // Osterbrock & Ferland (2006): [N II] 6584/6548 = 3.05.
    assert_eq!(r("[N II] 6584", "[N II] 6548").value, 3.05);
    // Osterbrock & Ferland (2006) Table 4.2, Case B, 10^4 K, 100 cm^-3.
    assert_eq!(r("H-alpha", "H-beta").value, 2.86);
    assert_eq!(r("H-gamma", "H-beta").value, 0.468);
    assert_eq!(r("H-delta", "H-beta").value, 0.259);
    // Density-dependent doublets span their low- and high-density limits
    // (~1.45 and ~0.44 for [S II]; ~1.5 and ~0.35 for [O II]; from memory).
    let s2 = r("[S II] 6716", "[S II] 6731");
    assert!(s2.range.0 <= 0.45 && s2.range.1 >= 1.4);
    let o2 = r("[O II] 3729", "[O II] 3726");
    assert!(o2.range.0 <= 0.4 && o2.range.1 >= 1.45);
    for ratio in &cat.ratios {
        assert!(
            ratio.range.0 <= ratio.value && ratio.value <= ratio.range.1,
            "{ratio:?}"
        );
        assert!(!ratio.source.is_empty());
        let a = cat.line(&ratio.numerator).expect("numerator in catalogue");
        let b = cat
            .line(&ratio.denominator)
            .expect("denominator in catalogue");
        assert_eq!(a.group, b.group, "{ratio:?}");
    }
}

#[test]
fn typical_strengths_follow_the_case_b_decrement() {
    let cat = lines::builtin();
    let s = |n: &str| cat.line(n).unwrap().strength;
    assert!(s("H-alpha") > s("H-beta") && s("H-beta") > s("H-gamma"));
    assert!(s("[O III] 5007") > s("[O III] 4959"));
    assert!(s("[N II] 6584") > s("[N II] 6548"));
}

#[test]
fn kinds_classes_and_widths_fit_the_objects() {
    let cat = lines::builtin();
    let l = |n: &str| cat.line(n).unwrap();
    assert_eq!(l("[O III] 5007").kind, LineKind::Emission);
    assert_eq!(l("Ca II K").kind, LineKind::Absorption);
    assert!(l("Ca II K").classes.contains(&ObjectClass::Star));
    // The Balmer series is seen in absorption too (stars).
    assert_eq!(l("H-beta").kind, LineKind::Both);
    assert!(l("H-delta").classes.contains(&ObjectClass::Star));
    assert_eq!(l("C IV 1549").width, Width::Broad);
    assert_eq!(l("H-alpha broad").classes, vec![ObjectClass::Qso]);
    assert_eq!(l("[O III] 5007").width, Width::Narrow);
    assert_eq!(cat.group("[O III] 4959,5007").count(), 2);
    assert_eq!(cat.group("Ca II triplet").count(), 3);
    assert_eq!(cat.group("Mg b").count(), 3);
}

#[test]
fn resonance_doublet_blends_sit_at_the_oscillator_strength_weighted_mean() {
    // 2:1 f-ratio doublets (Morton 2003, from memory): the blend lies one
    // third of the way from the stronger (blue) component.
    let cat = lines::builtin();
    let c4 = cat.line("C IV 1549").unwrap().wavelength;
    let expect = 1548.195 + (1550.770 - 1548.195) / 3.0;
    assert!((c4 - expect).abs() < 0.01, "{c4}");
    let mg2 = cat.line("Mg II 2798").unwrap().wavelength;
    assert!(
        (mg2 - (2796.352 + (2803.531 - 2796.352) / 3.0)).abs() < 0.01,
        "{mg2}"
    );
}

#[test]
fn foreground_features_are_stored_in_vacuum_observed_frame() {
    let cat = lines::builtin();
    for w in cat.foreground.windows(2) {
        assert!(w[0].lo <= w[1].lo);
    }
    let f = |n: &str| {
        cat.foreground
            .iter()
            .find(|f| f.name == n)
            .unwrap_or_else(|| panic!("{n}"))
    };
    // [O I] 5577.338 A in air (NIST ASD, from memory) is 5578.887 in vacuum.
    let o1 = f("[O I] 5577 sky");
    assert_eq!(o1.kind, ForegroundKind::Sky);
    assert!((o1.lo - 5578.887).abs() < 0.01 && o1.lo == o1.hi);
    // O2 A band 7594-7621 A in air (common practice, from memory), 2.1 A
    // longer in vacuum.
    let a = f("O2 A band");
    assert_eq!(a.kind, ForegroundKind::Telluric);
    assert!((a.lo - 7594.0 - 2.09).abs() < 0.02, "{}", a.lo);
    assert!(a.hi > a.lo);
    let b = f("O2 B band");
    assert!(b.lo > 6867.0 && b.hi < 6890.0);
    for name in [
        "Na D2 sky",
        "[O I] 6300 sky",
        "[O I] 6364 sky",
        "OH 8345 sky",
        "H2O 9300 band",
    ] {
        f(name);
    }
    // Query by observed range: the A band is near 7600 A.
    assert!(
        cat.foreground_near(7600.0, 7601.0, 0.0)
            .any(|x| x.name == "O2 A band")
    );
    assert!(cat.foreground_near(4500.0, 4600.0, 5.0).next().is_none());
}

#[test]
fn lines_shift_into_a_range_at_a_redshift() {
    let cat = lines::builtin();
    // [O III] 5007 (vac 5008.24) at z = 0.5 is at 7512.36 A.
    let names: Vec<&str> = cat
        .in_range(0.5, 7510.0, 7515.0)
        .map(|l| l.name.as_str())
        .collect();
    assert!(names.contains(&"[O III] 5007"), "{names:?}");
    assert!(
        !cat.in_range(0.0, 7510.0, 7515.0)
            .any(|l| l.name == "[O III] 5007")
    );
}

#[test]
fn user_lines_merge_by_name_or_replace_the_list() {
    let mut cat = lines::builtin();
    let n = cat.lines.len();
    let mut ha = cat.line("H-alpha").unwrap().clone();
    ha.strength = 0.42;
    let mut extra = ha.clone();
    extra.name = "[Fe VII] 6087".into();
    extra.wavelength = 6088.7;
    cat.merge_lines(vec![ha, extra]);
    assert_eq!(cat.lines.len(), n + 1);
    assert_eq!(cat.line("H-alpha").unwrap().strength, 0.42);
    assert!(
        cat.lines
            .windows(2)
            .all(|w| w[0].wavelength <= w[1].wavelength)
    );

    let only = vec![
        cat.line("[Fe VII] 6087").unwrap().clone(),
        cat.line("H-alpha").unwrap().clone(),
    ];
    cat.replace_lines(only);
    assert_eq!(cat.lines.len(), 2);
    assert!(cat.ratios.is_empty(), "ratios need both lines present");
    assert!(!cat.foreground.is_empty(), "the site's sky stays");
}
