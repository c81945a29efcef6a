//! The station table of `fieldstone forward`: a delimited text file with a
//! header row naming at least `x`, `y`, `z` (metres; z is elevation, up).
//! Every other column is carried through to the output unchanged, byte for
//! byte. Comma, semicolon and tab delimiters are recognised from the header;
//! lines starting with `#` are comments; LF and CRLF line endings, a UTF-8
//! byte-order mark and Windows-1252 header text are accepted.

use crate::io::text::{decode_lossless_enough, strip_bom};
use std::io::Write;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// A problem with a station table.
#[derive(Debug, Error)]
pub enum StationsError {
    #[error("cannot read station file {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: the file is empty; expected a header row with x, y, z")]
    Empty { file: PathBuf },
    #[error("{file}: the header has no column named '{name}' (found: {found}); the station file needs x, y, z in metres")]
    MissingColumn {
        file: PathBuf,
        name: &'static str,
        found: String,
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
    #[error("{file}: the header is the only row; there are no stations")]
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
    #[error("{file}: line {line}, column '{column}': the value is missing or a dummy ('{text}'); a station needs x, y and z")]
    Missing {
        file: PathBuf,
        line: u64,
        column: String,
        text: String,
    },
    #[error("{file}: line {line}: {message}")]
    Csv {
        file: PathBuf,
        line: u64,
        message: String,
    },
}

/// A station table: raw header and rows (kept for pass-through) and the parsed
/// positions with the file line of each row.
#[derive(Debug, Clone)]
pub struct StationTable {
    pub header: csv::ByteRecord,
    pub rows: Vec<csv::ByteRecord>,
    pub positions: Vec<[f64; 3]>,
    pub lines: Vec<u64>,
    pub delimiter: u8,
}

/// Picks the delimiter from the first non-comment line: the most frequent of
/// comma, semicolon and tab (comma when none appears).
fn sniff_delimiter(bytes: &[u8]) -> u8 {
    let first = bytes
        .split(|&b| b == b'\n')
        .find(|l| !l.is_empty() && l[0] != b'#' && !l.iter().all(|b| b.is_ascii_whitespace()))
        .unwrap_or(b"");
    let count = |d: u8| first.iter().filter(|&&b| b == d).count();
    let mut best = (b',', count(b','));
    for d in [b';', b'\t'] {
        let c = count(d);
        if c > best.1 {
            best = (d, c);
        }
    }
    best.0
}

/// Reads a station table from a file.
pub fn read_stations(path: &Path, output_columns: &[&str]) -> Result<StationTable, StationsError> {
    let bytes = std::fs::read(path).map_err(|source| StationsError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    parse_stations(&bytes, path, output_columns)
}

/// Parses a station table; `output_columns` are the names the output will add,
/// which must not already be present.
pub fn parse_stations(
    bytes: &[u8],
    file: &Path,
    output_columns: &[&str],
) -> Result<StationTable, StationsError> {
    let file_buf = file.to_path_buf();
    let bytes = strip_bom(bytes);
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(StationsError::Empty { file: file_buf });
    }
    let delimiter = sniff_delimiter(bytes);
    let mut rdr = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .comment(Some(b'#'))
        .has_headers(true)
        .flexible(false)
        .from_reader(bytes);
    let csv_err = |e: csv::Error| match e.kind() {
        csv::ErrorKind::UnequalLengths {
            pos,
            expected_len,
            len,
        } => StationsError::Ragged {
            file: file_buf.clone(),
            line: pos.as_ref().map(|p| p.line()).unwrap_or(0),
            expected: *expected_len,
            found: *len,
        },
        _ => StationsError::Csv {
            file: file_buf.clone(),
            line: e.position().map(|p| p.line()).unwrap_or(0),
            message: e.to_string(),
        },
    };
    let header = rdr.byte_headers().map_err(csv_err)?.clone();
    let names: Vec<String> = header
        .iter()
        .map(|h| decode_lossless_enough(h).trim().to_string())
        .collect();
    for (i, n) in names.iter().enumerate() {
        if let Some(j) = names[..i].iter().position(|m| m.eq_ignore_ascii_case(n)) {
            return Err(StationsError::DuplicateColumn {
                file: file_buf,
                name: n.clone(),
                first: j + 1,
                second: i + 1,
            });
        }
        if output_columns.iter().any(|o| o.eq_ignore_ascii_case(n)) {
            return Err(StationsError::OutputNameTaken {
                file: file_buf,
                name: n.clone(),
            });
        }
    }
    let find = |name: &'static str| {
        names
            .iter()
            .position(|n| n.eq_ignore_ascii_case(name))
            .ok_or_else(|| StationsError::MissingColumn {
                file: file.to_path_buf(),
                name,
                found: names.join(", "),
            })
    };
    let cols = [find("x")?, find("y")?, find("z")?];
    let mut rows = Vec::new();
    let mut positions = Vec::new();
    let mut lines = Vec::new();
    let mut rec = csv::ByteRecord::new();
    loop {
        match rdr.read_byte_record(&mut rec) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => return Err(csv_err(e)),
        }
        let line = rec.position().map(|p| p.line()).unwrap_or(0);
        let mut p = [0.0; 3];
        for (a, &c) in cols.iter().enumerate() {
            let raw = rec.get(c).unwrap_or(b"");
            let text = decode_lossless_enough(raw);
            let t = text.trim();
            if t.is_empty()
                || t == "*"
                || t.eq_ignore_ascii_case("nan")
                || t.eq_ignore_ascii_case("na")
            {
                return Err(StationsError::Missing {
                    file: file_buf,
                    line,
                    column: names[c].clone(),
                    text: t.to_string(),
                });
            }
            match t.parse::<f64>() {
                Ok(v) if v.is_finite() => p[a] = v,
                _ => {
                    return Err(StationsError::NotNumber {
                        file: file_buf,
                        line,
                        column: names[c].clone(),
                        text: t.to_string(),
                    })
                }
            }
        }
        positions.push(p);
        lines.push(line);
        rows.push(rec.clone());
    }
    if rows.is_empty() {
        return Err(StationsError::NoRows { file: file_buf });
    }
    Ok(StationTable {
        header,
        rows,
        positions,
        lines,
        delimiter,
    })
}

