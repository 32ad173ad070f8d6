//! Rest-frame vacuum wavelengths the generator places lines at.
//!
//! The generator prefers the project's own catalogue ([`crate::lines::builtin`])
//! so that synthetic truth and the identifier agree on what a line is; this
//! table is the fallback for names the catalogue does not carry (weak metal
//! lines, molecular band heads, the blended quasar lines) and is what the
//! generator used before the catalogue existed.
//!
//! Values are vacuum Angstrom. Atomic lines: NIST Atomic Spectra Database
//! vacuum wavelengths (from memory, rounded to 0.01 A). Band heads and blends:
//! air values from common practice converted with
//! [`crate::physics::airvac::air_to_vacuum`] at build time where marked `air`.

/// One entry: a name, a wavelength, and whether the wavelength is in air.
struct Entry {
    name: &'static str,
    wavelength: f64,
    air: bool,
}

const fn vac(name: &'static str, wavelength: f64) -> Entry {
    Entry {
        name,
        wavelength,
        air: false,
    }
}

const fn air(name: &'static str, wavelength: f64) -> Entry {
    Entry {
        name,
        wavelength,
        air: true,
    }
}

/// The local table (see the module docs for sources).
const TABLE: &[Entry] = &[
    // Hydrogen, Lyman and Balmer series (NIST, vacuum, from memory).
    vac("Ly-beta", 1025.72),
    vac("Ly-alpha", 1215.67),
    vac("H-alpha", 6564.61),
    vac("H-alpha broad", 6564.61),
    vac("H-beta broad", 4862.68),
    vac("H-gamma broad", 4341.68),
    vac("Ly-alpha broad", 1215.67),
    vac("H-beta", 4862.68),
    vac("H-gamma", 4341.68),
    vac("H-delta", 4102.89),
    vac("H-epsilon", 3971.20),
    vac("H8", 3890.15),
    vac("H9", 3836.47),
    vac("H10", 3798.98),
    vac("H11", 3771.70),
    vac("H12", 3751.22),
    // Quasar broad lines (doublets given at their blended centroids, common
    // practice, no source).
    vac("N V 1240", 1240.14),
    vac("Si IV+O IV] 1400", 1399.8),
    vac("C IV 1549", 1549.06),
    vac("He II 1640", 1640.42),
    vac("C III] 1909", 1908.73),
    vac("Mg II 2798", 2798.75),
    vac("Mg II 2796", 2796.35),
    vac("Mg II 2803", 2803.53),
    // Nebular lines (NIST, vacuum, from memory).
    vac("[Ne V] 3426", 3426.85),
    vac("[O II] 3726", 3727.09),
    vac("[O II] 3729", 3729.88),
    vac("[Ne III] 3869", 3869.86),
    vac("He II 4686", 4687.02),
    vac("[O III] 4959", 4960.30),
    vac("[O III] 5007", 5008.24),
    vac("He I 5876", 5877.25),
    vac("[O I] 6300", 6302.05),
    vac("[N II] 6548", 6549.86),
    vac("[N II] 6584", 6585.27),
    vac("[S II] 6716", 6718.29),
    vac("[S II] 6731", 6732.67),
    // Stellar and old-population absorption (NIST vacuum; G band is the CH
    // band centre, common practice).
    vac("Ca II K", 3934.78),
    vac("Ca II H", 3969.59),
    vac("Ca I 4227", 4227.92),
    air("G band", 4304.4),
    vac("Mg I 5167", 5168.76),
    vac("Mg I 5173", 5174.13),
    vac("Mg I 5184", 5185.05),
    air("Fe I 5270", 5269.54),
    air("Fe I 5328", 5328.04),
    vac("Na D2", 5891.58),
    vac("Na D1", 5897.56),
    vac("Ca II 8498", 8500.36),
    vac("Ca II 8542", 8544.44),
    vac("Ca II 8662", 8664.52),
    air("Fe I 4046", 4045.81),
    air("Fe I 4384", 4383.55),
    air("Fe I 4958", 4957.60),
    air("Mg I 4481", 4481.13),
    air("He I 4471", 4471.48),
    air("CN 3883", 3883.0),
    air("K I 7665", 7664.90),
    air("K I 7699", 7698.96),
    // Molecular band heads of cool dwarfs (air, common practice, no source:
    // TiO gamma and alpha systems, CaH, VO).
    air("TiO 4954", 4954.0),
    air("TiO 5167", 5166.7),
    air("TiO 5448", 5448.0),
    air("TiO 5847", 5847.0),
    air("TiO 6158", 6158.0),
    air("CaH 6382", 6382.0),
    air("TiO 6651", 6651.0),
    air("CaH 6750", 6750.0),
    air("TiO 7054", 7054.0),
    air("VO 7400", 7400.0),
    air("TiO 7589", 7589.0),
    air("VO 7865", 7865.0),
    air("TiO 8432", 8432.0),
];

/// Rest vacuum wavelength (Angstrom) for `name`: the project's catalogue if it
/// has the line, else the local table.
///
/// # Panics
/// If `name` is in neither (a bug in the generator's recipes, caught by the
/// unit tests, which look up every recipe line).
pub fn rest(name: &str) -> f64 {
    if let Some(l) = catalogue().line(name) {
        return l.wavelength;
    }
    if let Some(w) = local(name) {
        return w;
    }
    panic!("synthetic recipe uses unknown line {name:?}")
}

/// The built-in catalogue, built once.
fn catalogue() -> &'static crate::lines::Catalogue {
    static CAT: std::sync::OnceLock<crate::lines::Catalogue> = std::sync::OnceLock::new();
    CAT.get_or_init(crate::lines::builtin)
}

/// The local table's value for `name`, converted to vacuum.
pub fn local(name: &str) -> Option<f64> {
    TABLE.iter().find(|e| e.name == name).map(|e| {
        if e.air {
            crate::physics::airvac::air_to_vacuum(e.wavelength)
        } else {
            e.wavelength
        }
    })
}

/// Every name in the local table.
pub fn names() -> impl Iterator<Item = &'static str> {
    TABLE.iter().map(|e| e.name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_local_table_agrees_with_the_catalogue_where_both_have_a_line() {
        // Two independent transcriptions (this table and the project's
        // catalogue, each from NIST values) must agree: atomic lines to
        // 0.05 A, molecular band heads (defined only to ~1 A) to 1.5 A.
        let mut both = 0;
        for name in names() {
            if let Some(l) = catalogue().line(name) {
                both += 1;
                let tol = if name.starts_with("TiO") || name == "G band" {
                    1.5
                } else {
                    0.05
                };
                let here = local(name).unwrap();
                assert!(
                    (here - l.wavelength).abs() < tol,
                    "{name}: local {here} vs catalogue {}",
                    l.wavelength
                );
            }
        }
        assert!(both > 40, "only {both} names in common");
    }
}
