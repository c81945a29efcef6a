//! Property test: any table of numbers, dummies and text written as delimited
//! text (with a header, any of the four delimiters, quoting where needed)
//! reads back to the same values.

use fieldstone_core::table::read::read_table_bytes;
use fieldstone_core::table::{ColumnData, Delimiter, TextOptions};
use proptest::prelude::*;
use std::path::Path;

#[derive(Debug, Clone)]
enum Cell {
    Num(f64),
    Dummy,
}

fn column() -> impl Strategy<Value = (bool, Vec<Cell>, Vec<String>)> {
    (
        any::<bool>(),
        prop::collection::vec(
            prop_oneof![9 => (-1.0e9f64..1.0e9).prop_map(Cell::Num), 1 => Just(Cell::Dummy)],
            8,
        ),
        prop::collection::vec("[A-Za-z][A-Za-z0-9 ,;\"]{0,8}", 8),
    )
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 200, .. ProptestConfig::default() })]
    #[test]
    fn written_tables_read_back(cols in prop::collection::vec(column(), 1..6), rows in 1usize..8, d in 0usize..4) {
        let delim = [Delimiter::Comma, Delimiter::Tab, Delimiter::Semicolon, Delimiter::Whitespace][d];
        let sep = match delim { Delimiter::Comma => ",", Delimiter::Tab => "\t", Delimiter::Semicolon => ";", Delimiter::Whitespace => "   " };
        let quote = |s: &str| format!("\"{}\"", s.replace('"', "\"\""));
        let mut text = String::new();
        let names: Vec<String> = (0..cols.len()).map(|i| format!("col_{i}")).collect();
        text.push_str(&names.join(sep));
        text.push_str("\r\n");
        for r in 0..rows {
            let fields: Vec<String> = cols.iter().map(|(is_num, nums, texts)| {
                if *is_num {
                    match nums[r] { Cell::Num(v) => format!("{v}"), Cell::Dummy => "*".to_string() }
                } else {
                    quote(&texts[r])
                }
            }).collect();
            text.push_str(&fields.join(sep));
            text.push('\n');
        }
        let opts = TextOptions { delimiter: Some(delim), has_header: Some(true), dummy_value: None };
        let t = read_table_bytes(text.as_bytes(), Path::new("prop.csv"), &opts, None).unwrap();
        prop_assert_eq!(t.n_rows(), rows);
        prop_assert_eq!(&t.names, &names);
        for (c, (is_num, nums, texts)) in cols.iter().enumerate() {
            match &t.columns[c] {
                ColumnData::Number(v) => {
                    for r in 0..rows {
                        if *is_num {
                            match nums[r] { Cell::Num(x) => prop_assert_eq!(v[r], x), Cell::Dummy => prop_assert!(v[r].is_nan()) }
                        }
                    }
                }
                ColumnData::Text(v) => {
                    for r in 0..rows {
                        if !*is_num {
                            prop_assert_eq!(&v[r], texts[r].trim());
                        }
                    }
                }
            }
        }
    }
}
