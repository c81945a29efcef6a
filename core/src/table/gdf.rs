//! ASEG-GDF2 line data: a `.dat` file of records with a `.dfn` definition
//! file beside it (Pratt, D. A. 2003, ASEG-GDF2 — a standard for point
//! located data exchange, revision 4, Australian Society of Exploration
//! Geophysicists; read from that published specification).
//!
//! The definition file has one `DEFN` line per field:
//!
//! ```text
//! DEFN   ST=RECD,RT=COMM;RT:A4;COMMENTS:A76
//! DEFN 1 ST=RECD,RT=;LINE:I10:NAME=line number
//! DEFN 2 ST=RECD,RT=;MAG:F10.3:UNIT=nT,NULL=-99999.999,NAME=total field
//! DEFN 3 ST=RECD,RT=;EM:15F12.6:UNIT=ppm
//! DEFN 4 ST=RECD,RT=;END DEFN
//! ```
//!
//! Each field is `NAME:FORMAT[:ATTRIBUTES]` with a Fortran format
//! (`[count]` `A`, `I`, `F`, `E` or `D`, `width[.decimals]`); a field of
//! `count` > 1 values becomes the columns `NAME[0]` … `NAME[count-1]`.
//! Attributes are `UNIT=` (or `UNITS=`), `NULL=` and `NAME=` (a long name).
//! Records whose type is not that of the data (`COMM` comments) are skipped.
//!
//! The data records are read by the widths of the formats; a file whose
//! records do not fit the widths but have one token per value between
//! spaces or tabs (some deliveries are written so) is read by tokens. The
//! way is chosen on the first record and kept for the whole file.

use super::passthrough::PassThroughTable;
use super::sniff::{decode_line, Sniffed, SAMPLE_LINES};
use super::{ColumnData, ColumnKind, Delimiter, Table, TableError, TextOptions};
use std::fs::File;
use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};

/// The kind of value a format holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FieldKind {
    /// `A`: characters.
    Text,
    /// `I`: an integer.
    Integer,
    /// `F`, `E`, `D`: a real number.
    Real,
}

/// One field of the data record.
#[derive(Debug, Clone, PartialEq)]
pub struct Field {
    pub name: String,
    pub kind: FieldKind,
    /// Values in the field (`15F12.6`: 15).
    pub count: usize,
    /// Characters of each value.
    pub width: usize,
    /// The unit as written (`nT`, `metres`), if given.
    pub unit: Option<String>,
    /// The value that means "no value", if given.
    pub null: Option<f64>,
    /// The long name (`NAME=`), if given.
    pub long_name: Option<String>,
    /// Line of the definition file.
    pub line: u64,
}

/// A definition file: the fields of the data record.
#[derive(Debug, Clone, PartialEq)]
pub struct Definition {
    pub file: PathBuf,
    pub fields: Vec<Field>,
    /// Record types that are not data (`COMM`), whose records are skipped.
    pub other_types: Vec<String>,
}

impl Definition {
    /// Column names: `NAME`, or `NAME[k]` for each value of a multi-value field.
    pub fn column_names(&self) -> Vec<String> {
        let mut v = Vec::new();
        for f in self.data_fields() {
            if f.count == 1 {
                v.push(f.name.clone());
            } else {
                v.extend((0..f.count).map(|k| format!("{}[{k}]", f.name)));
            }
        }
        v
    }

    /// The field of each column.
    pub fn column_fields(&self) -> Vec<&Field> {
        self.data_fields()
            .flat_map(|f| std::iter::repeat_n(f, f.count))
            .collect()
    }

    /// Fields that become columns (a leading record-type field does not;
    /// the record splitter skips the same one).
    fn data_fields(&self) -> impl Iterator<Item = &Field> {
        self.fields
            .iter()
            .enumerate()
            .filter(|(i, f)| !(*i == 0 && is_record_type_field(f)))
            .map(|(_, f)| f)
    }

    /// Characters of a whole record.
    pub fn record_width(&self) -> usize {
        self.fields.iter().map(|f| f.count * f.width).sum()
    }
}

fn is_record_type_field(f: &Field) -> bool {
    f.name.eq_ignore_ascii_case("RT") && f.kind == FieldKind::Text && f.count == 1
}

