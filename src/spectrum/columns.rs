//! Recognising columns by name and unit: shared by the text reader and the
//! FITS binary-table reader.
//!
//! A column name such as `wavelength_nm`, `lambda (A)`, `Flux [erg/s/cm2/A]`
//! or `ivar` is split into a base name and an optional unit; the base name is
//! matched against a small vocabulary of the trade's usual names.

/// What a column holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    /// Wavelength in linear units (medium as declared elsewhere).
    Wave,
    /// Wavelength that the name itself says is in air (`wave_air`, `awav`).
    WaveAir,
    /// Wavelength that the name itself says is in vacuum (`wave_vac`, `vacuum_wavelength`).
    WaveVacuum,
    /// Base-10 logarithm of the wavelength in Angstrom (`loglam`).
    LogWave,
    /// Flux.
    Flux,
    /// 1-sigma uncertainty.
    Error,
    /// Variance.
    Variance,
    /// Inverse variance.
    Ivar,
    /// Sky spectrum.
    Sky,
}

/// Split `name` into (lower-case base name, unit) where a unit is written in
/// brackets (`lambda (A)`, `flux [Jy]`) or as a known unit suffix after `_`,
/// `-` or a space (`wavelength_nm`, `wave um`).
pub fn split_unit(name: &str) -> (String, Option<String>) {
    let n = name.trim();
    for (open, close) in [('(', ')'), ('[', ']'), ('{', '}')] {
        if let (Some(a), Some(b)) = (n.find(open), n.rfind(close))
            && a < b
        {
            let base = n[..a].trim().to_ascii_lowercase();
            let unit = n[a + 1..b].trim().to_string();
            return (
                base.trim_end_matches(['_', '-']).to_string(),
                (!unit.is_empty()).then_some(unit),
            );
        }
    }
    let lower = n.to_ascii_lowercase();
    if let Some(pos) = lower.rfind(['_', '-', ' ']) {
        let suffix = &lower[pos + 1..];
        if wave_unit_factor(suffix).is_some() {
            let base = lower[..pos].trim().to_string();
            if !base.is_empty() {
                return (base, Some(n[pos + 1..].to_string()));
            }
        }
    }
    (lower, None)
}

/// The role of a column with base name `base` (lower case, unit removed).
pub fn role_of(base: &str) -> Option<Role> {
    let b: String = base
        .chars()
        .map(|c| if c == '-' || c == ' ' { '_' } else { c })
        .collect();
    let b = b.as_str();
    Some(match b {
        "wave" | "wavelength" | "wavelengths" | "lambda" | "lam" | "wl" | "wavelen" | "w"
        | "wav" | "spectral_axis" => Role::Wave,
        "awav" | "wave_air" | "wavelength_air" | "air_wave" | "air_wavelength" | "lambda_air"
        | "airwave" => Role::WaveAir,
        "wave_vac" | "wavelength_vac" | "wave_vacuum" | "wavelength_vacuum" | "vac_wave"
        | "vacuum_wave" | "vacuum_wavelength" | "lambda_vac" | "vacwave" => Role::WaveVacuum,
        "loglam" | "log_lambda" | "log_wave" | "log10_wave" | "log10lam" | "loglambda" => {
            Role::LogWave
        }
        "flux" | "f" | "flam" | "f_lambda" | "flambda" | "flux_density" | "fluxdensity"
        | "spec" | "spectrum" | "counts" | "intensity" | "signal" | "data" => Role::Flux,
        "error" | "err" | "sigma" | "flux_err" | "flux_error" | "fluxerr" | "e_flux" | "eflux"
        | "uncertainty" | "unc" | "noise" | "std" | "stddev" | "dflux" | "flux_sigma" | "sig"
        | "error_flux" => Role::Error,
        "var" | "variance" | "flux_var" | "flux_variance" => Role::Variance,
        "ivar" | "invvar" | "inverse_variance" | "inv_var" | "flux_ivar" | "weight" | "weights" => {
            Role::Ivar
        }
        "sky" | "sky_flux" | "skyflux" | "background" => Role::Sky,
        _ => return None,
    })
}

/// Multiply a wavelength in `unit` by the returned factor to get Angstrom.
/// Recognises the FITS spellings (`Angstrom`, `nm`, `um`, `m`) and the usual
/// informal ones (`A`, `AA`, `micron`, `Å`). Case matters only for `m`/`M`
/// (metre; `mm` and `cm` are also accepted).
pub fn wave_unit_factor(unit: &str) -> Option<f64> {
    let u = unit.trim();
    Some(match u.to_ascii_lowercase().as_str() {
        "angstrom" | "angstroms" | "a" | "aa" | "ang" | "angs" | "å" | "0.1nm" | "1e-10m" => 1.0,
        "nm" | "nanometer" | "nanometre" | "nanometers" | "nanometres" => 10.0,
        "um" | "µm" | "μm" | "micron" | "microns" | "micrometer" | "micrometre" | "mum" => 1.0e4,
        "m" | "meter" | "metre" | "meters" | "metres" => 1.0e10,
        "mm" => 1.0e7,
        "cm" => 1.0e8,
        _ => {
            if u == "Å" {
                1.0
            } else {
                return None;
            }
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn units_in_brackets_and_suffixes_are_split_off() {
        assert_eq!(
            split_unit("lambda (A)"),
            ("lambda".into(), Some("A".into()))
        );
        assert_eq!(
            split_unit("wavelength_nm"),
            ("wavelength".into(), Some("nm".into()))
        );
        assert_eq!(split_unit("Flux [Jy]"), ("flux".into(), Some("Jy".into())));
        assert_eq!(split_unit("flux_err"), ("flux_err".into(), None));
        assert_eq!(split_unit("ivar"), ("ivar".into(), None));
    }

    #[test]
    fn usual_column_names_get_their_roles() {
        assert_eq!(role_of("wavelength"), Some(Role::Wave));
        assert_eq!(role_of("wave_air"), Some(Role::WaveAir));
        assert_eq!(role_of("loglam"), Some(Role::LogWave));
        assert_eq!(role_of("flux_err"), Some(Role::Error));
        assert_eq!(role_of("ivar"), Some(Role::Ivar));
        assert_eq!(role_of("mystery"), None);
    }

    #[test]
    fn wavelength_units_convert_to_angstrom() {
        // Definitions of the SI prefixes and the Angstrom (1e-10 m): common practice, no source.
        assert_eq!(wave_unit_factor("nm"), Some(10.0));
        assert_eq!(wave_unit_factor("um"), Some(1.0e4));
        assert_eq!(wave_unit_factor("Angstrom"), Some(1.0));
        assert_eq!(wave_unit_factor("m"), Some(1.0e10));
        assert_eq!(wave_unit_factor("furlong"), None);
    }
}
