//! Text hygiene for anything that came from a file and may reach a terminal or
//! a file name.

/// Remove control characters (C0, DEL, C1, and the Unicode bidi overrides)
/// from `s`, replacing each with nothing; tabs and newlines become a space.
///
/// Everything displayed in the terminal that came from a file goes through
/// this, so a header string cannot move the cursor or change colours.
pub fn clean(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        if c == '\t' || c == '\n' || c == '\r' {
            out.push(' ');
        } else if c.is_control() || is_bidi_control(c) {
            continue;
        } else {
            out.push(c);
        }
    }
    out
}

fn is_bidi_control(c: char) -> bool {
    matches!(c, '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}' | '\u{200E}' | '\u{200F}')
}

/// True when `s` contains anything [`clean`] would remove or change.
pub fn needs_cleaning(s: &str) -> bool {
    s.chars().any(|c| c.is_control() || is_bidi_control(c))
}

/// A file-name stem built from a target name that can never leave its folder:
/// only ASCII letters, digits, `-`, `_`, `+` and `.` survive (others become
/// `_`), leading dots are replaced, the result is never empty, never `.` or
/// `..`, and at most 120 bytes. Distinct names that map to the same stem are
/// told apart by the caller (e.g. with a hash suffix), not here.
pub fn safe_stem(name: &str) -> String {
    let mut out: String = clean(name)
        .trim()
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '+' | '.') {
                c
            } else {
                '_'
            }
        })
        .collect();
    while out.starts_with('.') {
        out.replace_range(0..1, "_");
    }
    out.truncate(120);
    if out.is_empty() {
        out.push_str("unnamed");
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clean_removes_escape_sequences_and_bidi_overrides() {
        assert_eq!(clean("NGC\x1b[31m 1\u{202E}x"), "NGC[31m 1x");
        assert_eq!(clean("a\tb\nc"), "a b c");
    }

    #[test]
    fn safe_stem_cannot_escape_the_folder() {
        for bad in [
            "../../etc/passwd",
            "/abs/path",
            "..",
            ".",
            "",
            "a/../b",
            "C:\\x",
            "\u{0}",
        ] {
            let s = safe_stem(bad);
            assert!(!s.contains('/') && !s.contains('\\'), "{bad:?} -> {s:?}");
            assert!(!s.starts_with('.'), "{bad:?} -> {s:?}");
            assert!(!s.is_empty());
        }
        assert_eq!(safe_stem("Orla-17 b"), "Orla-17_b");
    }
}
