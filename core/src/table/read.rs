//! Streaming reader of delimited text into typed columns.

use super::sniff::{decode_line, is_skipped, parse_number, sniff, Sniffed, Splitter};
use super::{is_dummy_token, ColumnData, ColumnKind, Table, TableError, TextOptions};
use std::fs::File;
use std::io::{BufRead, BufReader, Cursor, Read};
use std::path::Path;

/// Bytes read ahead for detection.
const HEAD_BYTES: usize = 256 * 1024;

/// Bytes a row of a read table holds: 8 a number, about 40 a short text (its
/// heap block and the String), 8 for the line number.
pub fn bytes_per_row(kinds: &[ColumnKind]) -> u64 {
    8 + kinds
        .iter()
        .map(|k| if *k == ColumnKind::Number { 8 } else { 40 })
        .sum::<u64>()
}

/// Reads a whole table from a file. `kinds` overrides the detected column
/// kinds (one per column).
pub fn read_table(
    path: &Path,
    opts: &TextOptions,
    kinds: Option<&[ColumnKind]>,
) -> Result<Table, TableError> {
    let mut f = File::open(path).map_err(|source| TableError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    let mut head = Vec::with_capacity(HEAD_BYTES);
    (&mut f)
        .take(HEAD_BYTES as u64)
        .read_to_end(&mut head)
        .map_err(|source| TableError::Read {
            file: path.to_path_buf(),
            source,
        })?;
    let size_hint = f.metadata().map(|m| m.len() as usize).unwrap_or(0);
    let reader = BufReader::with_capacity(1 << 20, Cursor::new(head.clone()).chain(f));
    read_from(reader, &head, size_hint, path, opts, kinds)
}

/// Reads a table from bytes in memory (tests, previews, fuzzing).
pub fn read_table_bytes(
    bytes: &[u8],
    file: &Path,
    opts: &TextOptions,
    kinds: Option<&[ColumnKind]>,
) -> Result<Table, TableError> {
    read_from(BufReader::new(bytes), bytes, bytes.len(), file, opts, kinds)
}

fn read_from(
    reader: impl BufRead,
    head: &[u8],
    size_hint: usize,
    file: &Path,
    opts: &TextOptions,
    kinds: Option<&[ColumnKind]>,
) -> Result<Table, TableError> {
    let sn = sniff(head, file, opts)?;
    let kinds: Vec<ColumnKind> = match kinds {
        Some(k) if k.len() != sn.names.len() => {
            return Err(TableError::KindCount {
                file: file.to_path_buf(),
                given: k.len(),
                found: sn.names.len(),
            })
        }
        Some(k) => k.to_vec(),
        None => sn.kinds.clone(),
    };
    let n_cols = sn.names.len();
    // Rough row estimate from the head, to reserve once.
    let head_lines = head.iter().filter(|&&b| b == b'\n').count().max(1);
    let est_rows = if head.len() >= size_hint {
        head_lines
    } else {
        (size_hint as f64 / head.len().max(1) as f64 * head_lines as f64) as usize + 16
    };
    let need = bytes_per_row(&kinds) * est_rows as u64;
    if need > 64 << 20 {
        crate::memory::check_now(
            &format!("reading about {est_rows} rows of {n_cols} columns"),
            need,
            "split the file, or leave out columns that are not needed",
        )
        .map_err(|source| TableError::Memory {
            file: file.to_path_buf(),
            source,
        })?;
    }
    let mut columns: Vec<ColumnData> = kinds
        .iter()
        .map(|k| {
            if *k == ColumnKind::Number {
                ColumnData::Number(Vec::with_capacity(est_rows))
            } else {
                ColumnData::Text(Vec::with_capacity(est_rows))
            }
        })
        .collect();
    let mut lines: Vec<u64> = Vec::with_capacity(est_rows);
    let mut dummies = vec![0usize; n_cols];
    let dummy_value = opts.dummy_value;
    visit_rows(reader, &sn, file, |line_no, line, sp| {
        for (c, col) in columns.iter_mut().enumerate() {
            let t = sp.field(line, c);
            match col {
                ColumnData::Number(v) => {
                    if is_dummy_token(t) {
                        dummies[c] += 1;
                        v.push(f64::NAN);
                        continue;
                    }
                    match parse_number(t, sn.delimiter) {
                        Some(x) if dummy_value == Some(x) => {
                            dummies[c] += 1;
                            v.push(f64::NAN);
                        }
                        Some(x) => v.push(x),
                        None => {
                            return Err(TableError::NotNumber {
                                file: file.to_path_buf(),
                                line: line_no,
                                column: sn.names[c].clone(),
                                text: t.chars().take(40).collect(),
                            })
                        }
                    }
                }
                ColumnData::Text(v) => {
                    if is_dummy_token(t) {
                        dummies[c] += 1;
                    }
                    v.push(t.to_string());
                }
            }
        }
        lines.push(line_no);
        Ok(())
    })?;
    if lines.is_empty() {
        return Err(if sn.has_header {
            TableError::HeaderOnly {
                file: file.to_path_buf(),
            }
        } else {
            TableError::Empty {
                file: file.to_path_buf(),
            }
        });
    }
    Ok(Table {
        file: file.to_path_buf(),
        delimiter: sn.delimiter,
        has_header: sn.has_header,
        names: sn.names,
        columns,
        lines,
        dummies,
    })
}

/// Visits every data row of a delimited table the way the reader splits
/// it: comments and blank lines skipped, the header (when `sn` found one)
/// left out, quotes honoured, every row checked for its field count. The
/// visitor gets the file line, the line's text and the fields' spans in it.
/// The one splitter of delimited text: the typed reader and the
/// pass-through reader both go through it.
pub fn visit_rows(
    mut reader: impl BufRead,
    sn: &Sniffed,
    file: &Path,
    mut visit: impl FnMut(u64, &str, &Splitter) -> Result<(), TableError>,
) -> Result<(), TableError> {
    let n_cols = sn.names.len();
    let mut buf = Vec::with_capacity(4096);
    let mut sp = Splitter::default();
    let mut line_no: u64 = 0;
    let mut header_pending = sn.has_header;
    let mut first_data_line: Option<u64> = None;
    loop {
        buf.clear();
        let n = reader
            .read_until(b'\n', &mut buf)
            .map_err(|source| TableError::Read {
                file: file.to_path_buf(),
                source,
            })?;
        if n == 0 {
            break;
        }
        line_no += 1;
        let raw: &[u8] = if line_no == 1 {
            crate::io::text::strip_bom(&buf)
        } else {
            &buf
        };
        if raw.contains(&0) {
            let offset = raw.iter().position(|&b| b == 0).unwrap_or(0);
            return Err(TableError::Binary {
                file: file.to_path_buf(),
                line: line_no,
                column: offset + 1,
                byte: 0,
            });
        }
        let line = decode_line(raw);
        if is_skipped(&line) {
            continue;
        }
        if header_pending {
            header_pending = false;
            continue;
        }
        sp.split(&line, sn.delimiter)
            .map_err(|_| TableError::UnclosedQuote {
                file: file.to_path_buf(),
                line: line_no,
            })?;
        if sp.len() != n_cols {
            let reference = if sn.has_header {
                "the header".to_string()
            } else {
                format!("line {}", first_data_line.unwrap_or(line_no))
            };
            return Err(TableError::Ragged {
                file: file.to_path_buf(),
                line: line_no,
                expected: n_cols,
                found: sp.len(),
                reference,
                delimiter: sn.delimiter.name(),
            });
        }
        first_data_line.get_or_insert(line_no);
        visit(line_no, &line, &sp)?;
    }
    Ok(())
}

/// The first 256 kB of a file, for sniffing its layout.
pub fn read_head(path: &Path) -> Result<Vec<u8>, TableError> {
    let f = std::fs::File::open(path).map_err(|source| TableError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    let mut head = Vec::new();
    f.take(HEAD_BYTES as u64)
        .read_to_end(&mut head)
        .map_err(|source| TableError::Read {
            file: path.to_path_buf(),
            source,
        })?;
    Ok(head)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::table::Delimiter;

    fn read(text: &[u8], opts: TextOptions) -> Result<Table, TableError> {
        read_table_bytes(text, Path::new("lines.txt"), &opts, None)
    }

    #[test]
    fn reads_columns_with_dummies_as_nan_and_counts_them() {
        let t = read(
            b"\xEF\xBB\xBFline,x,grav\r\n# note\r\nL1,1,10.5\r\nL1,2,*\r\nL2,3,-99999\r\nL2,4,\r\n",
            TextOptions {
                dummy_value: Some(-99999.0),
                ..Default::default()
            },
        )
        .unwrap();
        assert_eq!(t.names, ["line", "x", "grav"]);
        let g = t.columns[2].as_numbers().unwrap();
        assert_eq!(g[0], 10.5);
        assert!(g[1].is_nan() && g[2].is_nan() && g[3].is_nan());
        assert_eq!(t.dummies, [0, 0, 3]);
        assert_eq!(t.lines, [3, 4, 5, 6]);
        assert_eq!(t.columns[0].as_text().unwrap()[2], "L2");
    }

    #[test]
    fn ragged_rows_and_bad_numbers_name_the_line() {
        let e = read(b"x,y,z\n1,2,3\n1,2\n", TextOptions::default())
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("line 3") && e.contains("expected 3") && e.contains("found 2"),
            "{e}"
        );
        let e = read(
            b"x,y,z\n1,2,3\n1,2,3\n1,2,3\n1,2,3\n1,two,3\n",
            TextOptions::default(),
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("line 6") && e.contains("'y'") && e.contains("two"),
            "{e}"
        );
        let e = read(b"x,y\n1,2\n1,1e999\n", TextOptions::default())
            .unwrap_err()
            .to_string();
        assert!(e.contains("1e999"), "{e}");
        assert!(matches!(
            read(b"x,y\n", TextOptions::default()),
            Err(TableError::HeaderOnly { .. })
        ));
        assert!(matches!(
            read(b"", TextOptions::default()),
            Err(TableError::Empty { .. })
        ));
    }

    #[test]
    fn overrides_win_over_detection() {
        let t = read(
            b"1 2 3\n4 5 6\n",
            TextOptions {
                delimiter: Some(Delimiter::Whitespace),
                has_header: Some(false),
                dummy_value: None,
            },
        )
        .unwrap();
        assert_eq!(t.n_rows(), 2);
        assert_eq!(t.names[2], "column 3");
        let t = read(
            b"a;b\n1;2\n",
            TextOptions {
                delimiter: None,
                has_header: Some(true),
                dummy_value: None,
            },
        )
        .unwrap();
        assert_eq!(t.delimiter, Delimiter::Semicolon);
    }

    #[test]
    fn a_text_value_past_the_sample_in_a_numeric_column_is_an_error() {
        let mut s = String::from("x,y\n");
        for i in 0..500 {
            s.push_str(&format!("{i},{i}\n"));
        }
        s.push_str("7,oops\n");
        let e = read(s.as_bytes(), TextOptions::default())
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 502") && e.contains("oops"), "{e}");
    }
}
