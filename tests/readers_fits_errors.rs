//! Broken FITS files: each is rejected with a message naming the HDU and the
//! keyword (or the problem), never a panic or a huge allocation.

use std::path::Path;
use zsift::spectrum::{ReadOptions, read_bytes};

/// Header cards (already formatted `KEY = value`) padded to 2880-byte blocks.
fn header(cards: &[&str]) -> Vec<u8> {
    let mut h = Vec::new();
    for c in cards.iter().chain(std::iter::once(&"END")) {
        let mut card = String::new();
        if let Some((k, v)) = c.split_once('=') {
            card.push_str(&format!("{:<8}= {}", k.trim(), v.trim()));
        } else {
            card.push_str(c);
        }
        assert!(card.len() <= 80);
        h.extend(format!("{card:<80}").bytes());
    }
    while h.len() % 2880 != 0 {
        h.push(b' ');
    }
    h
}

fn image(cards: &[&str], n: usize, bytes_per: usize) -> Vec<u8> {
    let mut f = header(cards);
    let mut data = vec![0u8; n * bytes_per];
    // float32 1.0 big-endian everywhere (or small integers): a usable spectrum.
    for c in data.chunks_mut(bytes_per) {
        if bytes_per == 4 {
            c.copy_from_slice(&1.0f32.to_be_bytes());
        } else {
            c[bytes_per - 1] = 1;
        }
    }
    f.extend(data);
    while f.len() % 2880 != 0 {
        f.push(0);
    }
    f
}

const GOOD: &[&str] = &[
    "SIMPLE = T",
    "BITPIX = -32",
    "NAXIS = 1",
    "NAXIS1 = 64",
    "CTYPE1 = 'WAVE    '",
    "CUNIT1 = 'Angstrom'",
    "CRVAL1 = 5000.0",
    "CRPIX1 = 1.0",
    "CDELT1 = 1.0",
];

fn with(replace: &str, value: Option<&str>) -> Vec<String> {
    let mut out: Vec<String> = GOOD
        .iter()
        .filter(|c| !c.starts_with(&format!("{replace} ")))
        .map(|c| c.to_string())
        .collect();
    if let Some(v) = value {
        out.insert(3, format!("{replace} = {v}"));
    }
    out
}

fn err_of(bytes: &[u8]) -> String {
    match read_bytes(Path::new("broken.fits"), bytes, &ReadOptions::default()) {
        Ok(_) => panic!("accepted"),
        Err(e) => e.to_string(),
    }
}

fn refs(v: &[String]) -> Vec<&str> {
    v.iter().map(String::as_str).collect()
}

#[test]
fn the_well_formed_helper_file_is_accepted() {
    // Guards the tests below: they fail for the reason they name, not another.
    let s = read_bytes(
        Path::new("ok.fits"),
        &image(GOOD, 64, 4),
        &ReadOptions::default(),
    )
    .expect("valid");
    assert_eq!(s.len(), 64);
    assert_eq!(s.wave[10], 5010.0);
}

#[test]
fn missing_wcs_keywords_are_named() {
    for key in ["CRVAL1", "CRPIX1", "CDELT1"] {
        let e = err_of(&image(&refs(&with(key, None)), 64, 4));
        assert!(e.contains(&format!("HDU 0, keyword {key}")), "{e}");
        assert!(e.contains("missing"), "{e}");
        assert!(e.starts_with("broken.fits"), "{e}");
    }
}

#[test]
fn unsupported_bitpix_and_spectral_types_are_named() {
    let e = err_of(&image(&refs(&with("BITPIX", Some("12"))), 64, 4));
    assert!(e.contains("keyword BITPIX") && e.contains("12"), "{e}");
    let e = err_of(&image(&refs(&with("CTYPE1", Some("'FREQ'"))), 64, 4));
    assert!(e.contains("keyword CTYPE1") && e.contains("FREQ"), "{e}");
    let e = err_of(&image(&refs(&with("CUNIT1", Some("'parsec'"))), 64, 4));
    assert!(e.contains("keyword CUNIT1"), "{e}");
}

