//! Tables whose columns are carried through to an output unchanged.
//!
//! Headless commands that add computed columns to a user's table (forward
//! modelling, reductions) read it with [`read_passthrough`]: the header and
//! every field's text are kept as read, numeric columns are parsed on request
//! with file, line and column in every message, and [`write_with_columns`]
//! writes the input columns plus the new ones. The fields are split by the
//! table reader's own splitter (`read::visit_rows`), with its detection of
//! delimiter (comma, semicolon, tab, runs of spaces), header, comment lines
//! (`#`, `/`), quotes, LF/CRLF, byte-order mark and Windows-1252 text
//! (written out as UTF-8), so the rows kept are the rows the importer reads.

use super::read::visit_rows;
use super::sniff::sniff;
use super::{TableError, TextOptions};
use crate::io::text::{decode_lossless_enough, strip_bom};
use std::io::Write;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// A problem with a pass-through table.
#[derive(Debug, Error)]
pub enum PassThroughError {
    #[error("cannot read {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: the file is empty; expected a header row")]
    Empty { file: PathBuf },
    #[error("{file}: the header has no column named '{name}' (found: {found}){hint}")]
    MissingColumn {
        file: PathBuf,
        name: String,
        found: String,
        hint: String,
    },
    #[error("{file}: line 1: column name '{name}' appears more than once (columns {first} and {second})")]
    DuplicateColumn {
        file: PathBuf,
        name: String,
        first: usize,
        second: usize,
    },
    #[error("{file}: line 1: the input already has a column '{name}', which the output would add again; rename it")]
    OutputNameTaken { file: PathBuf, name: String },
    #[error("{file}: the first line is not a header naming the columns; outputs that keep the input's columns need one")]
    NoHeader { file: PathBuf },
    #[error("{file}: the header is the only row; there is no data")]
    NoRows { file: PathBuf },
    #[error("{file}: line {line}: expected {expected} fields as in the header, found {found}")]
    Ragged {
        file: PathBuf,
        line: u64,
        expected: u64,
        found: u64,
    },
    #[error("{file}: line {line}, column '{column}': '{text}' is not a number")]
    NotNumber {
        file: PathBuf,
        line: u64,
        column: String,
        text: String,
    },
    #[error("{file}: line {line}, column '{column}': the value is missing or a dummy ('{text}')")]
    Missing {
        file: PathBuf,
        line: u64,
        column: String,
        text: String,
    },
    #[error(transparent)]
    Table(#[from] super::TableError),
    #[error("{file}: line {line}: {message}")]
    Csv {
        file: PathBuf,
        line: u64,
        message: String,
    },
}

/// A table with raw header and rows kept for pass-through.
#[derive(Debug, Clone)]
pub struct PassThroughTable {
    pub file: PathBuf,
    pub header: csv::ByteRecord,
    pub names: Vec<String>,
    pub rows: Vec<csv::ByteRecord>,
    /// File line of each row.
    pub lines: Vec<u64>,
}

/// Reads a table from a file; `output_columns` are names the output will add
/// and must not be present already.
pub fn read_passthrough(
    path: &Path,
    output_columns: &[&str],
) -> Result<PassThroughTable, PassThroughError> {
    if let Some(t) = read_gdf_passthrough_checked(path, output_columns)? {
        return Ok(t);
    }
    let bytes = std::fs::read(path).map_err(|source| PassThroughError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    parse_passthrough(&bytes, path, output_columns)
}

/// An ASEG-GDF2 `.dat` with its `.dfn` beside it, read with every value's
/// text; None for any other file.
fn read_gdf_passthrough_checked(
    path: &Path,
    output_columns: &[&str],
) -> Result<Option<PassThroughTable>, PassThroughError> {
    let Some(def) = super::file::gdf_definition(path)? else {
        return Ok(None);
    };
    let t = super::gdf::read_gdf_passthrough(path, &def)?;
    if let Some(n) = t
        .names
        .iter()
        .find(|n| output_columns.iter().any(|o| o.eq_ignore_ascii_case(n)))
    {
        return Err(PassThroughError::OutputNameTaken {
            file: def.file.clone(),
            name: n.clone(),
        });
    }
    Ok(Some(t))
}

/// Parses table bytes; `file` is used in messages. The fields are split
/// by the one splitter of delimited text (`read::visit_rows`), with the
/// same detection of delimiter, header and comments as the importer, so the
/// rows kept here are the rows the importer reads.
pub fn parse_passthrough(
    bytes: &[u8],
    file: &Path,
    output_columns: &[&str],
) -> Result<PassThroughTable, PassThroughError> {
    let file_buf = file.to_path_buf();
    if strip_bom(bytes).iter().all(|b| b.is_ascii_whitespace()) {
        return Err(PassThroughError::Empty { file: file_buf });
    }
    let sn = match sniff(bytes, file, &TextOptions::default()) {
        Ok(sn) => sn,
        Err(TableError::Empty { .. }) => return Err(PassThroughError::Empty { file: file_buf }),
        Err(TableError::HeaderOnly { .. }) => {
            return Err(PassThroughError::NoRows { file: file_buf })
        }
        Err(TableError::DuplicateColumn {
            name,
            first,
            second,
            ..
        }) => {
            return Err(PassThroughError::DuplicateColumn {
                file: file_buf,
                name,
                first,
                second,
            })
        }
        Err(e) => return Err(e.into()),
    };
    if !sn.has_header {
        return Err(PassThroughError::NoHeader { file: file_buf });
    }
    let names: Vec<String> = sn.names.iter().map(|n| n.trim().to_string()).collect();
    for (i, n) in names.iter().enumerate() {
        if let Some(j) = names[..i].iter().position(|m| m.eq_ignore_ascii_case(n)) {
            return Err(PassThroughError::DuplicateColumn {
                file: file_buf,
                name: n.clone(),
                first: j + 1,
                second: i + 1,
            });
        }
        if output_columns.iter().any(|o| o.eq_ignore_ascii_case(n)) {
            return Err(PassThroughError::OutputNameTaken {
                file: file_buf,
                name: n.clone(),
            });
        }
    }
    let mut header = csv::ByteRecord::new();
    for n in &names {
        header.push_field(n.as_bytes());
    }
    let mut rows = Vec::new();
    let mut lines = Vec::new();
    visit_rows(bytes, &sn, file, |line_no, line, sp| {
        let mut r = csv::ByteRecord::with_capacity(line.len(), names.len());
        for c in 0..names.len() {
            r.push_field(sp.field(line, c).as_bytes());
        }
        rows.push(r);
        lines.push(line_no);
        Ok(())
    })?;
    if rows.is_empty() {
        return Err(PassThroughError::NoRows { file: file_buf });
    }
    Ok(PassThroughTable {
        file: file_buf,
        header,
        names,
        rows,
        lines,
    })
}

impl PassThroughTable {
    pub fn n_rows(&self) -> usize {
        self.rows.len()
    }

    /// Index of a column by name (case-insensitive).
    pub fn column(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n.eq_ignore_ascii_case(name))
    }

    /// Index of a required column, or an error listing what the file has.
    pub fn require(&self, name: &str, hint: &str) -> Result<usize, PassThroughError> {
        self.column(name)
            .ok_or_else(|| PassThroughError::MissingColumn {
                file: self.file.clone(),
                name: name.to_string(),
                found: self.names.join(", "),
                hint: if hint.is_empty() {
                    String::new()
                } else {
                    format!("; {hint}")
                },
            })
    }

    /// Text of field `col` in row `r`, trimmed.
    pub fn text(&self, r: usize, col: usize) -> String {
        decode_lossless_enough(self.rows[r].get(col).unwrap_or(b""))
            .trim()
            .to_string()
    }

    /// Parses column `col` as finite numbers. Dummies (empty, `*`, `NaN`,
    /// `NA`, ...) are errors when `required`, NaN otherwise.
    pub fn numbers(&self, col: usize, required: bool) -> Result<Vec<f64>, PassThroughError> {
        let mut out = Vec::with_capacity(self.rows.len());
        for r in 0..self.rows.len() {
            let t = self.text(r, col);
            if crate::table::is_dummy_token(&t) {
                if required {
                    return Err(PassThroughError::Missing {
                        file: self.file.clone(),
                        line: self.lines[r],
                        column: self.names[col].clone(),
                        text: t,
                    });
                }
                out.push(f64::NAN);
                continue;
            }
            match t.parse::<f64>() {
                Ok(v) if v.is_finite() => out.push(v),
                _ => {
                    return Err(PassThroughError::NotNumber {
                        file: self.file.clone(),
                        line: self.lines[r],
                        column: self.names[col].clone(),
                        text: t,
                    })
                }
            }
        }
        Ok(out)
    }
}

/// Appends numbers to a record in the shortest form that reads back to the
/// same f64; NaN as an empty field.
fn push_numbers(rec: &mut csv::ByteRecord, values: Vec<f64>) {
    for v in values {
        if v.is_finite() {
            // + 0.0 turns −0 into 0.
            rec.push_field(format!("{}", v + 0.0).as_bytes());
        } else {
            rec.push_field(b"");
        }
    }
}

/// Writes the table with extra numeric columns appended: `extra_names` in the
/// header and `extra(i)` for row i. Numbers are written in the shortest form
/// that reads back to the same f64; NaN is written as an empty field. The
/// output is comma-delimited.
pub fn write_with_columns(
    table: &PassThroughTable,
    extra_names: &[&str],
    mut extra: impl FnMut(usize) -> Vec<f64>,
    out: &mut dyn Write,
) -> Result<(), csv::Error> {
    let mut w = csv::WriterBuilder::new().from_writer(out);
    let mut h = table.header.clone();
    for n in extra_names {
        h.push_field(n.as_bytes());
    }
    w.write_byte_record(&h)?;
    let mut rec = csv::ByteRecord::new();
    for (i, row) in table.rows.iter().enumerate() {
        rec.clear();
        for f in row.iter() {
            rec.push_field(f);
        }
        push_numbers(&mut rec, extra(i));
        w.write_byte_record(&rec)?;
    }
    w.flush()?;
    Ok(())
}

/// Writes several tables as one: the union of their columns (by name,
/// ignoring case, in the order first seen; a field a table lacks is
/// empty), then `source` — the name of each row's file, `sources[k]` for
/// table k — then `extra_names` with `extra(k, i)` for row i of table k.
/// Rows come in table order, then row order.
pub fn write_tables_with_columns(
    tables: &[&PassThroughTable],
    source: &str,
    sources: &[String],
    extra_names: &[&str],
    mut extra: impl FnMut(usize, usize) -> Vec<f64>,
    out: &mut dyn Write,
) -> Result<(), csv::Error> {
    let mut names: Vec<Vec<u8>> = Vec::new();
    let mut lower: Vec<String> = Vec::new();
    let mut map: Vec<Vec<usize>> = Vec::new();
    for t in tables {
        let mut m = Vec::new();
        for (raw, name) in t.header.iter().zip(&t.names) {
            let l = name.to_lowercase();
            let k = match lower.iter().position(|x| *x == l) {
                Some(k) => k,
                None => {
                    lower.push(l);
                    names.push(raw.to_vec());
                    names.len() - 1
                }
            };
            m.push(k);
        }
        map.push(m);
    }
    let mut w = csv::WriterBuilder::new().from_writer(out);
    let mut h = csv::ByteRecord::new();
    for n in &names {
        h.push_field(n);
    }
    h.push_field(source.as_bytes());
    for n in extra_names {
        h.push_field(n.as_bytes());
    }
    w.write_byte_record(&h)?;
    let mut rec = csv::ByteRecord::new();
    let mut fields: Vec<&[u8]> = vec![b""; names.len()];
    for (k, t) in tables.iter().enumerate() {
        for (i, row) in t.rows.iter().enumerate() {
            fields.iter_mut().for_each(|f| *f = b"");
            for (j, f) in row.iter().enumerate() {
                if let Some(&c) = map[k].get(j) {
                    fields[c] = f;
                }
            }
            rec.clear();
            for f in &fields {
                rec.push_field(f);
            }
            rec.push_field(sources[k].as_bytes());
            push_numbers(&mut rec, extra(k, i));
            w.write_byte_record(&rec)?;
        }
    }
    w.flush()?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(s: &[u8]) -> Result<PassThroughTable, PassThroughError> {
        parse_passthrough(s, Path::new("st.csv"), &["gz_mgal"])
    }

    #[test]
    fn reads_comma_semicolon_tab_crlf_and_bom() {
        for text in [
            &b"x,y,z,name\n1,2,3,a\n4,5,6,b\n"[..],
            b"\xEF\xBB\xBFx;y;z;name\r\n1;2;3;a\r\n4;5;6;b\r\n",
            b"# survey 7\nX\tY\tZ\tname\n1\t2\t3\ta\n4\t5\t6\tb\n",
        ] {
            let t = parse(text).unwrap();
            let z = t.require("z", "").unwrap();
            assert_eq!(t.numbers(z, true).unwrap(), vec![3.0, 6.0]);
            assert_eq!(&t.rows[1][3], b"b");
        }
    }

    #[test]
    fn errors_name_file_line_and_column() {
        let t = parse(b"x,y,z\n1,2,3\n1,zz,3\n").unwrap();
        let e = t.numbers(1, true).unwrap_err().to_string();
        assert!(
            e.contains("st.csv") && e.contains("line 3") && e.contains("'y'") && e.contains("zz"),
            "{e}"
        );
        let e = parse(b"x,y,z\n1,2,3\n1,2\n").unwrap_err().to_string();
        assert!(
            e.contains("line 3") && e.contains("expected 3") && e.contains("found 2"),
            "{e}"
        );
        let t = parse(b"x,y,h\n1,2,3\n").unwrap();
        let e = t
            .require("z", "give elevations in metres")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("'z'") && e.contains("x, y, h") && e.contains("metres"),
            "{e}"
        );
        let t = parse(b"x,y,z\n1,,3\n").unwrap();
        assert!(t
            .numbers(1, true)
            .unwrap_err()
            .to_string()
            .contains("missing"));
        assert!(t.numbers(1, false).unwrap()[0].is_nan());
        let t = parse(b"x,y,z\n1,2,inf\n").unwrap();
        assert!(t
            .numbers(2, true)
            .unwrap_err()
            .to_string()
            .contains("not a number"));
        assert!(matches!(parse(b""), Err(PassThroughError::Empty { .. })));
        assert!(matches!(
            parse(b"x,y,z\n"),
            Err(PassThroughError::NoRows { .. })
        ));
        assert!(matches!(
            parse(b"x,y,z,X\n1,2,3,4\n"),
            Err(PassThroughError::DuplicateColumn { .. })
        ));
        assert!(matches!(
            parse(b"x,y,z,gz_mgal\n1,2,3,4\n"),
            Err(PassThroughError::OutputNameTaken { .. })
        ));
    }

