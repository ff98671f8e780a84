//! Tree lists (projection input, `docs/data.md#tree-lists`): per-stand arrays, single-stand
//! reading, streaming, and bad input.

use std::path::PathBuf;

use stemcast::data::{
    read_single_stand, read_tree_lists, DataError, FrameColumn, TreeListSpec, TreeListStream,
};

fn file(text: &str) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("trees.csv");
    std::fs::write(&path, text).unwrap();
    (dir, path)
}

fn assert_cell(err: DataError, line: u64, column: &str, what: &str) {
    let message = err.to_string();
    let place = format!("trees.csv: line {line}, column \"{column}\": ");
    assert!(
        message.contains(&place),
        "expected {place:?} in {message:?}"
    );
    assert!(message.contains(what), "expected {what:?} in {message:?}");
}

const TWO_STANDS: &str = "\
stand,tree,dbh,expansion,treatment,height
B,1,10,25,released,8.5
B,2,12.5,25,unreleased,
A,1,20,50,released,15
";

#[test]
fn stands_in_order_of_first_row() {
    let (_dir, path) = file(TWO_STANDS);
    let lists = read_tree_lists(&path, &TreeListSpec::default()).unwrap();
    assert_eq!(lists.len(), 2);
    let b = &lists[0];
    assert_eq!(b.stand.as_deref(), Some("B"));
    assert_eq!(b.tree, ["1", "2"]);
    assert_eq!(b.dbh, [10.0, 12.5]);
    assert_eq!(b.expansion, [25.0, 25.0]);
    assert_eq!(b.lines, [2, 3]);
    let height = b.attributes["height"].as_numeric().unwrap();
    assert_eq!(height[0], 8.5);
    assert!(height[1].is_nan());
    match &b.attributes["treatment"] {
        FrameColumn::Text { levels, codes, .. } => {
            assert_eq!(levels, &["released", "unreleased"]);
            assert_eq!(codes, &[0, 1]);
        }
        other => panic!("{other:?}"),
    }
    assert_eq!(lists[1].stand.as_deref(), Some("A"));
    assert_eq!(lists[1].lines, [4]);
}

#[test]
fn single_stand_without_stand_column() {
    let (_dir, path) = file("tree,dbh,expansion,class\nt1,10,25,1\nt2,11,25,2\n");
    let spec = TreeListSpec {
        categorical: vec!["class".into()],
        ..TreeListSpec::default()
    };
    let list = read_single_stand(&path, &spec).unwrap();
    assert_eq!(list.stand, None);
    assert_eq!(list.len(), 2);
    assert!(matches!(list.attributes["class"], FrameColumn::Text { .. }));
}

#[test]
fn project_takes_one_stand() {
    let (_dir, path) = file(TWO_STANDS);
    let err = read_single_stand(&path, &TreeListSpec::default()).unwrap_err();
    let message = err.to_string();
    assert!(
        message.contains(
            "line 4, column \"stand\": stand \"A\" is a second stand (stands: \"B\", \"A\")"
        ),
        "{message}"
    );
    assert!(message.contains("use `stemcast batch`"), "{message}");
}

#[test]
fn duplicate_tree_in_a_stand() {
    let (_dir, path) = file("stand,tree,dbh,expansion\nA,1,10,25\nB,1,10,25\nA,1,12,25\n");
    let err = read_tree_lists(&path, &TreeListSpec::default()).unwrap_err();
    assert_cell(
        err,
        4,
        "tree",
        "tree id \"1\" appears twice in stand \"A\" (lines 2 and 4)",
    );
}

#[test]
fn non_positive_dbh_and_expansion() {
    let (_dir, path) = file("tree,dbh,expansion\n1,0,25\n");
    let err = read_single_stand(&path, &TreeListSpec::default()).unwrap_err();
    assert_cell(err, 2, "dbh", "0 is not a positive diameter");
    let (_dir, path) = file("tree,dbh,expansion\n1,10,25\n2,10,-2\n");
    let err = read_single_stand(&path, &TreeListSpec::default()).unwrap_err();
    assert_cell(err, 3, "expansion", "-2 is not a positive expansion factor");
    let (_dir, path) = file("tree,dbh,expansion\n1,ten,25\n");
    let err = read_single_stand(&path, &TreeListSpec::default()).unwrap_err();
    assert_cell(err, 2, "dbh", "\"ten\" is not a number");
}

#[test]
fn missing_columns() {
    let (_dir, path) = file("tree,diameter,expansion\n1,10,25\n");
    let err = read_single_stand(&path, &TreeListSpec::default()).unwrap_err();
    assert!(matches!(err, DataError::MissingColumn { .. }));
    assert!(err.to_string().contains("no column \"dbh\""), "{err}");
    assert!(
        err.to_string()
            .contains("the file has: tree, diameter, expansion"),
        "{err}"
    );
}

#[test]
fn streaming_yields_one_stand_at_a_time() {
    let text = "stand,tree,dbh,expansion\nA,1,10,25\nA,2,11,25\nB,1,12,25\nC,1,13,25\nC,2,14,25\n";
    let stands: Vec<_> =
        TreeListStream::from_reader(text.as_bytes(), "trees.csv", &TreeListSpec::default())
            .unwrap()
            .map(|s| s.unwrap())
            .collect();
    let ids: Vec<_> = stands
        .iter()
        .map(|s| (s.stand.clone().unwrap(), s.len()))
        .collect();
    assert_eq!(
        ids,
        [
            ("A".to_string(), 2),
            ("B".to_string(), 1),
            ("C".to_string(), 2)
        ]
    );
    assert_eq!(stands[2].lines, [5, 6]);
}

#[test]
fn streaming_rejects_a_stand_that_comes_back() {
    let text = "stand,tree,dbh,expansion\nA,1,10,25\nB,1,12,25\nA,2,13,25\n";
    let mut stream =
        TreeListStream::from_reader(text.as_bytes(), "trees.csv", &TreeListSpec::default())
            .unwrap();
    assert!(stream.next().unwrap().is_ok());
    assert!(stream.next().unwrap().is_ok());
    let err = stream.next().unwrap().unwrap_err();
    assert_cell(
        err,
        4,
        "stand",
        "stand \"A\" appears again after other stands",
    );
    assert!(stream.next().is_none());
}

#[test]
fn streaming_a_header_only_file_is_an_error() {
    let mut stream = TreeListStream::from_reader(
        "stand,tree,dbh,expansion\n".as_bytes(),
        "trees.csv",
        &TreeListSpec::default(),
    )
    .unwrap();
    let err = stream.next().unwrap().unwrap_err();
    assert_eq!(
        err.to_string(),
        "trees.csv: the file has a header but no records"
    );
}

#[test]
fn crlf_line_numbers_in_messages() {
    let (_dir, path) = file("tree,dbh,expansion\r\n1,10,25\r\n\r\n2,-1,25\r\n");
    let err = read_single_stand(&path, &TreeListSpec::default()).unwrap_err();
    assert_cell(err, 4, "dbh", "-1 is not a positive diameter");
}