#[test]
fn naxis_zero_without_extensions_is_rejected() {
    let e = err_of(&header(&["SIMPLE = T", "BITPIX = 8", "NAXIS = 0"]));
    assert!(e.contains("NAXIS = 0"), "{e}");
}

#[test]
fn a_truncated_file_is_rejected_naming_the_hdu() {
    let full = image(GOOD, 64, 4);
    let e = err_of(&full[..2880 + 100]);
    assert!(e.contains("HDU 0") && e.contains("truncated"), "{e}");
    let e = err_of(&full[..1000]);
    assert!(e.contains("HDU 0") && e.contains("truncated"), "{e}");
}

#[test]
fn a_huge_naxis_is_refused_before_allocating() {
    // 10^15 pixels claimed: refused from the header alone.
    let e = err_of(&image(
        &refs(&with("NAXIS1", Some("1000000000000000"))),
        64,
        4,
    ));
    assert!(e.contains("HDU 0"), "{e}");
    let e = err_of(&header(&[
        "SIMPLE = T",
        "BITPIX = -64",
        "NAXIS = 2",
        "NAXIS1 = 4294967296",
        "NAXIS2 = 4294967296",
    ]));
    assert!(e.contains("HDU 0"), "{e}");
}

#[test]
fn too_few_pixels_and_a_zero_step_are_rejected() {
    let e = err_of(&image(&refs(&with("NAXIS1", Some("8"))), 8, 4));
    assert!(e.contains("only 8 pixels"), "{e}");
    let e = err_of(&image(&refs(&with("CDELT1", Some("0.0"))), 64, 4));
    assert!(e.contains("keyword CDELT1") && e.contains("zero"), "{e}");
}

#[test]
fn a_large_image_is_not_taken_for_a_spectrum() {
    let e = err_of(&image(
        &[
            "SIMPLE = T",
            "BITPIX = 8",
            "NAXIS = 2",
            "NAXIS1 = 64",
            "NAXIS2 = 64",
            "CRVAL1 = 5000.0",
            "CRPIX1 = 1.0",
            "CDELT1 = 1.0",
        ],
        64 * 64,
        1,
    ));
    assert!(
        e.contains("keyword NAXIS2") && e.contains("not a 1-D spectrum"),
        "{e}"
    );
}

#[test]
fn garbage_after_simple_and_non_ascii_headers_are_rejected() {
    let mut bytes = b"SIMPLE  =                    T".to_vec();
    bytes.extend((0..5000u32).map(|i| (i * 131 % 251) as u8));
    let e = err_of(&bytes);
    assert!(e.contains("HDU 0"), "{e}");
    let e = err_of(&header(&["SIMPLE = F", "BITPIX = 8", "NAXIS = 0"]));
    assert!(e.contains("keyword SIMPLE"), "{e}");
}

#[test]
fn a_table_without_a_wavelength_column_is_named() {
    let mut f = header(&["SIMPLE = T", "BITPIX = 8", "NAXIS = 0", "EXTEND = T"]);
    f.extend(header(&[
        "XTENSION = 'BINTABLE'",
        "BITPIX = 8",
        "NAXIS = 2",
        "NAXIS1 = 4",
        "NAXIS2 = 32",
        "PCOUNT = 0",
        "GCOUNT = 1",
        "TFIELDS = 1",
        "TTYPE1 = 'FLUX'",
        "TFORM1 = 'E'",
    ]));
    let mut data = Vec::new();
    for _ in 0..32 {
        data.extend(1.0f32.to_be_bytes());
    }
    f.extend(&data);
    while f.len() % 2880 != 0 {
        f.push(0);
    }
    let e = err_of(&f);
    assert!(
        e.contains("HDU 1") && e.contains("no wavelength column"),
        "{e}"
    );
}