    #[test]
    fn windows_1252_text_is_carried_as_the_same_text_in_utf8() {
        let t = parse(b"x,y,z,note\n1,2,3,H\xF6he\n").unwrap();
        let mut out = Vec::new();
        write_with_columns(&t, &["gz_mgal", "other"], |_| vec![0.5, f64::NAN], &mut out).unwrap();
        assert_eq!(
            String::from_utf8(out).unwrap(),
            "x,y,z,note,gz_mgal,other\n1,2,3,Höhe,0.5,\n"
        );
    }

    /// The dialects the importer reads are the dialects kept: columns
    /// separated by runs of spaces, and comment lines starting with `/`.
    #[test]
    fn space_separated_tables_and_slash_comments_keep_their_columns() {
        let t = parse(b"/ crew 2\nx   y  z note\n0 0 10 a\n30 -20 12 b\n").unwrap();
        assert_eq!(t.names, ["x", "y", "z", "note"]);
        assert_eq!(t.lines, vec![3, 4]);
        assert_eq!(&t.rows[1][3], b"b");
        assert!(matches!(
            parse(b"1,2,3\n4,5,6\n"),
            Err(PassThroughError::NoHeader { .. })
        ));
    }

    #[test]
    fn several_tables_write_as_one_with_their_source() {
        let a = parse(b"x,y,z\n1,2,3\n").unwrap();
        let b = parse(b"X,z,note\n4,6,n\n5,7,m\n").unwrap();
        let mut out = Vec::new();
        write_tables_with_columns(
            &[&a, &b],
            "source_file",
            &["a.csv".into(), "b.csv".into()],
            &["gz_mgal"],
            |k, i| vec![(10 * k + i) as f64],
            &mut out,
        )
        .unwrap();
        assert_eq!(
            String::from_utf8(out).unwrap(),
            "x,y,z,note,source_file,gz_mgal\n1,2,3,,a.csv,0\n4,,6,n,b.csv,10\n5,,7,m,b.csv,11\n"
        );
    }
}
