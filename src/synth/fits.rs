//! A small FITS writer: just what the synthetic-data writers need.
//!
//! FITS Standard 4.0: a file is a sequence of HDUs, each a header of 80-byte
//! ASCII cards padded with spaces to a multiple of 2880 bytes, then the data
//! (big-endian, IEEE floats for negative BITPIX) padded with zeros to a
//! multiple of 2880 bytes. Mandatory keywords are written in fixed format
//! (value right-justified in columns 11-30); strings are quoted with embedded
//! quotes doubled.

/// Bytes in a FITS block.
pub const BLOCK: usize = 2880;

/// A header under construction.
#[derive(Debug, Default, Clone)]
pub struct Header {
    cards: Vec<String>,
}

fn fmt_real(x: f64) -> String {
    let s = format!("{x:?}").replace('e', "E");
    let s = if s.contains('.') || s.contains("inf") || s.contains("NaN") {
        s
    } else if let Some((m, e)) = s.split_once('E') {
        format!("{m}.0E{e}")
    } else {
        format!("{s}.0")
    };
    if s.len() <= 20 {
        return s;
    }
    (0..=14)
        .rev()
        .map(|p| format!("{x:.p$E}"))
        .find(|t| t.len() <= 20)
        .unwrap_or(s)
}

impl Header {
    /// An empty header.
    pub fn new() -> Header {
        Header::default()
    }

    fn push(&mut self, key: &str, value: &str, comment: &str) {
        let mut c = format!("{key:<8}= {value}");
        if !comment.is_empty() && c.len() + 3 + comment.len() <= 80 {
            c.push_str(" / ");
            c.push_str(comment);
        }
        c.truncate(80);
        self.cards.push(format!("{c:<80}"));
    }

    /// A logical value (fixed format).
    pub fn logical(&mut self, key: &str, v: bool, comment: &str) -> &mut Self {
        self.push(key, &format!("{:>20}", if v { "T" } else { "F" }), comment);
        self
    }

    /// An integer value (fixed format).
    pub fn int(&mut self, key: &str, v: i64, comment: &str) -> &mut Self {
        self.push(key, &format!("{v:>20}"), comment);
        self
    }

    /// A real value (fixed format where it fits in 20 columns).
    pub fn real(&mut self, key: &str, v: f64, comment: &str) -> &mut Self {
        self.push(key, &format!("{:>20}", fmt_real(v)), comment);
        self
    }

    /// A string value; non-ASCII and control characters become `?`, and the
    /// value is cut to fit one card.
    pub fn string(&mut self, key: &str, v: &str, comment: &str) -> &mut Self {
        let clean: String = v
            .chars()
            .map(|c| {
                if c.is_ascii() && !c.is_ascii_control() {
                    c
                } else {
                    '?'
                }
            })
            .collect();
        let mut q = clean.replace('\'', "''");
        q.truncate(66);
        // A trailing lone quote after truncation would end the string early.
        while q.ends_with('\'') && q.chars().rev().take_while(|c| *c == '\'').count() % 2 == 1 {
            q.pop();
        }
        self.push(key, &format!("'{q:<8}'"), comment);
        self
    }

    /// A COMMENT card.
    pub fn comment(&mut self, text: &str) -> &mut Self {
        let mut c = format!("COMMENT {text}");
        c.truncate(80);
        self.cards.push(format!("{c:<80}"));
        self
    }

    /// The header bytes with END, padded to a whole block.
    pub fn bytes(&self) -> Vec<u8> {
        let mut out = Vec::with_capacity((self.cards.len() + 1) * 80 + BLOCK);
        for c in &self.cards {
            out.extend_from_slice(c.as_bytes());
        }
        out.extend_from_slice(format!("{:<80}", "END").as_bytes());
        while out.len() % BLOCK != 0 {
            out.push(b' ');
        }
        out
    }
}

/// Pad data bytes with zeros to a whole block.
pub fn pad_data(mut data: Vec<u8>) -> Vec<u8> {
    while data.len() % BLOCK != 0 {
        data.push(0);
    }
    data
}

/// Big-endian IEEE single-precision bytes.
pub fn f32_be(values: &[f64]) -> Vec<u8> {
    let mut out = Vec::with_capacity(values.len() * 4);
    for v in values {
        out.extend_from_slice(&(*v as f32).to_be_bytes());
    }
    out
}

/// Big-endian IEEE double-precision bytes.
pub fn f64_be(values: &[f64]) -> Vec<u8> {
    let mut out = Vec::with_capacity(values.len() * 8);
    for v in values {
        out.extend_from_slice(&v.to_be_bytes());
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cards_are_eighty_columns_and_headers_whole_blocks() {
        let mut h = Header::new();
        h.logical("SIMPLE", true, "conforms to FITS")
            .int("BITPIX", -32, "")
            .real("CRVAL1", 3600.0, "")
            .string("OBJECT", "It's a test", "");
        let b = h.bytes();
        assert_eq!(b.len(), BLOCK);
        let text = String::from_utf8(b).unwrap();
        // FITS Standard 4.0 sec. 4.2: fixed-format logical in column 30,
        // integer right-justified in columns 11-30, strings quoted from column 11.
        assert_eq!(&text[0..30], "SIMPLE  =                    T");
        assert_eq!(&text[80..110], "BITPIX  =                  -32");
        assert_eq!(&text[160..190], "CRVAL1  =               3600.0");
        assert_eq!(&text[240..256], "OBJECT  = 'It''s");
        assert_eq!(&text[320..323], "END");
    }

    #[test]
    fn reals_always_carry_a_decimal_point_or_exponent() {
        assert_eq!(fmt_real(1.5), "1.5");
        assert_eq!(fmt_real(4.0e-5), "4.0E-5");
        assert_eq!(fmt_real(1e21), "1.0E21");
        assert!(fmt_real(0.1 + 0.2).len() <= 20);
        assert!(fmt_real(-1.234_567_890_123_456_7e-300).len() <= 20);
    }
}