/// The definition file beside `dat`: the same name ending in `.dfn` (any
/// case), when `dat` ends in `.dat`.
pub fn definition_beside(dat: &Path) -> Option<PathBuf> {
    let ext = dat.extension()?.to_str()?;
    if !ext.eq_ignore_ascii_case("dat") {
        return None;
    }
    ["dfn", "DFN", "Dfn"]
        .iter()
        .map(|e| dat.with_extension(e))
        .find(|p| p.is_file())
}

fn def_err(file: &Path, line: u64, message: impl Into<String>) -> TableError {
    TableError::Definition {
        file: file.to_path_buf(),
        line,
        message: message.into(),
    }
}

/// Reads and parses a definition file.
pub fn read_definition(dfn: &Path) -> Result<Definition, TableError> {
    let bytes = std::fs::read(dfn).map_err(|source| TableError::Read {
        file: dfn.to_path_buf(),
        source,
    })?;
    parse_definition(&bytes, dfn)
}

/// Parses the text of a definition file; `file` is named in messages.
pub fn parse_definition(bytes: &[u8], file: &Path) -> Result<Definition, TableError> {
    let mut groups: Vec<(String, Vec<Field>)> = Vec::new();
    let mut ended = false;
    for (k, raw) in bytes.split(|&b| b == b'\n').enumerate() {
        let line_no = k as u64 + 1;
        let text = decode_line(raw);
        let line = text.trim();
        if line.is_empty() {
            continue;
        }
        if ended {
            break;
        }
        let upper = line.to_ascii_uppercase();
        let Some(rest) = upper.strip_prefix("DEFN").map(|_| &line[4..]) else {
            return Err(def_err(
                file,
                line_no,
                format!("a definition line starts with DEFN; found '{}'", clip(line)),
            ));
        };
        // An optional sequence number, then ST=...,RT=...; and the fields.
        let rest = rest.trim_start_matches(|c: char| c.is_ascii_digit() || c.is_whitespace());
        let Some((head, body)) = rest.split_once(';') else {
            return Err(def_err(
                file,
                line_no,
                "no ';' after the record description (ST=RECD,RT=...;NAME:FORMAT)",
            ));
        };
        let mut rt = None;
        for part in head.split(',') {
            if let Some((key, value)) = part.split_once('=') {
                if key.trim().eq_ignore_ascii_case("RT") {
                    rt = Some(value.trim().to_string());
                }
            }
        }
        let rt = rt.ok_or_else(|| {
            def_err(
                file,
                line_no,
                format!("the record description '{}' has no RT=", clip(head)),
            )
        })?;
        let gi = match groups.iter().position(|(t, _)| t.eq_ignore_ascii_case(&rt)) {
            Some(i) => i,
            None => {
                groups.push((rt.clone(), Vec::new()));
                groups.len() - 1
            }
        };
        for def in body.split(';') {
            let def = def.trim();
            if def.is_empty() {
                continue;
            }
            if def.to_ascii_uppercase().starts_with("END DEFN") {
                ended = true;
                break;
            }
            let field = parse_field(def, file, line_no)?;
            groups[gi].1.push(field);
        }
    }
    // Comment records, and any record type whose fields begin with its
    // type, are skipped; the one other type is the data.
    let is_data = |(t, fields): &(String, Vec<Field>)| {
        let comment = t.eq_ignore_ascii_case("COMM");
        // A type whose record is its type and text only (a comment type
        // under another name).
        let text_only = !t.trim().is_empty()
            && fields.len() <= 2
            && fields.first().is_some_and(is_record_type_field)
            && fields.iter().skip(1).all(|f| f.kind == FieldKind::Text);
        !comment && !text_only
    };
    let data: Vec<_> = groups.iter().filter(|g| is_data(g)).collect();
    let other_types = groups
        .iter()
        .filter(|g| !is_data(g) && !g.0.trim().is_empty())
        .map(|g| g.0.clone())
        .collect();
    match data.len() {
        0 => Err(def_err(file, 1, "no data fields are defined")),
        1 if data[0].1.iter().all(is_record_type_field) => {
            Err(def_err(file, 1, "no data fields are defined"))
        }
        1 => {
            let fields = data[0].1.clone();
            for (i, f) in fields.iter().enumerate() {
                if let Some(g) = fields[..i]
                    .iter()
                    .find(|g| g.name.eq_ignore_ascii_case(&f.name))
                {
                    return Err(def_err(
                        file,
                        f.line,
                        format!(
                            "field '{}' is defined twice (lines {} and {})",
                            f.name, g.line, f.line
                        ),
                    ));
                }
            }
            Ok(Definition {
                file: file.to_path_buf(),
                fields,
                other_types,
            })
        }
        _ => Err(def_err(
            file,
            data[1].1.first().map(|f| f.line).unwrap_or(1),
            format!(
                "several data record types ({}); only files with one data record type are read",
                data.iter()
                    .map(|g| if g.0.is_empty() {
                        "blank".to_string()
                    } else {
                        g.0.clone()
                    })
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        )),
    }
}

fn clip(s: &str) -> String {
    s.chars().take(60).collect()
}

/// Parses `NAME:FORMAT[:ATTRIBUTES]`.
fn parse_field(def: &str, file: &Path, line: u64) -> Result<Field, TableError> {
    let mut parts = def.splitn(3, ':');
    let name = parts.next().unwrap_or("").trim().to_string();
    let format = parts.next().map(str::trim).unwrap_or("");
    let attrs = parts.next().unwrap_or("");
    if name.is_empty() || name.contains(|c: char| c.is_whitespace()) {
        return Err(def_err(
            file,
            line,
            format!("'{}' does not start with a field name", clip(def)),
        ));
    }
    let (count, kind, width) = parse_format(format).ok_or_else(|| {
        def_err(
            file,
            line,
            format!(
                "field '{name}': '{format}' is not a format such as A4, I10, F10.3, E14.6 or 15F12.6"
            ),
        )
    })?;
    let mut unit = None;
    let mut null = None;
    let mut long_name: Option<String> = None;
    for a in attrs.split(',') {
        match a.split_once('=') {
            Some((key, value)) => {
                let (key, value) = (key.trim().to_ascii_uppercase(), value.trim());
                match key.as_str() {
                    "UNIT" | "UNITS" if !value.is_empty() => unit = Some(value.to_string()),
                    "NULL" if !value.is_empty() => {
                        null = Some(parse_fortran_number(value).ok_or_else(|| {
                            def_err(
                                file,
                                line,
                                format!("field '{name}': NULL={value} is not a number"),
                            )
                        })?)
                    }
                    "NAME" => long_name = Some(value.to_string()),
                    _ => {}
                }
            }
            // A comma inside the long name, or an old alias word.
            None => {
                if let Some(n) = long_name.as_mut() {
                    n.push(',');
                    n.push_str(a);
                }
            }
        }
    }
    Ok(Field {
        name,
        kind,
        count,
        width,
        unit,
        null,
        long_name: long_name.map(|n| n.trim().to_string()),
        line,
    })
}

/// `[count]` letter `width[.decimals]`; None when malformed.
fn parse_format(f: &str) -> Option<(usize, FieldKind, usize)> {
    let letter_at = f.find(|c: char| c.is_ascii_alphabetic())?;
    let count = if letter_at == 0 {
        1
    } else {
        f[..letter_at].parse::<usize>().ok()?
    };
    let kind = match f[letter_at..].chars().next()?.to_ascii_uppercase() {
        'A' => FieldKind::Text,
        'I' => FieldKind::Integer,
        'F' | 'E' | 'D' | 'G' => FieldKind::Real,
        _ => return None,
    };
    let rest = &f[letter_at + 1..];
    let width_text = rest.split('.').next()?;
    let width = width_text.parse::<usize>().ok()?;
    if let Some(d) = rest.split_once('.').map(|x| x.1) {
        d.parse::<usize>().ok()?;
    }
    // Limits that no survey reaches but that keep a damaged file from
    // asking for absurd record lengths.
    if count == 0 || width == 0 || count > 100_000 || width > 1_000 {
        return None;
    }
    Some((count, kind, width))
}

/// A number as Fortran writes it (a `D` exponent allowed).
fn parse_fortran_number(t: &str) -> Option<f64> {
    let t = t.trim();
    if t.is_empty() {
        return None;
    }
    let v = if t.contains(['D', 'd']) {
        t.replace(['D', 'd'], "E").parse::<f64>().ok()
    } else {
        t.parse::<f64>().ok()
    }?;
    Some(v)
}

/// How the records are split.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Layout {
    Widths,
    Tokens,
}

