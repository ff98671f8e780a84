//! The CSV table reader: column types, line numbers, and whole-file errors.

use stemcast::data::{parse_table, read_table, DataError, FrameColumn, TableOptions};

fn parse(csv: &str) -> Result<stemcast::data::Table, DataError> {
    parse_table(csv.as_bytes(), "t.csv", &TableOptions::default())
}

#[test]
fn numeric_text_and_empty_cells() {
    let t = parse("a,b,c\n1, x ,\n2.5,y,3\n,x,4\n").unwrap();
    assert_eq!(t.header, ["a", "b", "c"]);
    assert_eq!(t.frame.lines, [2, 3, 4]);
    let a = t.frame.numeric("a").unwrap();
    assert_eq!(&a[..2], &[1.0, 2.5]);
    assert!(a[2].is_nan());
    match t.frame.column("b").unwrap() {
        FrameColumn::Text {
            levels,
            codes,
            first_text,
        } => {
            assert_eq!(levels, &["x", "y"]);
            assert_eq!(codes, &[0, 1, 0]);
            assert_eq!(first_text, &Some((2, "x".to_string())));
        }
        other => panic!("expected text, got {other:?}"),
    }
    let c = t.frame.numeric("c").unwrap();
    assert!(c[0].is_nan());
    assert_eq!(t.sha256.len(), 64);
}

#[test]
fn column_turning_to_text_keeps_early_cells_verbatim() {
    let t = parse("id\n007\n10\n3a\n10\n\n").unwrap();
    match t.frame.column("id").unwrap() {
        FrameColumn::Text {
            levels,
            codes,
            first_text,
        } => {
            // Byte order: "007" < "10" < "3a".
            assert_eq!(levels, &["007", "10", "3a"]);
            assert_eq!(codes, &[0, 1, 2, 1]);
            assert_eq!(first_text, &Some((4, "3a".to_string())));
        }
        other => panic!("expected text, got {other:?}"),
    }
}

#[test]
fn declared_categorical_and_selected_columns() {
    let options = TableOptions {
        categorical: vec!["plot".into()],
        columns: Some(vec!["plot".into()]),
    };
    let t = parse_table(b"plot,x\n2,1\n10,2\n2,3\n", "t.csv", &options).unwrap();
    assert!(t.frame.column("x").is_none());
    assert_eq!(
        t.frame.column("plot"),
        Some(&FrameColumn::Text {
            levels: vec!["10".into(), "2".into()],
            codes: vec![1, 0, 1],
            first_text: None,
        })
    );
}

#[test]
fn quoted_newlines_keep_line_numbers() {
    let t = parse("a,note\n1,\"two\nlines\"\n2,plain\n3,\"x\"\n").unwrap();
    assert_eq!(t.frame.lines, [2, 4, 5]);
}

#[test]
fn empty_file() {
    let err = parse("").unwrap_err().to_string();
    assert_eq!(err, "t.csv: the file is empty (no header line)");
}

#[test]
fn header_only() {
    let err = parse("a,b\n").unwrap_err().to_string();
    assert_eq!(err, "t.csv: the file has a header but no records");
}

#[test]
fn duplicate_column_names() {
    let err = parse("a,b,a\n1,2,3\n").unwrap_err().to_string();
    assert!(
        err.starts_with("t.csv: line 1: column name \"a\" appears twice (columns 1 and 3)"),
        "{err}"
    );
}

#[test]
fn ragged_row() {
    let err = parse("a,b\n1,2\n3\n").unwrap_err().to_string();
    assert_eq!(err, "t.csv: line 3: 1 field, but the header has 2");
}

#[test]
fn missing_file_names_it() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("nope.csv");
    let err = read_table(&path, &TableOptions::default()).unwrap_err();
    assert!(matches!(err, DataError::Io { .. }));
    assert!(err.to_string().contains("nope.csv"));
}

#[test]
fn sha256_of_known_bytes() {
    // SHA-256("abc") from FIPS 180-2, appendix B.1.
    assert_eq!(
        stemcast::data::sha256_hex(b"abc"),
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    );
}

#[test]
fn byte_order_mark_and_crlf() {
    let t = parse("\u{feff}a,b\r\n1,x\r\n2,y\r\n").unwrap();
    assert_eq!(t.header, ["a", "b"]);
    assert_eq!(t.frame.numeric("a").unwrap(), &[1.0, 2.0]);
    assert_eq!(t.frame.lines, [2, 3]);
}

#[test]
fn crlf_lines() {
    assert_eq!(parse("a,b\r\n1,x\r\n2,y\r\n").unwrap().frame.lines, [2, 3]);
}

#[test]
fn bom_lines() {
    assert_eq!(
        parse("\u{feff}a,b\n1,x\n2,y\n").unwrap().frame.lines,
        [2, 3]
    );
}

#[test]
fn crlf_with_blank_lines_and_quoted_newlines() {
    // Lines: 1 header, 2 blank, 3–4 one record with a quoted line break, 5 record, 6 blank.
    let t = parse("a,b\r\n\r\n1,\"x\r\ny\"\r\n2,\"z\"\r\n\r\n").unwrap();
    assert_eq!(t.frame.lines, [3, 5]);
    match t.frame.column("b").unwrap() {
        FrameColumn::Text { levels, .. } => assert_eq!(levels, &["x\r\ny", "z"]),
        other => panic!("{other:?}"),
    }
    let err = parse("a,b\r\n1,2\r\n3\r\n").unwrap_err().to_string();
    assert_eq!(err, "t.csv: line 3: 1 field, but the header has 2");
}
