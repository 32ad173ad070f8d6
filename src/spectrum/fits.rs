//! FITS spectra: a small, careful reader of the parts of the FITS Standard
//! (version 4.0) that 1-D spectra use.
//!
//! - Structure: 2880-byte blocks; headers of 80-character cards ending at
//!   `END`; data sizes from BITPIX, NAXISn, PCOUNT and GCOUNT, checked against
//!   the file length (and against [`MAX_PIXELS`]) before anything is
//!   allocated, so a truncated file or a header claiming a huge NAXIS is an
//!   error naming the HDU and keyword, never a huge allocation.
//! - Image HDUs (primary or `XTENSION = 'IMAGE'`): BITPIX 8, 16, 32, 64, -32,
//!   -64 with BSCALE/BZERO (and BLANK, which masks the pixel). The wavelength
//!   axis is axis 1 with a spectral WCS (Greisen et al. 2006, WCS Paper III):
//!   CTYPE1 `WAVE` (vacuum), `AWAV` (air), `WAVE-LOG`/`AWAV-LOG`, or the
//!   older `LINEAR` / no CTYPE1 (medium then undeclared); CRVAL1, CRPIX1, and
//!   CD1_1 or CDELT1 (times PC1_1); CUNIT1 Angstrom, nm, um or m. The
//!   `DC-FLAG = 1` convention (axis in log10 Angstrom) is honoured too.
//! - A 2-D image (axis 2 up to 16 rows) holds flux, error, sky... in rows.
//!   Rule: when keywords `ROWn` or `BANDIDn` (n = 1-based row) describe the
//!   rows, their first word picks the role (`flux`/`spectrum`, `error`/`sigma`,
//!   `variance`, `ivar`, `sky`/`background`; others such as `raw` are
//!   ignored); without them row 1 is flux, row 2 the 1-sigma error and row 3
//!   the sky, and further rows are ignored with a warning.
//! - Binary tables (`XTENSION = 'BINTABLE'`): wavelength, flux and
//!   error/variance/inverse-variance (and sky) columns are found by TTYPEn
//!   name (see [`super::columns`]), with units from TUNITn (or the name);
//!   either one row per pixel, or vector columns in one row (only the first
//!   row is read when there are several, with a warning).
//! - HDU search: the primary HDU if it holds data, then each extension in
//!   order; the first that yields a spectrum wins and its index is recorded.
//!   When none does, the first real error (e.g. a missing WCS keyword) is
//!   reported, else a summary of why each HDU was skipped.
//! - Metadata keywords are read from the spectrum's HDU, falling back to the
//!   primary header: OBJECT, RA/DEC (degrees, or sexagesimal strings with RA
//!   in hours), EQUINOX/EPOCH, DATE-OBS, MJD-OBS, TIMESYS, EXPTIME, OBSGEO-X/Y/Z,
//!   OBSGEO-L/B/H, SITELONG/SITELAT/SITEELEV, LONG-OBS/LAT-OBS/ALT-OBS
//!   (longitudes east-positive), OBSERVAT/TELESCOP, BUNIT, and the medium
//!   keywords MEDIUM or AIRORVAC (`air`/`vac`).

use super::assemble::{self, Raw, Uncertainty};
use super::columns::{self, Role};
use super::{Layout, Medium, Metadata, ReadOptions, Spectrum, SpectrumError};
use std::path::Path;

/// FITS block size in bytes.
const BLOCK: usize = 2880;
/// Card length.
const CARD: usize = 80;
/// Most header blocks per HDU accepted (36 cards each).
const MAX_HEADER_BLOCKS: usize = 2000;
/// Most HDUs examined.
const MAX_HDUS: usize = 1000;
/// Most pixels (wavelength samples) in one spectrum. A header claiming more is
/// refused before any allocation.
pub const MAX_PIXELS: u64 = 20_000_000;
/// Most rows in a 2-D spectrum image (flux, error, sky, ...).
const MAX_ROWS: u64 = 16;

/// A header value.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    /// Character string (quotes removed, doubled quotes undone, trailing blanks trimmed).
    Str(String),
    /// T or F.
    Logical(bool),
    /// Integer.
    Int(i64),
    /// Real number (E or D exponent).
    Float(f64),
    /// Anything else (complex, or unparsable): kept as text.
    Other(String),
}

impl Value {
    fn as_f64(&self) -> Option<f64> {
        match self {
            Value::Int(i) => Some(*i as f64),
            Value::Float(f) => Some(*f),
            _ => None,
        }
    }
}

/// A parsed header: keyword -> value, in order (first occurrence wins).
#[derive(Debug, Clone, Default)]
pub struct Header {
    cards: Vec<(String, Value)>,
}

impl Header {
    /// The value of `key`, if present with a value.
    pub fn get(&self, key: &str) -> Option<&Value> {
        self.cards.iter().find(|(k, _)| k == key).map(|(_, v)| v)
    }
}

/// One HDU: its header and where its data lie in the file.
#[derive(Debug, Clone)]
struct Hdu {
    index: usize,
    header: Header,
    data_start: usize,
    data_len: usize,
}

/// The error context for one file.
struct Ctx<'a> {
    path: &'a Path,
}

