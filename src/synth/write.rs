//! Writers: a [`Synthetic`] spectrum as a file in any layout zsift reads.
//!
//! | [`Format`] | layout |
//! |---|---|
//! | `FitsImage` | primary HDU 1-D flux image with spectral WCS; `ERROR` and `SKY` image extensions |
//! | `FitsImageRows` | primary HDU 2-D image, rows flux, error[, sky] (`ROW1`.. name them) |
//! | `FitsTable` | binary table, one row per pixel: `WAVELENGTH`, `FLUX`, `ERROR`[, `SKY`] |
//! | `FitsTableVector` | binary table, one row of vector columns: `WAVE`, `FLUX`, `IVAR`[, `SKY`] |
//! | `Csv`, `Tsv` | `# key: value` metadata comments, a header row, one pixel per line |
//! | `Whitespace` | `# key: value` comments, no header row; columns wavelength, flux, error |
//!
//! Spectral WCS follows Greisen et al. (2006, A&A 446, 747; WCS Paper III):
//! `CTYPE1` = `WAVE` / `AWAV` for a grid linear in vacuum / air wavelength,
//! `WAVE-LOG` / `AWAV-LOG` for a logarithmic grid (lambda = CRVAL1 exp(CDELT1
//! (p - CRPIX1) / CRVAL1)), `CUNIT1 = 'Angstrom'`. An image can only be written
//! in the medium in which the instrument's grid is regular (converting the
//! axis would make it irregular); tables and text can be written in either.
//! Tables declare their medium with `AIRORVAC` (`air` / `vac`); text with
//! `# medium: air|vacuum`.
//!
//! Metadata: `OBJECT`, `RA`, `DEC`, `EQUINOX`, `RADESYS`, `DATE-OBS`,
//! `MJD-OBS`, `TIMESYS`, `EXPTIME`, `OBSGEO-X/Y/Z` (FITS Standard 4.0 and WCS
//! Paper VII names), `BUNIT`, and any extra string cards held in
//! [`Metadata::header`].

use super::fits::{Header, f32_be, f64_be, pad_data};
use super::{Instrument, Sampling, Synthetic};
use crate::physics::airvac::vacuum_to_air;
use crate::spectrum::{Medium, Metadata, Spectrum};
use serde::{Deserialize, Serialize};
use std::io;
use std::path::Path;

/// A file layout the writers produce.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Format {
    /// 1-D FITS image with spectral WCS, error and sky as image extensions.
    FitsImage,
    /// 2-D FITS image, one row each for flux, error and (if present) sky.
    FitsImageRows,
    /// FITS binary table, one row per pixel.
    FitsTable,
    /// FITS binary table, one row of vector columns (inverse variance).
    FitsTableVector,
    /// Comma-separated text.
    Csv,
    /// Tab-separated text.
    Tsv,
    /// Whitespace-separated text without a header row.
    Whitespace,
}

impl Format {
    /// Every format, in a fixed order.
    pub const ALL: [Format; 7] = [
        Format::FitsImage,
        Format::FitsImageRows,
        Format::FitsTable,
        Format::FitsTableVector,
        Format::Csv,
        Format::Tsv,
        Format::Whitespace,
    ];

    /// File-name extension (without the dot).
    pub fn extension(self) -> &'static str {
        match self {
            Format::FitsImage
            | Format::FitsImageRows
            | Format::FitsTable
            | Format::FitsTableVector => "fits",
            Format::Csv => "csv",
            Format::Tsv => "tsv",
            Format::Whitespace => "txt",
        }
    }

    /// A short name for tables and file names.
    pub fn label(self) -> &'static str {
        match self {
            Format::FitsImage => "image",
            Format::FitsImageRows => "image-rows",
            Format::FitsTable => "table",
            Format::FitsTableVector => "table-vector",
            Format::Csv => "csv",
            Format::Tsv => "tsv",
            Format::Whitespace => "text",
        }
    }

    /// True for the FITS image layouts (which need a regular grid).
    pub fn is_image(self) -> bool {
        matches!(self, Format::FitsImage | Format::FitsImageRows)
    }
}

/// Write `syn` to `path` in `format`, wavelengths in `medium`.
///
/// Errors: an image asked for in a medium other than the instrument's
/// (`InvalidInput`), and any I/O error.
pub fn write(path: &Path, syn: &Synthetic, format: Format, medium: Medium) -> io::Result<()> {
    let bytes = to_bytes(syn, format, medium)?;
    std::fs::write(path, bytes)
}