/// Splits the records of a `.dat` by its definition.
struct Records<'d> {
    def: &'d Definition,
    /// (start, end) of each column in a record read by widths.
    spans: Vec<(usize, usize)>,
    /// Whether each column is numeric.
    numeric: Vec<bool>,
    /// Characters of the record-type field at the start, if any.
    rt_width: usize,
    layout: Option<Layout>,
    fields: Vec<String>,
}

impl<'d> Records<'d> {
    fn new(def: &'d Definition) -> Records<'d> {
        let mut spans = Vec::new();
        let mut numeric = Vec::new();
        let mut at = 0;
        let mut rt_width = 0;
        for (i, f) in def.fields.iter().enumerate() {
            if i == 0 && is_record_type_field(f) {
                rt_width = f.width;
                at += f.width;
                continue;
            }
            for _ in 0..f.count {
                spans.push((at, at + f.width));
                numeric.push(f.kind != FieldKind::Text);
                at += f.width;
            }
        }
        Records {
            def,
            spans,
            numeric,
            rt_width,
            layout: None,
            fields: Vec::new(),
        }
    }

    /// True for a record of another type (a comment).
    fn is_other_type(&self, line: &str) -> bool {
        let head = line.trim_start();
        self.def.other_types.iter().any(|t| {
            head.get(..t.len())
                .is_some_and(|h| h.eq_ignore_ascii_case(t))
        })
    }

    /// Splits `line` into `self.fields`; Err(message) when it fits neither way.
    fn split(&mut self, line: &str) -> Result<(), String> {
        let layout = match self.layout {
            Some(l) => l,
            None => {
                let l = if self.split_widths(line).is_ok() {
                    Layout::Widths
                } else {
                    Layout::Tokens
                };
                self.layout = Some(l);
                l
            }
        };
        match layout {
            Layout::Widths => self.split_widths(line),
            Layout::Tokens => self.split_tokens(line),
        }
    }

    fn split_widths(&mut self, line: &str) -> Result<(), String> {
        let line = line.trim_end_matches([' ', '\t', '\r']);
        let width = self.def.record_width();
        let last = self.spans.last().map(|s| s.0).unwrap_or(0);
        // Byte positions are character positions only in ASCII records.
        if !line.is_ascii() || line.len() > width || line.len() <= last || line.contains('\t') {
            return Err(format!(
                "the record is {} characters long; the definition gives {width}",
                line.chars().count()
            ));
        }
        self.fields.clear();
        for (k, &(a, b)) in self.spans.iter().enumerate() {
            let t = line
                .get(a.min(line.len())..b.min(line.len()))
                .unwrap_or("")
                .trim();
            if self.numeric[k] && t.contains(char::is_whitespace) {
                return Err(format!(
                    "the characters {}–{} hold '{t}', not one value; the record does not follow the definition's widths",
                    a + 1,
                    b
                ));
            }
            self.fields.push(t.to_string());
        }
        Ok(())
    }

    fn split_tokens(&mut self, line: &str) -> Result<(), String> {
        let body = if self.rt_width > 0 {
            line.get(self.rt_width.min(line.len())..).unwrap_or("")
        } else {
            line
        };
        self.fields.clear();
        self.fields
            .extend(body.split_whitespace().map(|t| t.to_string()));
        if self.fields.len() != self.spans.len() {
            return Err(format!(
                "the record has {} values; the definition gives {} (in widths of {} characters in all)",
                self.fields.len(),
                self.spans.len(),
                self.def.record_width()
            ));
        }
        Ok(())
    }
}

/// A value of a numeric field: Ok(None) for a null or an overflow
/// (`*****`), Err for text that is not a number.
fn value_of(t: &str, f: &Field, dummy: Option<f64>) -> Result<Option<f64>, ()> {
    if super::is_dummy_token(t) || t.chars().all(|c| c == '*') {
        return Ok(None);
    }
    let v = parse_fortran_number(t).ok_or(())?;
    let is = |n: f64| (v - n).abs() <= 1e-9 * n.abs().max(1.0);
    if f.null.is_some_and(is) || dummy.is_some_and(is) || !v.is_finite() {
        return Ok(None);
    }
    Ok(Some(v))
}

/// Visits every data record of `dat`: `visit(file line, fields)`.
fn for_each_record(
    dat: &Path,
    def: &Definition,
    visit: impl FnMut(u64, &[String]) -> Result<bool, TableError>,
) -> Result<(), TableError> {
    let f = File::open(dat).map_err(|source| TableError::Read {
        file: dat.to_path_buf(),
        source,
    })?;
    records_in(BufReader::with_capacity(1 << 20, f), dat, def, visit)
}

/// As [`for_each_record`], from any reader; `dat` is named in messages.
fn records_in(
    mut reader: impl BufRead,
    dat: &Path,
    def: &Definition,
    mut visit: impl FnMut(u64, &[String]) -> Result<bool, TableError>,
) -> Result<(), TableError> {
    let mut rec = Records::new(def);
    let mut buf = Vec::new();
    let mut line_no = 0u64;
    loop {
        buf.clear();
        let n = reader
            .read_until(b'\n', &mut buf)
            .map_err(|source| TableError::Read {
                file: dat.to_path_buf(),
                source,
            })?;
        if n == 0 {
            break;
        }
        line_no += 1;
        if let Some(k) = buf.iter().position(|&b| {
            b == 0 || (b < 0x20 && !matches!(b, b'\t' | b'\r' | b'\n' | 0x0c | 0x1a))
        }) {
            return Err(TableError::Binary {
                file: dat.to_path_buf(),
                line: line_no,
                column: k + 1,
                byte: buf[k],
            });
        }
        let text = decode_line(&buf);
        let line = text.trim_end_matches(['\n', '\r', '\x1a']);
        if line.trim().is_empty() || rec.is_other_type(line) {
            continue;
        }
        rec.split(line).map_err(|message| TableError::Record {
            file: dat.to_path_buf(),
            line: line_no,
            message,
            definition: def.file.clone(),
        })?;
        if !visit(line_no, &rec.fields)? {
            break;
        }
    }
    Ok(())
}

/// The kind of each column: text for `A` formats, numbers otherwise.
fn kinds_of(def: &Definition) -> Vec<ColumnKind> {
    def.column_fields()
        .iter()
        .map(|f| match f.kind {
            FieldKind::Text => ColumnKind::Text,
            FieldKind::Integer | FieldKind::Real => ColumnKind::Number,
        })
        .collect()
}

/// Refuses a file without data records.
fn require_rows(lines: &[u64], dat: &Path) -> Result<(), TableError> {
    if lines.is_empty() {
        return Err(TableError::HeaderOnly {
            file: dat.to_path_buf(),
        });
    }
    Ok(())
}

/// The layout of a `.dat`: column names and kinds from the definition, and
/// the first records as text, for previews and guesses.
pub fn sniff_gdf(dat: &Path, def: &Definition) -> Result<Sniffed, TableError> {
    let names = def.column_names();
    let kinds = kinds_of(def);
    let mut sample = Vec::new();
    for_each_record(dat, def, |_, fields| {
        sample.push(fields.to_vec());
        Ok(sample.len() < SAMPLE_LINES)
    })?;
    if sample.is_empty() {
        return Err(TableError::HeaderOnly {
            file: dat.to_path_buf(),
        });
    }
    Ok(Sniffed {
        delimiter: Delimiter::Whitespace,
        has_header: true,
        names,
        kinds,
        sample,
    })
}

/// Reads a whole `.dat` into typed columns. `kinds` overrides the kinds the
/// definition gives (one per column); nulls and the dummy of `opts` become
/// NaN in numeric columns and are counted.
pub fn read_gdf(
    dat: &Path,
    def: &Definition,
    opts: &TextOptions,
    kinds: Option<&[ColumnKind]>,
) -> Result<Table, TableError> {
    read_gdf_with(dat, def, opts, kinds, |visit| {
        for_each_record(dat, def, visit)
    })
}

/// Reads the records of a `.dat` held in memory (tests and fuzzing); `dat`
/// is named in messages.
pub fn read_gdf_bytes(
    bytes: &[u8],
    dat: &Path,
    def: &Definition,
    opts: &TextOptions,
) -> Result<Table, TableError> {
    read_gdf_with(dat, def, opts, None, |visit| {
        records_in(bytes, dat, def, visit)
    })
}

type Visit<'v> = &'v mut dyn FnMut(u64, &[String]) -> Result<bool, TableError>;

fn read_gdf_with(
    dat: &Path,
    def: &Definition,
    opts: &TextOptions,
    kinds: Option<&[ColumnKind]>,
    records: impl FnOnce(Visit<'_>) -> Result<(), TableError>,
) -> Result<Table, TableError> {
    let names = def.column_names();
    let fields = def.column_fields();
    let kinds: Vec<ColumnKind> = match kinds {
        Some(k) if k.len() != names.len() => {
            return Err(TableError::KindCount {
                file: dat.to_path_buf(),
                given: k.len(),
                found: names.len(),
            })
        }
        Some(k) => k.to_vec(),
        None => kinds_of(def),
    };
    let mut columns: Vec<ColumnData> = kinds
        .iter()
        .map(|k| match k {
            ColumnKind::Number => ColumnData::Number(Vec::new()),
            ColumnKind::Text => ColumnData::Text(Vec::new()),
        })
        .collect();
    let mut dummies = vec![0usize; names.len()];
    let mut lines = Vec::new();
    let dummy = opts.dummy_value;
    records(&mut |line, texts| {
        for (k, t) in texts.iter().enumerate() {
            match &mut columns[k] {
                ColumnData::Number(v) => match value_of(t, fields[k], dummy) {
                    Ok(Some(x)) => v.push(x),
                    Ok(None) => {
                        dummies[k] += 1;
                        v.push(f64::NAN)
                    }
                    Err(()) => {
                        return Err(TableError::NotNumber {
                            file: dat.to_path_buf(),
                            line,
                            column: names[k].clone(),
                            text: t.clone(),
                        })
                    }
                },
                ColumnData::Text(v) => v.push(t.clone()),
            }
        }
        lines.push(line);
        Ok(true)
    })?;
    require_rows(&lines, dat)?;
    Ok(Table {
        file: dat.to_path_buf(),
        delimiter: Delimiter::Whitespace,
        has_header: true,
        names,
        columns,
        lines,
        dummies,
    })
}

/// Reads a `.dat` keeping every value's text, for outputs that carry the
/// input columns through (nulls are kept as written).
pub fn read_gdf_passthrough(dat: &Path, def: &Definition) -> Result<PassThroughTable, TableError> {
    let names = def.column_names();
    let mut header = csv::ByteRecord::new();
    for n in &names {
        header.push_field(n.as_bytes());
    }
    let mut rows = Vec::new();
    let mut lines = Vec::new();
    for_each_record(dat, def, |line, texts| {
        let mut r =
            csv::ByteRecord::with_capacity(texts.iter().map(|t| t.len()).sum(), texts.len());
        for t in texts {
            r.push_field(t.as_bytes());
        }
        rows.push(r);
        lines.push(line);
        Ok(true)
    })?;
    require_rows(&lines, dat)?;
    Ok(PassThroughTable {
        file: dat.to_path_buf(),
        header,
        names,
        rows,
        lines,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formats_are_read_as_the_specification_writes_them() {
        assert_eq!(parse_format("A4"), Some((1, FieldKind::Text, 4)));
        assert_eq!(parse_format("I10"), Some((1, FieldKind::Integer, 10)));
        assert_eq!(parse_format("F10.3"), Some((1, FieldKind::Real, 10)));
        assert_eq!(parse_format("15f12.6"), Some((15, FieldKind::Real, 12)));
        assert_eq!(parse_format("E14.6"), Some((1, FieldKind::Real, 14)));
        assert_eq!(parse_format("D20.12"), Some((1, FieldKind::Real, 20)));
        for bad in ["", "F", "X10", "F10.x", "0F10.2", "F0", "10"] {
            assert_eq!(parse_format(bad), None, "{bad}");
        }
        assert_eq!(parse_fortran_number("1.5D+03"), Some(1500.0));
        assert_eq!(parse_fortran_number("-99999.999"), Some(-99999.999));
    }

    #[test]
    fn a_definition_gives_fields_units_nulls_and_skips_comment_records() {
        let dfn = b"DEFN   ST=RECD,RT=COMM;RT:A4;COMMENTS:A76\r\n\
DEFN 1 ST=RECD,RT=;LINE:I10:NAME=line number\r\n\
DEFN 2 ST=RECD,RT=;MAG:F10.3:UNIT=nT,NULL=-99999.999,NAME=total field, levelled\r\n\
DEFN 3 ST=RECD,RT=;EM:3F8.2:UNITS=ppm\r\n\
DEFN 4 ST=RECD,RT=;END DEFN\r\n";
        let d = parse_definition(dfn, Path::new("a.dfn")).unwrap();
        assert_eq!(d.other_types, vec!["COMM".to_string()]);
        assert_eq!(
            d.column_names(),
            vec!["LINE", "MAG", "EM[0]", "EM[1]", "EM[2]"]
        );
        assert_eq!(d.fields[1].unit.as_deref(), Some("nT"));
        assert_eq!(d.fields[1].null, Some(-99999.999));
        assert_eq!(
            d.fields[1].long_name.as_deref(),
            Some("total field, levelled")
        );
        assert_eq!(d.fields[2].unit.as_deref(), Some("ppm"));
        assert_eq!(d.record_width(), 10 + 10 + 24);
    }
}