impl Ctx<'_> {
    fn err(&self, hdu: usize, key: Option<&str>, message: impl Into<String>) -> SpectrumError {
        let place = match key {
            Some(k) => format!("HDU {hdu}, keyword {k}"),
            None => format!("HDU {hdu}"),
        };
        SpectrumError::Malformed {
            path: self.path.to_path_buf(),
            place,
            message: message.into(),
        }
    }

    fn int(&self, h: &Hdu, key: &str) -> Result<Option<i64>, SpectrumError> {
        match h.header.get(key) {
            None => Ok(None),
            Some(Value::Int(i)) => Ok(Some(*i)),
            Some(Value::Float(f)) if f.fract() == 0.0 && f.abs() < 9.0e15 => Ok(Some(*f as i64)),
            Some(v) => Err(self.err(
                h.index,
                Some(key),
                format!("expected an integer, found {}", show(v)),
            )),
        }
    }

    fn req_int(&self, h: &Hdu, key: &str) -> Result<i64, SpectrumError> {
        self.int(h, key)?
            .ok_or_else(|| self.err(h.index, Some(key), "missing (required)"))
    }

    fn float(&self, h: &Hdu, key: &str) -> Result<Option<f64>, SpectrumError> {
        match h.header.get(key) {
            None => Ok(None),
            Some(v) => match v.as_f64() {
                Some(f) if f.is_finite() => Ok(Some(f)),
                _ => Err(self.err(
                    h.index,
                    Some(key),
                    format!("expected a number, found {}", show(v)),
                )),
            },
        }
    }

    fn string(&self, h: &Hdu, key: &str) -> Option<String> {
        match h.header.get(key) {
            Some(Value::Str(s)) => Some(s.clone()),
            _ => None,
        }
    }
}

fn show(v: &Value) -> String {
    let s = match v {
        Value::Str(s) => format!("'{s}'"),
        Value::Logical(b) => if *b { "T" } else { "F" }.to_string(),
        Value::Int(i) => i.to_string(),
        Value::Float(f) => f.to_string(),
        Value::Other(o) => o.clone(),
    };
    crate::text::clean(&s)
}

/// Parse the value field of a card (columns 11-80 when columns 9-10 are `= `).
fn parse_value(field: &[u8]) -> Option<Value> {
    let text: String = field.iter().map(|&b| b as char).collect();
    let t = text.trim_start();
    if let Some(rest) = t.strip_prefix('\'') {
        let mut out = String::new();
        let mut chars = rest.chars().peekable();
        while let Some(c) = chars.next() {
            if c == '\'' {
                if chars.peek() == Some(&'\'') {
                    chars.next();
                    out.push('\'');
                } else {
                    break;
                }
            } else {
                out.push(c);
            }
        }
        return Some(Value::Str(out.trim_end().to_string()));
    }
    let v = t.split('/').next().unwrap_or("").trim();
    if v.is_empty() {
        return None;
    }
    Some(match v {
        "T" => Value::Logical(true),
        "F" => Value::Logical(false),
        _ => {
            if let Ok(i) = v.parse::<i64>() {
                Value::Int(i)
            } else if let Ok(f) = v.replace(['D', 'd'], "E").parse::<f64>() {
                Value::Float(f)
            } else {
                Value::Other(v.to_string())
            }
        }
    })
}

/// Parse one header starting at `start`; returns the header and the offset
/// just after it (block aligned).
fn parse_header(
    ctx: &Ctx,
    bytes: &[u8],
    start: usize,
    index: usize,
) -> Result<(Header, usize), SpectrumError> {
    let mut header = Header::default();
    let mut pos = start;
    for _ in 0..MAX_HEADER_BLOCKS {
        if pos + BLOCK > bytes.len() {
            return Err(ctx.err(
                index,
                None,
                format!(
                    "truncated: the header ends without END after {} bytes (file is {} bytes)",
                    bytes.len() - start,
                    bytes.len()
                ),
            ));
        }
        for card in bytes[pos..pos + BLOCK].chunks_exact(CARD) {
            if card.iter().any(|&b| !(0x20..=0x7e).contains(&b)) {
                return Err(ctx.err(
                    index,
                    None,
                    format!(
                        "header card {} holds bytes that are not printable ASCII: not a FITS header",
                        header.cards.len() + 1
                    ),
                ));
            }
            let key: String = card[..8].iter().map(|&b| b as char).collect();
            let key = key.trim_end().to_string();
            if key == "END" {
                return Ok((header, pos + BLOCK));
            }
            if &card[8..10] == b"= "
                && let Some(v) = parse_value(&card[10..])
            {
                header.cards.push((key, v));
            }
        }
        pos += BLOCK;
    }
    Err(ctx.err(
        index,
        None,
        format!("header longer than {MAX_HEADER_BLOCKS} blocks without END"),
    ))
}

