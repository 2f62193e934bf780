//! The workbook reader's own tests: the wording of its messages (rows, not lines) and the
//! column letters a spreadsheet shows. Reading whole workbooks is tested in `tests/`.

use super::*;

#[test]
fn messages_speak_of_rows() {
    assert_eq!(
        rows_not_lines("3 lines below the data (from line 24), not as data; Line 5; baseline"),
        "3 rows below the data (from row 24), not as data; Row 5; baseline"
    );
}

#[test]
fn column_letters_as_a_sheet_names_them() {
    assert_eq!(column_letters(0), "A");
    assert_eq!(column_letters(1), "B");
    assert_eq!(column_letters(25), "Z");
    assert_eq!(column_letters(26), "AA");
    assert_eq!(column_letters(27), "AB");
    assert_eq!(column_letters(701), "ZZ");
    assert_eq!(column_letters(702), "AAA");
    assert_eq!(column_letters(16_383), "XFD");
}

#[test]
fn a_wide_sparse_sheet_is_refused_before_its_grid_is_made() {
    // Two cells at opposite corners of a sheet would span millions of cells.
    let cells: Cells = (0..2_000u32)
        .map(|r| (r, if r % 2 == 0 { 0 } else { 16_383 }, Value::Number(1.0)))
        .collect();
    let e = to_grid("wide.xlsx", "S", cells).map(|_| ()).expect_err("too large");
    assert!(e.to_string().contains("spans more than"), "{e}");
}

#[test]
fn rows_keep_sheet_numbers_and_columns_start_at_the_first_used_one() {
    let cells: Cells = vec![
        (3, 2, Value::Text("nm".into())),
        (5, 2, Value::Number(400.0)),
        (5, 4, Value::Number(0.5)),
    ];
    let g = to_grid("t.xlsx", "S", cells).expect("grid");
    assert_eq!(g.lines, vec![4, 5, 6]);
    assert_eq!(g.rows[0], vec![Cell::Text("nm".into())]);
    assert!(g.rows[1].is_empty());
    assert_eq!(g.rows[2], vec![Cell::Number(400.0), Cell::Empty, Cell::Number(0.5)]);
}
