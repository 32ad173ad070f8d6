//! Format detection by content, not by extension.
//!
//! FITS files start with the card `SIMPLE  =` (FITS Standard 4.0, section
//! 4.4.1.1); text spectra are UTF-8 without NUL bytes. Everything else
//! (compressed files, other binary formats) is refused with a message saying
//! what it looks like.

/// What a file's first bytes say it is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// FITS (primary header starts with `SIMPLE  =`).
    Fits,
    /// Delimited text.
    Text,
}

/// How many leading bytes are examined for text.
const SNIFF: usize = 8192;

/// Decide the format of `bytes`; `Err` says what the content looks like when
/// it is neither FITS nor text.
pub fn detect(bytes: &[u8]) -> Result<Format, String> {
    if bytes.starts_with(b"SIMPLE  =") || bytes.starts_with(b"SIMPLE =") {
        return Ok(Format::Fits);
    }
    if bytes.starts_with(&[0x1f, 0x8b]) {
        return Err("gzip-compressed data; decompress it first".into());
    }
    if bytes.starts_with(b"PK\x03\x04") {
        return Err("a zip archive".into());
    }
    if bytes.starts_with(b"\x89HDF") {
        return Err("an HDF5 file".into());
    }
    if bytes.starts_with(b"XTENSION") {
        return Err("a FITS extension without a primary header".into());
    }
    let head = &bytes[..bytes.len().min(SNIFF)];
    if head.contains(&0) {
        return Err("binary data (NUL bytes), neither FITS nor text".into());
    }
    match std::str::from_utf8(head) {
        Ok(_) => Ok(Format::Text),
        // A multi-byte character cut by the sniff window is still text.
        Err(e) if e.error_len().is_none() => Ok(Format::Text),
        Err(_) => Err("binary data (not UTF-8), neither FITS nor text".into()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fits_text_and_garbage_are_told_apart() {
        assert_eq!(detect(b"SIMPLE  =                    T"), Ok(Format::Fits));
        assert_eq!(detect(b"# object: x\n1 2\n"), Ok(Format::Text));
        assert!(detect(&[0x1f, 0x8b, 8, 0]).is_err());
        assert!(detect(&[0xff, 0xfe, 0x00, 0x41]).is_err());
    }
}
