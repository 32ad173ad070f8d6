//! User line lists: the documented format, and errors that name file, line
//! and column.

use std::path::{Path, PathBuf};
use zsift::lines::{LineFileError, LineKind, ObjectClass, Width, file::parse, load_file};
use zsift::physics::airvac::air_to_vacuum;

fn p() -> &'static Path {
    Path::new("my-lines.txt")
}

fn parse_err(text: &str) -> (usize, usize, &'static str, String) {
    match parse(text, p()) {
        Err(LineFileError::Parse {
            line,
            column,
            field,
            message,
            ..
        }) => (line, column, field, message),
        other => panic!("expected a parse error, got {other:?}"),
    }
}

#[test]
fn a_documented_example_file_reads_with_defaults_filled_in() {
    let text = "\
# name, wavelength, medium, kind, strength, group, classes, width, species
name, wavelength, medium, kind, strength, group, classes, width, species
[Fe X] 6375,   6374.51, air,    emission,   0.2, coronal, galaxy qso
\"Si II 1260\",  1260.42, vacuum, absorption, 0.3, \"Si II, UV\", galaxy;qso, narrow, Si II

Pa-beta,      12821.59, vacuum   # the rest default
";
    let lines = parse(text, p()).unwrap();
    assert_eq!(lines.len(), 3);
    let fe = &lines[0];
    assert_eq!(fe.name, "[Fe X] 6375");
    assert_eq!(fe.species, "[Fe X]");
    assert!((fe.wavelength - air_to_vacuum(6374.51)).abs() < 1e-12);
    assert_eq!(fe.kind, LineKind::Emission);
    assert_eq!(fe.classes, vec![ObjectClass::Galaxy, ObjectClass::Qso]);
    assert_eq!(fe.group.as_deref(), Some("coronal"));
    let si = &lines[1];
    assert_eq!(si.wavelength, 1260.42);
    assert_eq!(si.group.as_deref(), Some("Si II, UV"));
    assert_eq!(si.species, "Si II");
    let pa = &lines[2];
    assert_eq!(pa.kind, LineKind::Both);
    assert_eq!(pa.strength, 0.5);
    assert_eq!(pa.width, Width::Narrow);
    assert_eq!(pa.group, None);
    assert_eq!(pa.classes.len(), 3);
}

#[test]
fn a_bad_wavelength_is_reported_at_its_line_and_column() {
    let (line, column, field, msg) =
        parse_err("# header\nH-alpha, 6564.61, vacuum\n[O III] 5007, 5OO8.24, vacuum\n");
    assert_eq!((line, column, field), (3, 15, "wavelength"));
    assert!(msg.contains("5OO8.24"), "{msg}");
    let (_, _, field, _) = parse_err("x, -3, air\n");
    assert_eq!(field, "wavelength");
}

#[test]
fn the_medium_is_required_and_checked() {
    let (line, column, field, msg) = parse_err("H-alpha, 6564.61\n");
    assert_eq!((line, field), (1, "medium"));
    assert_eq!(column, 17, "just past the end of the row");
    assert!(msg.contains("air") && msg.contains("vacuum"));
    let (_, column, field, _) = parse_err("H-alpha, 6564.61, vaccum\n");
    assert_eq!((column, field), (19, "medium"));
}

#[test]
fn every_optional_field_is_validated() {
    assert_eq!(parse_err("a, 5000, air, glow\n").2, "kind");
    assert_eq!(parse_err("a, 5000, air, emission, 1.5\n").2, "strength");
    assert_eq!(parse_err("a, 5000, air, emission, lots\n").2, "strength");
    assert_eq!(
        parse_err("a, 5000, air, emission, 0.5, g, comet\n").2,
        "classes"
    );
    assert_eq!(
        parse_err("a, 5000, air, emission, 0.5, g, star, wide\n").2,
        "width"
    );
    assert_eq!(
        parse_err("a, 5000, air, emission, 0.5, g, star, broad, sp, extra\n").2,
        "row"
    );
}