/// The bytes [`write`] would write.
pub fn to_bytes(syn: &Synthetic, format: Format, medium: Medium) -> io::Result<Vec<u8>> {
    let s = &syn.spectrum;
    match format {
        Format::FitsImage => fits_image(s, &syn.instrument, medium, false),
        Format::FitsImageRows => fits_image(s, &syn.instrument, medium, true),
        Format::FitsTable => Ok(fits_table(s, medium, false)),
        Format::FitsTableVector => Ok(fits_table(s, medium, true)),
        Format::Csv => Ok(text(s, medium, ",", true)),
        Format::Tsv => Ok(text(s, medium, "\t", true)),
        Format::Whitespace => Ok(text(s, medium, "  ", false)),
    }
}

fn medium_wave(s: &Spectrum, medium: Medium) -> Vec<f64> {
    match medium {
        Medium::Vacuum => s.wave.clone(),
        Medium::Air => s.wave.iter().map(|w| vacuum_to_air(*w)).collect(),
    }
}

fn flux_unit(meta: &Metadata) -> String {
    meta.flux_unit
        .clone()
        .unwrap_or_else(|| "1e-17 erg/s/cm2/Angstrom".into())
}

/// Observation metadata cards shared by every FITS layout.
fn meta_cards(h: &mut Header, meta: &Metadata) {
    h.comment("Synthetic spectrum from zsift's generator: invented data.");
    if !meta.target.is_empty() {
        h.string("OBJECT", &meta.target, "target name");
    }
    if let Some(ra) = meta.ra_deg {
        h.real("RA", ra, "[deg] right ascension");
    }
    if let Some(dec) = meta.dec_deg {
        h.real("DEC", dec, "[deg] declination");
    }
    if let Some(eq) = meta.equinox {
        h.string("RADESYS", "FK5", "coordinate frame");
        h.real("EQUINOX", eq, "[yr] equinox of coordinates");
    }
    if let Some(d) = &meta.date_obs {
        h.string("DATE-OBS", d, "start of exposure");
    }
    if let Some(m) = meta.mjd_obs {
        h.real("MJD-OBS", m, "[d] MJD at start of exposure");
    }
    if let Some(t) = &meta.time_scale {
        h.string("TIMESYS", t, "time scale of date keywords");
    }
    if let Some(e) = meta.exposure_s {
        h.real("EXPTIME", e, "[s] exposure time");
    }
    if let Some([x, y, z]) = meta.site.geocentric_m {
        h.real("OBSGEO-X", x, "[m] observatory geocentric X");
        h.real("OBSGEO-Y", y, "[m] observatory geocentric Y");
        h.real("OBSGEO-Z", z, "[m] observatory geocentric Z");
    }
    if let Some(n) = &meta.site.name {
        h.string("OBSERVAT", n, "observatory");
    }
    for (k, v) in &meta.header {
        let key: String = k
            .to_ascii_uppercase()
            .chars()
            .filter(|c| c.is_ascii_alphanumeric() || *c == '-' || *c == '_')
            .take(8)
            .collect();
        if !key.is_empty() {
            h.string(&key, v, "");
        }
    }
}

fn wcs_cards(h: &mut Header, inst: &Instrument, axis: usize) {
    let air = inst.medium == Medium::Air;
    match inst.sampling {
        Sampling::Linear { step } => {
            h.string(
                &format!("CTYPE{axis}"),
                if air { "AWAV" } else { "WAVE" },
                if air {
                    "air wavelength, linear"
                } else {
                    "vacuum wavelength, linear"
                },
            );
            h.string(&format!("CUNIT{axis}"), "Angstrom", "");
            h.real(&format!("CRPIX{axis}"), 1.0, "reference pixel");
            h.real(
                &format!("CRVAL{axis}"),
                inst.lo,
                "[Angstrom] at reference pixel",
            );
            h.real(&format!("CDELT{axis}"), step, "[Angstrom] per pixel");
        }
        Sampling::Log10 { dlog10 } => {
            h.string(
                &format!("CTYPE{axis}"),
                if air { "AWAV-LOG" } else { "WAVE-LOG" },
                "logarithmic wavelength axis (WCS Paper III)",
            );
            h.string(&format!("CUNIT{axis}"), "Angstrom", "");
            h.real(&format!("CRPIX{axis}"), 1.0, "reference pixel");
            h.real(
                &format!("CRVAL{axis}"),
                inst.lo,
                "[Angstrom] at reference pixel",
            );
            h.real(
                &format!("CDELT{axis}"),
                inst.lo * dlog10 * std::f64::consts::LN_10,
                "[Angstrom] CRVAL1 x ln(10) x dex per pixel",
            );
        }
    }
    h.string(
        "SPECSYS",
        "TOPOCENT",
        "wavelengths as observed at the telescope",
    );
}