/// Size in bytes of the data of an HDU, from its header, with overflow and
/// size checks.
fn data_size(ctx: &Ctx, h: &Hdu) -> Result<u64, SpectrumError> {
    let bitpix = ctx.req_int(h, "BITPIX")?;
    let naxis = ctx.req_int(h, "NAXIS")?;
    if !(0..=999).contains(&naxis) {
        return Err(ctx.err(h.index, Some("NAXIS"), format!("{naxis} is not 0..999")));
    }
    if naxis == 0 {
        return Ok(0);
    }
    let mut n: u64 = 1;
    for i in 1..=naxis {
        let key = format!("NAXIS{i}");
        let v = ctx.req_int(h, &key)?;
        if v < 0 {
            return Err(ctx.err(h.index, Some(&key), format!("negative axis length {v}")));
        }
        n = n
            .checked_mul(v as u64)
            .ok_or_else(|| ctx.err(h.index, Some(&key), "axis lengths overflow"))?;
    }
    let pcount = ctx.int(h, "PCOUNT")?.unwrap_or(0);
    let gcount = ctx.int(h, "GCOUNT")?.unwrap_or(1);
    if pcount < 0 || gcount < 0 {
        return Err(ctx.err(h.index, Some("PCOUNT"), "negative PCOUNT or GCOUNT"));
    }
    let bytes = (bitpix.unsigned_abs() / 8)
        .checked_mul(gcount as u64)
        .and_then(|x| x.checked_mul(n.checked_add(pcount as u64)?))
        .ok_or_else(|| ctx.err(h.index, Some("NAXIS"), "data size overflows"))?;
    Ok(bytes)
}

/// Split the file into HDUs (headers parsed, data located, sizes checked).
fn parse_hdus(ctx: &Ctx, bytes: &[u8]) -> Result<(Vec<Hdu>, Vec<String>), SpectrumError> {
    let mut hdus = Vec::new();
    let mut warnings = Vec::new();
    let mut pos = 0usize;
    while pos < bytes.len() && hdus.len() < MAX_HDUS {
        let index = hdus.len();
        if index > 0 {
            // Anything after the last HDU that is not an extension is ignored.
            if bytes.len() - pos < BLOCK || !bytes[pos..].starts_with(b"XTENSION") {
                warnings.push(format!(
                    "{} bytes after HDU {} are not a FITS extension; ignored",
                    bytes.len() - pos,
                    index - 1
                ));
                break;
            }
        }
        let (header, data_start) = parse_header(ctx, bytes, pos, index)?;
        let mut hdu = Hdu {
            index,
            header,
            data_start,
            data_len: 0,
        };
        if index == 0 {
            match hdu.header.get("SIMPLE") {
                Some(Value::Logical(true)) => {}
                _ => {
                    return Err(ctx.err(
                        0,
                        Some("SIMPLE"),
                        "not T: the file does not claim to conform to the FITS standard",
                    ));
                }
            }
        }
        let size = data_size(ctx, &hdu)?;
        let available = (bytes.len() - data_start) as u64;
        if size > available {
            return Err(ctx.err(
                index,
                None,
                format!(
                    "truncated: the header promises {size} data bytes but only {available} remain"
                ),
            ));
        }
        hdu.data_len = size as usize;
        let padded = size.div_ceil(BLOCK as u64) * BLOCK as u64;
        pos = data_start.saturating_add(padded.min(available) as usize);
        hdus.push(hdu);
    }
    Ok((hdus, warnings))
}

/// Outcome of trying one HDU.
enum Try {
    Found(Box<Spectrum>),
    /// Not a spectrum, for a harmless reason (no data, a table with no flux column...).
    Skip(String),
    /// Looked like the spectrum but is broken.
    Broken(SpectrumError),
}

/// Read a FITS spectrum from `bytes` (the content of `path`).
pub fn read_bytes(
    path: &Path,
    bytes: &[u8],
    opts: &ReadOptions,
) -> Result<Spectrum, SpectrumError> {
    let ctx = Ctx { path };
    let (hdus, warnings) = parse_hdus(&ctx, bytes)?;
    let Some(primary) = hdus.first() else {
        return Err(ctx.err(0, None, "no HDU"));
    };
    let mut skipped = Vec::new();
    let mut first_broken = None;
    for h in &hdus {
        let outcome = try_hdu(&ctx, bytes, h, primary, opts, &warnings);
        match outcome {
            Try::Found(s) => return Ok(*s),
            Try::Skip(why) => skipped.push(format!("HDU {}: {why}", h.index)),
            Try::Broken(e) => {
                if first_broken.is_none() {
                    first_broken = Some(e);
                }
            }
        }
    }
    if let Some(e) = first_broken {
        return Err(e);
    }
    Err(SpectrumError::Malformed {
        path: path.to_path_buf(),
        place: "every HDU".into(),
        message: format!("no HDU holds a spectrum ({})", skipped.join("; ")),
    })
}