#[test]
fn duplicate_names_point_back_to_the_first() {
    let (line, column, field, msg) = parse_err("a, 5000, air\nb, 5001, air\na, 5002, air\n");
    assert_eq!((line, column, field), (3, 1, "name"));
    assert!(msg.contains("line 1"), "{msg}");
}

#[test]
fn names_with_control_characters_and_broken_quotes_are_refused() {
    assert_eq!(parse_err("bad\u{1b}[31m, 5000, air\n").2, "name");
    let (line, column, field, msg) = parse_err("ok, 5000, air\n\"open, 5000, air\n");
    assert_eq!((line, column, field), (2, 1, "row"));
    assert!(msg.contains("unterminated"));
    assert_eq!(parse_err(", 5000, air\n").2, "name");
}

#[test]
fn a_spreadsheet_export_with_byte_order_mark_and_crlf_reads() {
    let text = "\u{feff}name,wavelength,medium\r\nH-beta,4861.35,air\r\n";
    let lines = parse(text, p()).unwrap();
    assert_eq!(lines.len(), 1);
    assert_eq!(lines[0].name, "H-beta");
}

#[test]
fn a_file_of_only_comments_is_an_error() {
    assert!(matches!(
        parse("# nothing\n\n   \n", p()),
        Err(LineFileError::Empty { .. })
    ));
}

#[test]
fn errors_name_the_file() {
    let dir = std::env::temp_dir().join(format!("zsift-lines-file-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let f = dir.join("night3.lines");
    std::fs::write(&f, "H-alpha, 6564.61, vacuum\nX, 1, moon\n").unwrap();
    let e = load_file(&f).unwrap_err();
    let msg = e.to_string();
    assert!(
        msg.contains("night3.lines") && msg.contains("line 2") && msg.contains("column 7"),
        "{msg}"
    );
    let missing: PathBuf = dir.join("absent.lines");
    let e = load_file(&missing).unwrap_err();
    assert!(matches!(e, LineFileError::Io { .. }));
    assert!(e.to_string().contains("absent.lines"));
    let ok = dir.join("ok.lines");
    std::fs::write(&ok, "H-alpha, 6564.61, vacuum\n").unwrap();
    assert_eq!(load_file(&ok).unwrap().len(), 1);
    std::fs::remove_dir_all(&dir).unwrap();
}

proptest::proptest! {
    #[test]
    fn arbitrary_text_never_panics(text in "[ab ,\"#\n0-9.eairvcumbothsn\u{7}\u{e9}-]{0,80}") {
        let _ = parse(&text, p());
    }

    #[test]
    fn any_valid_row_reads_back_its_wavelength(w in 100.0f64..100_000.0, air in proptest::bool::ANY) {
        let medium = if air { "air" } else { "vacuum" };
        let lines = parse(&format!("x, {w}, {medium}\n"), p()).unwrap();
        let expect = if air { air_to_vacuum(w) } else { w };
        proptest::prop_assert_eq!(lines[0].wavelength, expect);
    }
}

#[test]
fn the_committed_example_list_loads_and_merges_through_assemble() {
    let f = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/lines/example.lines");
    let lines = load_file(&f).unwrap();
    assert_eq!(lines.len(), 4);
    assert_eq!(lines[2].group.as_deref(), Some("ISM UV, low ion"));
    let base = zsift::lines::builtin();
    let merged = zsift::lines::assemble(std::slice::from_ref(&f.to_path_buf()), None).unwrap();
    // [Fe VII] 6087 is new; the other three replace built-in lines by name.
    assert_eq!(merged.lines.len(), base.lines.len() + 1);
    assert_eq!(
        merged.line("[Fe X] 6375").unwrap().group.as_deref(),
        Some("coronal")
    );
    let only = zsift::lines::assemble(&[], Some(&f)).unwrap();
    assert_eq!(only.lines.len(), 4);
    assert_eq!(only.foreground, base.foreground);
}