fn fits_image(s: &Spectrum, inst: &Instrument, medium: Medium, rows: bool) -> io::Result<Vec<u8>> {
    if medium != inst.medium {
        return Err(io::Error::new(
            io::ErrorKind::InvalidInput,
            format!(
                "a FITS image axis must be regular: instrument {} samples in {}, not {}",
                inst.name,
                inst.medium.as_str(),
                medium.as_str()
            ),
        ));
    }
    let n = s.len();
    let grid = inst.native_grid();
    if grid.len() != n {
        return Err(io::Error::new(
            io::ErrorKind::InvalidInput,
            "spectrum does not match its instrument's grid",
        ));
    }
    let bunit = flux_unit(&s.meta);
    let mut out = Vec::new();
    if rows {
        let mut planes: Vec<(&str, &[f64])> = vec![("FLUX", &s.flux)];
        if let Some(e) = &s.sigma {
            planes.push(("ERROR", e));
        }
        if let Some(k) = &s.sky {
            planes.push(("SKY", k));
        }
        let mut h = Header::new();
        h.logical("SIMPLE", true, "conforms to FITS Standard 4.0")
            .int("BITPIX", -32, "IEEE single precision")
            .int("NAXIS", 2, "")
            .int("NAXIS1", n as i64, "pixels along the spectrum")
            .int("NAXIS2", planes.len() as i64, "rows: see ROWn");
        wcs_cards(&mut h, inst, 1);
        for (i, (name, _)) in planes.iter().enumerate() {
            h.string(&format!("ROW{}", i + 1), name, "content of this image row");
        }
        h.string("BUNIT", &bunit, "flux (and error, sky) unit");
        meta_cards(&mut h, &s.meta);
        out.extend(h.bytes());
        let mut data = Vec::with_capacity(n * 4 * planes.len());
        for (_, v) in &planes {
            data.extend(f32_be(v));
        }
        out.extend(pad_data(data));
    } else {
        let mut h = Header::new();
        h.logical("SIMPLE", true, "conforms to FITS Standard 4.0")
            .int("BITPIX", -32, "IEEE single precision")
            .int("NAXIS", 1, "")
            .int("NAXIS1", n as i64, "pixels")
            .logical("EXTEND", true, "error and sky may follow as extensions");
        wcs_cards(&mut h, inst, 1);
        h.string("BUNIT", &bunit, "flux unit");
        meta_cards(&mut h, &s.meta);
        out.extend(h.bytes());
        out.extend(pad_data(f32_be(&s.flux)));
        let mut ext = |name: &str, v: &[f64]| {
            let mut h = Header::new();
            h.string("XTENSION", "IMAGE", "image extension")
                .int("BITPIX", -32, "")
                .int("NAXIS", 1, "")
                .int("NAXIS1", n as i64, "")
                .int("PCOUNT", 0, "")
                .int("GCOUNT", 1, "")
                .string("EXTNAME", name, "");
            wcs_cards(&mut h, inst, 1);
            h.string("BUNIT", &bunit, "");
            out.extend(h.bytes());
            out.extend(pad_data(f32_be(v)));
        };
        if let Some(e) = &s.sigma {
            ext("ERROR", e);
        }
        if let Some(k) = &s.sky {
            ext("SKY", k);
        }
    }
    Ok(out)
}