fn try_hdu(
    ctx: &Ctx,
    bytes: &[u8],
    h: &Hdu,
    primary: &Hdu,
    opts: &ReadOptions,
    warnings: &[String],
) -> Try {
    let kind = if h.index == 0 {
        "IMAGE".to_string()
    } else {
        ctx.string(h, "XTENSION")
            .unwrap_or_default()
            .trim()
            .to_string()
    };
    let result = match kind.as_str() {
        "IMAGE" => {
            let naxis = match ctx.int(h, "NAXIS") {
                Ok(n) => n.unwrap_or(0),
                Err(e) => return Try::Broken(e),
            };
            if naxis == 0 || h.data_len == 0 {
                return Try::Skip("NAXIS = 0 (no data)".into());
            }
            read_image(ctx, bytes, h)
        }
        "BINTABLE" => match read_table(ctx, bytes, h) {
            Ok(None) => return Try::Skip("binary table without a flux column".into()),
            Ok(Some(r)) => Ok(r),
            Err(e) => Err(e),
        },
        other => {
            return Try::Skip(format!(
                "extension type '{}' not read",
                crate::text::clean(other)
            ));
        }
    };
    let (raw, mut meta, unit_note) = match result {
        Ok(r) => r,
        Err(e) => return Try::Broken(e),
    };
    meta.warnings.extend(warnings.iter().cloned());
    if let Some(n) = unit_note {
        meta.warnings.push(n);
    }
    fill_metadata(ctx, h, primary, &mut meta);
    meta.hdu = Some(h.index);
    let index = h.index;
    let layout_row = meta.layout == Some(Layout::FitsTable);
    let place = move |i: usize| {
        if i == usize::MAX {
            format!("HDU {index}")
        } else if layout_row {
            format!("HDU {index}, element {}", i + 1)
        } else {
            format!("HDU {index}, pixel {}", i + 1)
        }
    };
    match assemble::finish(ctx.path, raw, meta, opts, &place) {
        Ok(s) => Try::Found(Box::new(s)),
        Err(e) => Try::Broken(e),
    }
}

type Parsed = (Raw, Metadata, Option<String>);

/// Decode `count` big-endian elements of BITPIX `bitpix` from `data`, applying
/// `scale`/`zero` and masking `blank` (integer types only).
fn decode(data: &[u8], bitpix: i64, scale: f64, zero: f64, blank: Option<i64>) -> Vec<(f64, bool)> {
    let conv = |raw: i64| -> (f64, bool) {
        if blank == Some(raw) {
            (f64::NAN, true)
        } else {
            (zero + scale * raw as f64, false)
        }
    };
    match bitpix {
        8 => data.iter().map(|&b| conv(b as i64)).collect(),
        16 => data
            .chunks_exact(2)
            .map(|c| conv(i16::from_be_bytes([c[0], c[1]]) as i64))
            .collect(),
        32 => data
            .chunks_exact(4)
            .map(|c| conv(i32::from_be_bytes([c[0], c[1], c[2], c[3]]) as i64))
            .collect(),
        64 => data
            .chunks_exact(8)
            .map(|c| {
                conv(i64::from_be_bytes([
                    c[0], c[1], c[2], c[3], c[4], c[5], c[6], c[7],
                ]))
            })
            .collect(),
        -32 => data
            .chunks_exact(4)
            .map(|c| {
                let v = f32::from_be_bytes([c[0], c[1], c[2], c[3]]) as f64;
                (zero + scale * v, false)
            })
            .collect(),
        _ => data
            .chunks_exact(8)
            .map(|c| {
                let v = f64::from_be_bytes([c[0], c[1], c[2], c[3], c[4], c[5], c[6], c[7]]);
                (zero + scale * v, false)
            })
            .collect(),
    }
}

