//! Property tests: no reader panics, whatever the bytes.

use proptest::prelude::*;
use std::path::{Path, PathBuf};
use zsift::spectrum::{ReadOptions, read_bytes};

fn fixtures() -> Vec<Vec<u8>> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/fits");
    let mut out: Vec<Vec<u8>> = std::fs::read_dir(&dir)
        .expect("fixture dir")
        .filter_map(Result::ok)
        .filter(|e| e.path().extension().is_some_and(|x| x == "fits"))
        .map(|e| std::fs::read(e.path()).expect("fixture"))
        .collect();
    out.sort();
    out
}

fn text_sample() -> Vec<u8> {
    let mut s = String::from("# object: Orla-17\n# medium: air\nwavelength_nm,flux,ivar\n");
    for i in 0..40 {
        s.push_str(&format!(
            "{},{},4\n",
            500.0 + i as f64 * 0.1,
            1.0 + i as f64
        ));
    }
    s.into_bytes()
}

fn check(bytes: &[u8]) {
    // The property is "returns": Ok or Err, never a panic.
    if let Ok(s) = read_bytes(Path::new("fuzz"), bytes, &ReadOptions::default()) {
        assert!(s.wave.windows(2).all(|p| p[1] > p[0]));
        assert_eq!(s.flux.len(), s.wave.len());
        assert_eq!(s.mask.len(), s.wave.len());
        assert!(!s.meta.target.chars().any(char::is_control));
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn random_bytes_never_panic_a_reader(bytes in proptest::collection::vec(any::<u8>(), 0..6000)) {
        check(&bytes);
    }

    #[test]
    fn random_bytes_after_a_fits_signature_never_panic(tail in proptest::collection::vec(any::<u8>(), 0..9000)) {
        let mut b = b"SIMPLE  =                    T".to_vec();
        b.extend(tail);
        check(&b);
    }

    #[test]
    fn mutated_fits_fixtures_never_panic(
        which in 0usize..64,
        edits in proptest::collection::vec((any::<usize>(), any::<u8>()), 1..12),
        cut in proptest::option::of(any::<usize>()),
    ) {
        let all = fixtures();
        let mut b = all[which % all.len()].clone();
        for (pos, byte) in edits {
            // Bias edits towards the header, where structure lives.
            let p = pos % b.len().min(2880 * 2);
            b[p] = byte;
        }
        if let Some(c) = cut {
            b.truncate(c % (b.len() + 1));
        }
        check(&b);
    }

    #[test]
    fn header_values_replaced_by_random_numbers_never_panic(
        which in 0usize..64,
        card in 0usize..36,
        value in prop_oneof![
            any::<i64>().prop_map(|v| v.to_string()),
            any::<f64>().prop_map(|v| format!("{v:E}")),
            "[-0-9.ED' TF]{0,20}",
        ],
    ) {
        let all = fixtures();
        let mut b = all[which % all.len()].clone();
        let start = card * 80 + 10;
        let v = format!("{value:<20}");
        let v = &v.as_bytes()[..20];
        if b[card * 80 + 8..card * 80 + 10] == *b"= " {
            b[start..start + 20].copy_from_slice(v);
        }
        check(&b);
    }

    #[test]
    fn mutated_text_never_panics(
        edits in proptest::collection::vec((any::<usize>(), prop_oneof![
            Just(b','), Just(b'\n'), Just(b'#'), Just(b'\t'), Just(b' '), Just(b'e'),
            Just(b'-'), Just(b'n'), Just(b':'), Just(0u8), Just(0xffu8), any::<u8>()
        ]), 1..20),
    ) {
        let mut b = text_sample();
        for (pos, byte) in edits {
            let p = pos % b.len();
            b[p] = byte;
        }
        check(&b);
    }

    #[test]
    fn random_numeric_tables_never_panic(
        cells in proptest::collection::vec(
            proptest::collection::vec(prop_oneof![
                any::<f64>().prop_map(|v| v.to_string()),
                Just("nan".to_string()), Just(String::new()), "[a-z]{1,3}",
            ], 1..5),
            0..60),
        sep in prop_oneof![Just(","), Just("\t"), Just(" ")],
    ) {
        let text: String = cells.iter().map(|r| r.join(sep) + "\n").collect();
        check(text.as_bytes());
    }
}