enum Col<'a> {
    D(&'a [f64]),
    E(&'a [f64]),
}

fn fits_table(s: &Spectrum, medium: Medium, vector: bool) -> Vec<u8> {
    let n = s.len();
    let wave = medium_wave(s, medium);
    let ivar: Option<Vec<f64>> = s.sigma.as_ref().map(|e| {
        e.iter()
            .map(|x| if *x > 0.0 { 1.0 / (x * x) } else { 0.0 })
            .collect()
    });
    let bunit = flux_unit(&s.meta);
    let wname = if vector { "WAVE" } else { "WAVELENGTH" };
    let mut cols: Vec<(&str, Col, String)> = vec![
        (wname, Col::D(&wave), "Angstrom".into()),
        ("FLUX", Col::E(&s.flux), bunit.clone()),
    ];
    if vector {
        if let Some(iv) = &ivar {
            cols.push(("IVAR", Col::E(iv), format!("({bunit})**-2")));
        }
    } else if let Some(e) = &s.sigma {
        cols.push(("ERROR", Col::E(e), bunit.clone()));
    }
    if let Some(k) = &s.sky {
        cols.push(("SKY", Col::E(k), bunit.clone()));
    }
    let medium_word = match medium {
        Medium::Air => "air",
        Medium::Vacuum => "vac",
    };

    let mut out = Vec::new();
    let mut h = Header::new();
    h.logical("SIMPLE", true, "conforms to FITS Standard 4.0")
        .int("BITPIX", 8, "")
        .int("NAXIS", 0, "no primary data; the spectrum is in HDU 1")
        .logical("EXTEND", true, "");
    meta_cards(&mut h, &s.meta);
    out.extend(h.bytes());

    let width = |c: &Col| match c {
        Col::D(_) => 8,
        Col::E(_) => 4,
    };
    let (row_bytes, nrows) = if vector {
        (cols.iter().map(|c| width(&c.1) * n).sum::<usize>(), 1)
    } else {
        (cols.iter().map(|c| width(&c.1)).sum::<usize>(), n)
    };
    let mut h = Header::new();
    h.string("XTENSION", "BINTABLE", "binary table extension")
        .int("BITPIX", 8, "")
        .int("NAXIS", 2, "")
        .int("NAXIS1", row_bytes as i64, "bytes per row")
        .int("NAXIS2", nrows as i64, "rows")
        .int("PCOUNT", 0, "")
        .int("GCOUNT", 1, "")
        .int("TFIELDS", cols.len() as i64, "");
    for (i, (name, c, unit)) in cols.iter().enumerate() {
        let letter = match c {
            Col::D(_) => "D",
            Col::E(_) => "E",
        };
        let form = if vector {
            format!("{n}{letter}")
        } else {
            letter.to_string()
        };
        h.string(&format!("TTYPE{}", i + 1), name, "");
        h.string(&format!("TFORM{}", i + 1), &form, "");
        h.string(&format!("TUNIT{}", i + 1), unit, "");
    }
    h.string("EXTNAME", "SPECTRUM", "");
    h.string("AIRORVAC", medium_word, "medium of the wavelength column");
    h.string(
        "SPECSYS",
        "TOPOCENT",
        "wavelengths as observed at the telescope",
    );
    meta_cards(&mut h, &s.meta);
    out.extend(h.bytes());

    let mut data = Vec::with_capacity(row_bytes * nrows);
    if vector {
        for (_, c, _) in &cols {
            match c {
                Col::D(v) => data.extend(f64_be(v)),
                Col::E(v) => data.extend(f32_be(v)),
            }
        }
    } else {
        for i in 0..n {
            for (_, c, _) in &cols {
                match c {
                    Col::D(v) => data.extend_from_slice(&v[i].to_be_bytes()),
                    Col::E(v) => data.extend_from_slice(&(v[i] as f32).to_be_bytes()),
                }
            }
        }
    }
    out.extend(pad_data(data));
    out
}

/// Six significant digits, fixed notation in the everyday range.
fn sig6(x: f64) -> String {
    if !x.is_finite() {
        return "nan".into();
    }
    if x == 0.0 {
        return "0".into();
    }
    let a = x.abs();
    if (1e-3..1e6).contains(&a) {
        let decimals = (5 - a.log10().floor() as i32).max(0) as usize;
        format!("{x:.decimals$}")
    } else {
        format!("{x:.5e}")
    }
}

fn text(s: &Spectrum, medium: Medium, sep: &str, header_row: bool) -> Vec<u8> {
    let wave = medium_wave(s, medium);
    let meta = &s.meta;
    let mut out = String::new();
    let mut kv = |k: &str, v: String| {
        out.push_str(&format!("# {k}: {}\n", crate::text::clean(&v)));
    };
    if !meta.target.is_empty() {
        kv("object", meta.target.clone());
    }
    for (k, v) in &meta.header {
        kv(&k.to_ascii_lowercase(), v.clone());
    }
    if let Some(n) = &meta.site.name {
        kv("observatory", n.clone());
    }
    if let Some(ra) = meta.ra_deg {
        kv("ra", format!("{ra}"));
    }
    if let Some(dec) = meta.dec_deg {
        kv("dec", format!("{dec}"));
    }
    if let Some(eq) = meta.equinox {
        kv("equinox", format!("{eq}"));
    }
    if let Some(d) = &meta.date_obs {
        kv("date-obs", d.clone());
    }
    if let Some(m) = meta.mjd_obs {
        kv("mjd-obs", format!("{m}"));
    }
    if let Some(t) = &meta.time_scale {
        kv("timesys", t.clone());
    }
    if let Some(e) = meta.exposure_s {
        kv("exptime", format!("{e}"));
    }
    if let Some([x, y, z]) = meta.site.geocentric_m {
        kv("obsgeo-x", format!("{x}"));
        kv("obsgeo-y", format!("{y}"));
        kv("obsgeo-z", format!("{z}"));
    }
    kv("medium", medium.as_str().to_string());
    kv("wavelength_unit", "Angstrom".into());
    kv("flux_unit", flux_unit(meta));
    let mut names = vec!["wavelength", "flux"];
    if s.sigma.is_some() {
        names.push("error");
    }
    // The header-less layout carries only the conventional first three columns.
    let with_sky = header_row && s.sky.is_some();
    if with_sky {
        names.push("sky");
    }
    if header_row {
        out.push_str(&names.join(sep));
        out.push('\n');
    } else {
        out.push_str(&format!("# columns: {}\n", names.join(" ")));
    }
    for i in 0..s.len() {
        out.push_str(&format!("{:.4}", wave[i]));
        out.push_str(sep);
        out.push_str(&sig6(s.flux[i]));
        if let Some(e) = &s.sigma {
            out.push_str(sep);
            out.push_str(&sig6(e[i]));
        }
        if with_sky && let Some(k) = &s.sky {
            out.push_str(sep);
            out.push_str(&sig6(k[i]));
        }
        out.push('\n');
    }
    out.into_bytes()
}

#[cfg(test)]
mod tests {
    use super::super::{Instrument, Kind, SynthSpec, generate};
    use super::*;

    fn sample(inst: Instrument) -> Synthetic {
        let mut spec = SynthSpec::new(Kind::SolarStar, 1e-4, 20.0, inst);
        spec.meta.target = "Test 'star'".into();
        spec.meta.ra_deg = Some(150.25);
        generate(&spec, 1)
    }

    #[test]
    fn every_fits_layout_is_a_whole_number_of_blocks() {
        let syn = sample(Instrument::wide());
        for f in Format::ALL.iter().filter(|f| f.extension() == "fits") {
            let b = to_bytes(&syn, *f, Medium::Vacuum).unwrap();
            assert_eq!(b.len() % 2880, 0, "{f:?}");
            assert!(b.starts_with(b"SIMPLE  =                    T"));
        }
    }

    #[test]
    fn an_image_cannot_be_written_in_the_other_medium() {
        let syn = sample(Instrument::low_res());
        let e = to_bytes(&syn, Format::FitsImage, Medium::Vacuum).unwrap_err();
        assert_eq!(e.kind(), io::ErrorKind::InvalidInput);
        assert!(to_bytes(&syn, Format::FitsImage, Medium::Air).is_ok());
    }

    #[test]
    fn air_text_holds_air_wavelengths() {
        let syn = sample(Instrument::wide());
        let b = String::from_utf8(to_bytes(&syn, Format::Csv, Medium::Air).unwrap()).unwrap();
        assert!(b.contains("# medium: air\n"));
        let first = b
            .lines()
            .find(|l| l.starts_with(|c: char| c.is_ascii_digit()))
            .unwrap();
        let w: f64 = first.split(',').next().unwrap().parse().unwrap();
        let expect = vacuum_to_air(syn.spectrum.wave[0]);
        assert!((w - expect).abs() < 6e-5, "{w} vs {expect}");
    }

    #[test]
    fn six_significant_digits_in_the_everyday_range() {
        assert_eq!(sig6(12.3456789), "12.3457");
        assert_eq!(sig6(-0.00123456789), "-0.00123457");
        assert_eq!(sig6(1.5e-20), "1.50000e-20");
        assert_eq!(sig6(0.0), "0");
    }
}