/// Writes the table with extra numeric columns appended: `extra_names` in the
/// header and `extra(i)` for row i. Numbers are written in the shortest form
/// that reads back to the same f64. The output is comma-delimited.
pub fn write_with_columns(
    table: &StationTable,
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
        for v in extra(i) {
            rec.push_field(format!("{v}").as_bytes());
        }
        w.write_byte_record(&rec)?;
    }
    w.flush()?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(s: &[u8]) -> Result<StationTable, StationsError> {
        parse_stations(s, Path::new("st.csv"), &["gz_mgal"])
    }

    #[test]
    fn reads_comma_semicolon_tab_crlf_and_bom() {
        for text in [
            &b"x,y,z,name\n1,2,3,a\n4,5,6,b\n"[..],
            b"\xEF\xBB\xBFx;y;z;name\r\n1;2;3;a\r\n4;5;6;b\r\n",
            b"# survey 7\nX\tY\tZ\tname\n1\t2\t3\ta\n4\t5\t6\tb\n",
        ] {
            let t = parse(text).unwrap();
            assert_eq!(t.positions, vec![[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]]);
            assert_eq!(&t.rows[1][3], b"b");
        }
    }

    #[test]
    fn errors_name_file_line_and_column() {
        let e = parse(b"x,y,z\n1,2,3\n1,zz,3\n").unwrap_err().to_string();
        assert!(
            e.contains("st.csv") && e.contains("line 3") && e.contains("'y'") && e.contains("zz"),
            "{e}"
        );
        let e = parse(b"x,y,z\n1,2,3\n1,2\n").unwrap_err().to_string();
        assert!(
            e.contains("line 3") && e.contains("expected 3") && e.contains("found 2"),
            "{e}"
        );
        let e = parse(b"x,y,h\n1,2,3\n").unwrap_err().to_string();
        assert!(e.contains("'z'") && e.contains("x, y, h"), "{e}");
        let e = parse(b"x,y,z\n1,,3\n").unwrap_err().to_string();
        assert!(e.contains("missing"), "{e}");
        let e = parse(b"x,y,z\n1,2,inf\n").unwrap_err().to_string();
        assert!(e.contains("not a number"), "{e}");
        assert!(matches!(parse(b""), Err(StationsError::Empty { .. })));
        assert!(matches!(
            parse(b"x,y,z\n"),
            Err(StationsError::NoRows { .. })
        ));
        assert!(matches!(
            parse(b"x,y,z,X\n1,2,3,4\n"),
            Err(StationsError::DuplicateColumn { .. })
        ));
        assert!(matches!(
            parse(b"x,y,z,gz_mgal\n1,2,3,4\n"),
            Err(StationsError::OutputNameTaken { .. })
        ));
    }

    #[test]
    fn non_utf8_pass_through_columns_survive_unchanged() {
        let t = parse(b"x,y,z,note\n1,2,3,H\xF6he\n").unwrap();
        let mut out = Vec::new();
        write_with_columns(&t, &["gz_mgal"], |_| vec![0.5], &mut out).unwrap();
        assert_eq!(out, b"x,y,z,note,gz_mgal\n1,2,3,H\xF6he,0.5\n");
    }
}