fn read_image(ctx: &Ctx, bytes: &[u8], h: &Hdu) -> Result<Parsed, SpectrumError> {
    let i = h.index;
    let bitpix = ctx.req_int(h, "BITPIX")?;
    if !matches!(bitpix, 8 | 16 | 32 | 64 | -32 | -64) {
        return Err(ctx.err(
            i,
            Some("BITPIX"),
            format!("unsupported value {bitpix} (8, 16, 32, 64, -32 or -64)"),
        ));
    }
    let naxis = ctx.req_int(h, "NAXIS")?;
    let n1 = ctx.req_int(h, "NAXIS1")? as u64;
    if n1 > MAX_PIXELS {
        return Err(ctx.err(
            i,
            Some("NAXIS1"),
            format!("{n1} pixels is more than the {MAX_PIXELS} accepted"),
        ));
    }
    let mut rows: u64 = 1;
    for a in 2..=naxis {
        let key = format!("NAXIS{a}");
        let v = ctx.req_int(h, &key)? as u64;
        rows = rows.saturating_mul(v);
        if rows > MAX_ROWS {
            return Err(ctx.err(
                i,
                Some(&key),
                format!(
                    "an image of {n1} x {rows}+ pixels is not a 1-D spectrum (at most {MAX_ROWS} rows of flux, error, sky...)"
                ),
            ));
        }
    }
    if rows == 0 {
        return Err(ctx.err(i, Some("NAXIS2"), "zero rows: no data"));
    }
    let n = n1 as usize;
    let elem = (bitpix.unsigned_abs() / 8) as usize;
    if (n as u64) * rows * (elem as u64) > h.data_len as u64 {
        return Err(ctx.err(i, Some("GCOUNT"), "image is larger than its data"));
    }
    let scale = ctx.float(h, "BSCALE")?.unwrap_or(1.0);
    let zero = ctx.float(h, "BZERO")?.unwrap_or(0.0);
    let blank = if bitpix > 0 {
        ctx.int(h, "BLANK")?
    } else {
        None
    };
    let data = &bytes[h.data_start..h.data_start + h.data_len];
    let mut meta = Metadata {
        layout: Some(Layout::FitsImage),
        ..Metadata::default()
    };

    // Rows and their roles.
    let mut row_roles: Vec<Option<Role>> = Vec::new();
    let mut described = false;
    for r in 1..=rows as usize {
        let d = ctx
            .string(h, &format!("ROW{r}"))
            .or_else(|| ctx.string(h, &format!("BANDID{r}")));
        if let Some(d) = d {
            described = true;
            let first = d
                .trim()
                .split(|c: char| !c.is_ascii_alphanumeric() && c != '_')
                .next()
                .unwrap_or("")
                .to_ascii_lowercase();
            let role = match first.as_str() {
                "spectrum" | "flux" | "object" | "signal" | "data" => Some(Role::Flux),
                "background" | "sky" => Some(Role::Sky),
                "sigma" | "error" | "err" | "uncertainty" | "noise" | "stddev" => Some(Role::Error),
                "variance" | "var" => Some(Role::Variance),
                "ivar" | "invvar" | "inverse" | "weight" => Some(Role::Ivar),
                other => columns::role_of(other),
            };
            row_roles.push(role);
        } else {
            row_roles.push(None);
        }
    }
    if !described {
        row_roles = (0..rows as usize)
            .map(|r| match r {
                0 => Some(Role::Flux),
                1 => Some(Role::Error),
                2 => Some(Role::Sky),
                _ => None,
            })
            .collect();
        if rows > 3 {
            meta.warnings.push(format!(
                "HDU {i}: {rows} rows; rows 1-3 read as flux, error, sky, the rest ignored"
            ));
        } else if rows > 1 {
            meta.warnings.push(format!(
                "HDU {i}: {rows} rows without ROWn/BANDIDn keywords; read as flux{}{}",
                if rows >= 2 { ", error" } else { "" },
                if rows >= 3 { ", sky" } else { "" }
            ));
        }
    }
    let row = |r: usize| {
        decode(
            &data[r * n * elem..(r + 1) * n * elem],
            bitpix,
            scale,
            zero,
            blank,
        )
    };
    let pick = |want: &[Role]| {
        row_roles
            .iter()
            .position(|x| x.is_some_and(|x| want.contains(&x)))
    };
    let Some(fr) = pick(&[Role::Flux]) else {
        return Err(ctx.err(i, Some("ROW1"), "no row is described as the flux"));
    };
    let fl = row(fr);
    let bad: Vec<bool> = fl.iter().map(|(_, b)| *b).collect();
    let flux: Vec<f64> = fl.into_iter().map(|(v, _)| v).collect();
    let uncertainty = pick(&[Role::Error, Role::Variance, Role::Ivar]).map(|r| {
        let v: Vec<f64> = row(r).into_iter().map(|(v, _)| v).collect();
        match row_roles[r] {
            Some(Role::Variance) => Uncertainty::Variance(v),
            Some(Role::Ivar) => Uncertainty::Ivar(v),
            _ => Uncertainty::Sigma(v),
        }
    });
    let sky = pick(&[Role::Sky]).map(|r| row(r).into_iter().map(|(v, _)| v).collect());

    // Spectral WCS of axis 1.
    let ctype = ctx
        .string(h, "CTYPE1")
        .map(|s| s.trim().to_ascii_uppercase());
    let (medium, log_kind) = match ctype.as_deref() {
        Some("WAVE") => (Some(Medium::Vacuum), Log::None),
        Some("AWAV") => (Some(Medium::Air), Log::None),
        Some("WAVE-LOG") => (Some(Medium::Vacuum), Log::Natural),
        Some("AWAV-LOG") => (Some(Medium::Air), Log::Natural),
        None | Some("") | Some("LINEAR") | Some("LAMBDA") | Some("WAVELENGTH") => (None, Log::None),
        Some(other) => {
            return Err(ctx.err(
                i,
                Some("CTYPE1"),
                format!(
                    "spectral axis type '{}' is not supported (WAVE, AWAV, WAVE-LOG, AWAV-LOG or LINEAR)",
                    crate::text::clean(other)
                ),
            ));
        }
    };
    let medium = medium.or_else(|| medium_keyword(ctx, h));
    let log_kind = if log_kind == Log::None && ctx.int(h, "DC-FLAG")? == Some(1) {
        Log::Decimal
    } else {
        log_kind
    };
    let crval = ctx.float(h, "CRVAL1")?.ok_or_else(|| {
        ctx.err(
            i,
            Some("CRVAL1"),
            "missing: no wavelength at the reference pixel",
        )
    })?;
    let crpix = ctx.float(h, "CRPIX1")?.ok_or_else(|| {
        ctx.err(
            i,
            Some("CRPIX1"),
            "missing: no reference pixel for the wavelength axis",
        )
    })?;
    let delta = match ctx.float(h, "CD1_1")? {
        Some(cd) => cd,
        None => {
            let cdelt = ctx.float(h, "CDELT1")?.ok_or_else(|| {
                ctx.err(
                    i,
                    Some("CDELT1"),
                    "missing (and no CD1_1): no wavelength step",
                )
            })?;
            cdelt * ctx.float(h, "PC1_1")?.unwrap_or(1.0)
        }
    };
    if delta == 0.0 {
        return Err(ctx.err(
            i,
            Some(if h.header.get("CD1_1").is_some() {
                "CD1_1"
            } else {
                "CDELT1"
            }),
            "wavelength step is zero",
        ));
    }
    let cunit = ctx.string(h, "CUNIT1");
    let mut unit_note = None;
    let (unit_factor, log10) = match log_kind {
        Log::Decimal => (1.0, true),
        _ => match &cunit {
            Some(u) => (
                columns::wave_unit_factor(u).ok_or_else(|| {
                    ctx.err(
                        i,
                        Some("CUNIT1"),
                        format!(
                            "unknown wavelength unit '{}' (Angstrom, nm, um or m)",
                            crate::text::clean(u)
                        ),
                    )
                })?,
                false,
            ),
            None => {
                let mut w = Vec::new();
                let f = super::text::guess_unit(&[crval.abs()], &mut w);
                unit_note = w.pop().map(|m| format!("HDU {i}: CUNIT1 missing; {m}"));
                (f, false)
            }
        },
    };
    let wave: Vec<f64> = (0..n)
        .map(|k| {
            let x = delta * ((k + 1) as f64 - crpix);
            match log_kind {
                Log::None => crval + x,
                Log::Natural => crval * (x / crval).exp(),
                Log::Decimal => crval + x,
            }
        })
        .collect();
    meta.wave_unit = Some(match (&cunit, log_kind) {
        (_, Log::Decimal) => "log10(Angstrom)".into(),
        (Some(u), _) => crate::text::clean(u),
        (None, _) => "unstated".into(),
    });
    Ok((
        Raw {
            wave,
            unit_factor,
            log10,
            flux,
            uncertainty,
            sky,
            bad: Some(bad),
            medium_declared: medium,
        },
        meta,
        unit_note,
    ))
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Log {
    None,
    Natural,
    Decimal,
}

fn medium_keyword(ctx: &Ctx, h: &Hdu) -> Option<Medium> {
    for k in ["MEDIUM", "AIRORVAC", "WAVEMED", "WAV_MED"] {
        if let Some(s) = ctx.string(h, k)
            && let Some(m) = super::text::parse_medium(&s)
        {
            return Some(m);
        }
    }
    match h.header.get("VACUUM") {
        Some(Value::Logical(true)) => Some(Medium::Vacuum),
        Some(Value::Logical(false)) => Some(Medium::Air),
        _ => None,
    }
}

/// One binary-table column.
#[derive(Debug, Clone)]
struct Column {
    name: String,
    role: Option<Role>,
    unit: Option<String>,
    code: u8,
    repeat: usize,
    offset: usize,
    scale: f64,
    zero: f64,
    null: Option<i64>,
    number: usize,
}

fn element_size(code: u8) -> Option<usize> {
    Some(match code {
        b'L' | b'B' | b'A' => 1,
        b'I' => 2,
        b'J' | b'E' => 4,
        b'K' | b'D' | b'C' | b'P' => 8,
        b'M' | b'Q' => 16,
        b'X' => 0,
        _ => return None,
    })
}

fn read_table(ctx: &Ctx, bytes: &[u8], h: &Hdu) -> Result<Option<Parsed>, SpectrumError> {
    let i = h.index;
    if ctx.req_int(h, "BITPIX")? != 8 {
        return Err(ctx.err(i, Some("BITPIX"), "a binary table must have BITPIX = 8"));
    }
    if ctx.req_int(h, "NAXIS")? != 2 {
        return Err(ctx.err(i, Some("NAXIS"), "a binary table must have NAXIS = 2"));
    }
    let row_len = ctx.req_int(h, "NAXIS1")? as usize;
    let nrows = ctx.req_int(h, "NAXIS2")? as usize;
    if (row_len as u64).saturating_mul(nrows as u64) > h.data_len as u64 {
        return Err(ctx.err(i, Some("NAXIS2"), "table is larger than its data"));
    }
    let tfields = ctx.req_int(h, "TFIELDS")?;
    if !(0..=999).contains(&tfields) {
        return Err(ctx.err(i, Some("TFIELDS"), format!("{tfields} is not 0..999")));
    }
    let mut cols = Vec::new();
    let mut offset = 0usize;
    for c in 1..=tfields as usize {
        let fkey = format!("TFORM{c}");
        let form = ctx
            .string(h, &fkey)
            .ok_or_else(|| ctx.err(i, Some(&fkey), "missing (required)"))?;
        let form = form.trim();
        let digits: String = form.chars().take_while(|c| c.is_ascii_digit()).collect();
        let repeat: usize = if digits.is_empty() {
            1
        } else {
            digits
                .parse()
                .map_err(|_| ctx.err(i, Some(&fkey), format!("bad repeat count in '{form}'")))?
        };
        let code = form.as_bytes().get(digits.len()).copied().unwrap_or(b'?');
        let size = element_size(code).ok_or_else(|| {
            ctx.err(
                i,
                Some(&fkey),
                format!("unknown data type '{}'", crate::text::clean(form)),
            )
        })?;
        let width = if code == b'X' {
            repeat.div_ceil(8)
        } else {
            repeat
                .checked_mul(size)
                .ok_or_else(|| ctx.err(i, Some(&fkey), "column width overflows"))?
        };
        let name = ctx.string(h, &format!("TTYPE{c}")).unwrap_or_default();
        let (base, name_unit) = columns::split_unit(&name);
        let unit = ctx
            .string(h, &format!("TUNIT{c}"))
            .filter(|u| !u.trim().is_empty())
            .or(name_unit);
        let role = if name.trim().eq_ignore_ascii_case("awav") {
            Some(Role::WaveAir)
        } else {
            columns::role_of(&base)
        };
        cols.push(Column {
            name: crate::text::clean(&name),
            role,
            unit,
            code,
            repeat,
            offset,
            scale: ctx.float(h, &format!("TSCAL{c}"))?.unwrap_or(1.0),
            zero: ctx.float(h, &format!("TZERO{c}"))?.unwrap_or(0.0),
            null: ctx.int(h, &format!("TNULL{c}"))?,
            number: c,
        });
        offset = offset
            .checked_add(width)
            .ok_or_else(|| ctx.err(i, Some(&fkey), "row width overflows"))?;
    }
    if offset != row_len {
        return Err(ctx.err(
            i,
            Some("NAXIS1"),
            format!("row is {row_len} bytes but the columns add up to {offset}"),
        ));
    }
    let find = |want: &[Role]| {
        cols.iter()
            .find(|c| c.role.is_some_and(|r| want.contains(&r)))
            .cloned()
    };
    let Some(fcol) = find(&[Role::Flux]) else {
        return Ok(None);
    };
    let Some(wcol) = find(&[Role::Wave, Role::WaveAir, Role::WaveVacuum, Role::LogWave]) else {
        return Err(ctx.err(
            i,
            Some("TTYPEn"),
            format!(
                "flux column '{}' found but no wavelength column (expected a name like WAVELENGTH, WAVE, LAMBDA, LOGLAM)",
                fcol.name
            ),
        ));
    };
    let ucol = find(&[Role::Error, Role::Variance, Role::Ivar]);
    let scol = find(&[Role::Sky]);
    let mut meta = Metadata {
        layout: Some(Layout::FitsTable),
        ..Metadata::default()
    };
    let vector = wcol.repeat > 1;
    let n = if vector { wcol.repeat } else { nrows };
    if n as u64 > MAX_PIXELS {
        return Err(ctx.err(
            i,
            Some(if vector { "TFORMn" } else { "NAXIS2" }),
            format!("{n} pixels is more than the {MAX_PIXELS} accepted"),
        ));
    }
    if vector && nrows > 1 {
        meta.warnings.push(format!(
            "HDU {i}: {nrows} rows of vector columns; only row 1 read"
        ));
    }
    if vector && nrows == 0 {
        return Err(ctx.err(i, Some("NAXIS2"), "table has no rows"));
    }
    let data = &bytes[h.data_start..h.data_start + h.data_len];
    let read_col = |c: &Column| -> Result<Vec<(f64, bool)>, SpectrumError> {
        if c.repeat != wcol.repeat {
            return Err(ctx.err(
                i,
                Some(&format!("TFORM{}", c.number)),
                format!(
                    "column '{}' has {} elements per row but the wavelength column has {}",
                    c.name, c.repeat, wcol.repeat
                ),
            ));
        }
        let size = element_size(c.code).unwrap_or(0);
        let bitpix = match c.code {
            b'B' => 8,
            b'I' => 16,
            b'J' => 32,
            b'K' => 64,
            b'E' => -32,
            b'D' => -64,
            _ => {
                return Err(ctx.err(
                    i,
                    Some(&format!("TFORM{}", c.number)),
                    format!(
                        "column '{}' has type '{}', not a number type (B, I, J, K, E, D)",
                        c.name, c.code as char
                    ),
                ));
            }
        };
        let mut out = Vec::with_capacity(n);
        if vector {
            let s = c.offset;
            out.extend(decode(
                &data[s..s + n * size],
                bitpix,
                c.scale,
                c.zero,
                c.null,
            ));
        } else {
            for r in 0..nrows {
                let s = r * row_len + c.offset;
                out.extend(decode(&data[s..s + size], bitpix, c.scale, c.zero, c.null));
            }
        }
        Ok(out)
    };
    let plain = |v: Vec<(f64, bool)>| v.into_iter().map(|(x, _)| x).collect::<Vec<f64>>();
    let wave = plain(read_col(&wcol)?);
    let fl = read_col(&fcol)?;
    let bad: Vec<bool> = fl.iter().map(|(_, b)| *b).collect();
    let flux = plain(fl);
    let uncertainty = match &ucol {
        Some(c) => {
            let v = plain(read_col(c)?);
            Some(match c.role {
                Some(Role::Variance) => Uncertainty::Variance(v),
                Some(Role::Ivar) => Uncertainty::Ivar(v),
                _ => Uncertainty::Sigma(v),
            })
        }
        None => None,
    };
    let sky = match &scol {
        Some(c) => Some(plain(read_col(c)?)),
        None => None,
    };
    let log10 = wcol.role == Some(Role::LogWave);
    let mut unit_note = None;
    let unit_factor = if log10 {
        1.0
    } else {
        match &wcol.unit {
            Some(u) => columns::wave_unit_factor(u).ok_or_else(|| {
                ctx.err(
                    i,
                    Some(&format!("TUNIT{}", wcol.number)),
                    format!(
                        "unknown wavelength unit '{}' (Angstrom, nm, um or m)",
                        crate::text::clean(u)
                    ),
                )
            })?,
            None => {
                let mut w = Vec::new();
                let f = super::text::guess_unit(&wave, &mut w);
                unit_note = w
                    .pop()
                    .map(|m| format!("HDU {i}: no TUNIT{} for the wavelengths; {m}", wcol.number));
                f
            }
        }
    };
    meta.wave_unit = Some(if log10 {
        "log10(Angstrom)".into()
    } else {
        wcol.unit
            .as_deref()
            .map(crate::text::clean)
            .unwrap_or_else(|| "unstated".into())
    });
    if let Some(u) = &fcol.unit {
        meta.flux_unit = Some(crate::text::clean(u));
    }
    let medium = match wcol.role {
        Some(Role::WaveAir) => Some(Medium::Air),
        Some(Role::WaveVacuum) | Some(Role::LogWave) => Some(Medium::Vacuum),
        _ => medium_keyword(ctx, h),
    };
    Ok(Some((
        Raw {
            wave,
            unit_factor,
            log10,
            flux,
            uncertainty,
            sky,
            bad: Some(bad),
            medium_declared: medium,
        },
        meta,
        unit_note,
    )))
}

/// Parse an angle: a number is degrees; a sexagesimal string (`12:34:56.7`,
/// `12 34 56.7`, `-05:06:07`) is hours for right ascension (`is_ra`) and
/// degrees otherwise.
pub fn parse_angle(v: &str, is_ra: bool) -> Option<f64> {
    let t = v.trim();
    if let Ok(x) = t.parse::<f64>() {
        return x.is_finite().then_some(x);
    }
    let parts: Vec<&str> = t
        .split([':', ' ', 'h', 'm', 's', 'd'])
        .filter(|p| !p.is_empty())
        .collect();
    if parts.is_empty() || parts.len() > 3 {
        return None;
    }
    let negative = t.starts_with('-');
    let mut total = 0.0;
    for (k, p) in parts.iter().enumerate() {
        let x: f64 = p.trim_start_matches(['-', '+']).parse().ok()?;
        total += x / 60f64.powi(k as i32);
    }
    let total = if negative { -total } else { total };
    let deg = if is_ra { total * 15.0 } else { total };
    deg.is_finite().then_some(deg)
}

fn fill_metadata(ctx: &Ctx, h: &Hdu, primary: &Hdu, meta: &mut Metadata) {
    let get = |k: &str| h.header.get(k).or_else(|| primary.header.get(k));
    let num = |k: &str| get(k).and_then(Value::as_f64).filter(|x| x.is_finite());
    let text = |k: &str| match get(k) {
        Some(Value::Str(s)) => Some(s.clone()),
        Some(v @ (Value::Int(_) | Value::Float(_))) => Some(show(v)),
        _ => None,
    };
    let angle = |k: &str, ra: bool| match get(k) {
        Some(Value::Str(s)) => parse_angle(s, ra),
        Some(v) => v.as_f64().filter(|x| x.is_finite()),
        None => None,
    };
    let _ = ctx;
    meta.target = text("OBJECT").unwrap_or_default();
    meta.ra_deg = angle("RA", true).or_else(|| angle("OBJRA", true));
    meta.dec_deg = angle("DEC", false).or_else(|| angle("OBJDEC", false));
    meta.equinox = num("EQUINOX").or_else(|| num("EPOCH"));
    meta.date_obs = text("DATE-OBS").map(|s| crate::text::clean(&s));
    meta.mjd_obs = num("MJD-OBS");
    meta.time_scale = text("TIMESYS").map(|s| crate::text::clean(&s));
    meta.exposure_s = num("EXPTIME").or_else(|| num("EXPOSURE"));
    if let (Some(x), Some(y), Some(z)) = (num("OBSGEO-X"), num("OBSGEO-Y"), num("OBSGEO-Z")) {
        meta.site.geocentric_m = Some([x, y, z]);
    }
    meta.site.longitude_deg = angle("OBSGEO-L", false)
        .or_else(|| angle("SITELONG", false))
        .or_else(|| angle("LONG-OBS", false));
    meta.site.latitude_deg = angle("OBSGEO-B", false)
        .or_else(|| angle("SITELAT", false))
        .or_else(|| angle("LAT-OBS", false));
    meta.site.height_m = num("OBSGEO-H")
        .or_else(|| num("SITEELEV"))
        .or_else(|| num("ALT-OBS"));
    meta.site.name = text("OBSERVAT")
        .or_else(|| text("TELESCOP"))
        .map(|s| crate::text::clean(&s));
    if meta.flux_unit.is_none() {
        meta.flux_unit = text("BUNIT").map(|s| crate::text::clean(&s));
    }
    for k in ["INSTRUME", "TELESCOP", "OBSERVAT", "AIRMASS", "OBSERVER"] {
        if let Some(v) = get(k) {
            meta.header.push((k.to_string(), show(v)));
        }
    }
}
