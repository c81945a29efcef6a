//! Detection of delimiter, header row and column kinds from a file's first lines.

use super::{is_dummy_token, ColumnKind, Delimiter, TableError, TextOptions};
use crate::io::text::{decode_lossless_enough, strip_bom};
use std::borrow::Cow;
use std::path::Path;

/// How many data lines the detection looks at.
pub const SAMPLE_LINES: usize = 200;

/// What detection found.
#[derive(Debug, Clone, PartialEq)]
pub struct Sniffed {
    pub delimiter: Delimiter,
    pub has_header: bool,
    pub names: Vec<String>,
    pub kinds: Vec<ColumnKind>,
    /// Up to [`SAMPLE_LINES`] data rows as text, for previews.
    pub sample: Vec<Vec<String>>,
}

/// A quoted field runs to the end of the line without its closing quote.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct UnclosedQuote;

/// Splits one line into fields, reusing its buffers between lines.
#[derive(Debug, Default)]
pub struct Splitter {
    ranges: Vec<(usize, usize, Option<usize>)>,
    owned: Vec<String>,
}

impl Splitter {
    /// Splits `line` (without its line ending).
    pub fn split(&mut self, line: &str, d: Delimiter) -> Result<(), UnclosedQuote> {
        self.ranges.clear();
        let mut n_owned = 0;
        let b = line.as_bytes();
        let sep = match d {
            Delimiter::Comma => b',',
            Delimiter::Tab => b'\t',
            Delimiter::Semicolon => b';',
            Delimiter::Whitespace => b' ',
        };
        let is_sep = |c: u8| {
            if d == Delimiter::Whitespace {
                c == b' ' || c == b'\t'
            } else {
                c == sep
            }
        };
        let mut i = 0;
        if d == Delimiter::Whitespace {
            while i < b.len() && is_sep(b[i]) {
                i += 1;
            }
        }
        loop {
            // Skip spaces before a field (not tabs when tab separates).
            let mut s = i;
            while s < b.len() && b[s] == b' ' && d != Delimiter::Whitespace {
                s += 1;
            }
            if s < b.len() && b[s] == b'"' {
                // Quoted field.
                let mut j = s + 1;
                let mut escaped = false;
                loop {
                    if j >= b.len() {
                        return Err(UnclosedQuote);
                    }
                    if b[j] == b'"' {
                        if j + 1 < b.len() && b[j + 1] == b'"' {
                            escaped = true;
                            j += 2;
                            continue;
                        }
                        break;
                    }
                    j += 1;
                }
                let owned = if escaped {
                    if self.owned.len() <= n_owned {
                        self.owned.push(String::new());
                    }
                    let o = &mut self.owned[n_owned];
                    o.clear();
                    o.push_str(&line[s + 1..j].replace("\"\"", "\""));
                    n_owned += 1;
                    Some(n_owned - 1)
                } else {
                    None
                };
                self.ranges.push((s + 1, j, owned));
                i = j + 1;
                // Anything between the closing quote and the separator is dropped.
                while i < b.len() && !is_sep(b[i]) {
                    i += 1;
                }
            } else {
                let mut j = s;
                while j < b.len() && !is_sep(b[j]) {
                    j += 1;
                }
                self.ranges.push((s, j, None));
                i = j;
            }
            if i >= b.len() {
                break;
            }
            // At a separator.
            i += 1;
            if d == Delimiter::Whitespace {
                while i < b.len() && is_sep(b[i]) {
                    i += 1;
                }
                if i >= b.len() {
                    break;
                }
            }
        }
        Ok(())
    }

    pub fn len(&self) -> usize {
        self.ranges.len()
    }

    pub fn is_empty(&self) -> bool {
        self.ranges.is_empty()
    }

    /// Field `k` of the last split line, trimmed.
    pub fn field<'a>(&'a self, line: &'a str, k: usize) -> &'a str {
        let (s, e, o) = self.ranges[k];
        match o {
            Some(i) => self.owned[i].trim(),
            None => line[s..e].trim(),
        }
    }
}

/// Decodes one raw line (UTF-8, else Windows-1252) without its line ending.
pub fn decode_line(raw: &[u8]) -> Cow<'_, str> {
    let mut end = raw.len();
    while end > 0 && (raw[end - 1] == b'\n' || raw[end - 1] == b'\r') {
        end -= 1;
    }
    let raw = &raw[..end];
    match std::str::from_utf8(raw) {
        Ok(s) => Cow::Borrowed(s),
        Err(_) => Cow::Owned(decode_lossless_enough(raw)),
    }
}

/// True for a comment (`#` or `/` first) or blank line.
pub fn is_skipped(line: &str) -> bool {
    let t = line.trim_start();
    t.is_empty() || t.starts_with('#') || t.starts_with('/')
}

/// Parses a number, accepting a decimal comma when commas do not separate
/// fields ("1,5" → 1.5). Returns `None` for text.
/// Infinite values ("inf", "1e999") are not numbers here.
pub fn parse_number(t: &str, d: Delimiter) -> Option<f64> {
    if let Ok(v) = t.parse::<f64>() {
        return v.is_finite().then_some(v);
    }
    if d != Delimiter::Comma && t.bytes().filter(|&c| c == b',').count() == 1 && !t.contains('.') {
        return t
            .replace(',', ".")
            .parse::<f64>()
            .ok()
            .filter(|v| v.is_finite());
    }
    None
}

fn looks_numeric(t: &str, d: Delimiter, dummy: Option<f64>) -> bool {
    is_dummy_token(t)
        || parse_number(t, d).is_some()
        || t.parse::<f64>().is_ok()
        || dummy.is_some_and(|v| t.parse::<f64>().ok() == Some(v))
}

/// Looks at the start of `bytes` (the whole file or its first part).
pub fn sniff(bytes: &[u8], file: &Path, opts: &TextOptions) -> Result<Sniffed, TableError> {
    let bytes = strip_bom(bytes);
    if let Some(offset) = bytes.iter().take(8192).position(|&b| b == 0) {
        let before = &bytes[..offset];
        let line_start = before
            .iter()
            .rposition(|&b| b == b'\n')
            .map_or(0, |k| k + 1);
        return Err(TableError::Binary {
            file: file.to_path_buf(),
            line: before.iter().filter(|&&b| b == b'\n').count() as u64 + 1,
            column: offset - line_start + 1,
            byte: 0,
        });
    }
    let lines: Vec<Cow<str>> = bytes
        .split(|&b| b == b'\n')
        .map(decode_line)
        .filter(|l| !is_skipped(l))
        .take(SAMPLE_LINES + 1)
        .collect();
    if lines.is_empty() {
        return Err(TableError::Empty {
            file: file.to_path_buf(),
        });
    }
    let mut sp = Splitter::default();
    let counts = |d: Delimiter, sp: &mut Splitter| -> Vec<usize> {
        lines
            .iter()
            .map(|l| if sp.split(l, d).is_ok() { sp.len() } else { 0 })
            .collect()
    };
    let delimiter = match opts.delimiter {
        Some(d) => d,
        None => {
            // Prefer a delimiter that splits every line into the same number
            // (> 1) of fields; then the one with the most lines agreeing.
            let mut best: Option<(Delimiter, bool, usize, usize)> = None;
            for d in [
                Delimiter::Comma,
                Delimiter::Tab,
                Delimiter::Semicolon,
                Delimiter::Whitespace,
            ] {
                let c = counts(d, &mut sp);
                let first = c[0];
                let agree = c.iter().filter(|&&n| n == c[c.len().min(2) - 1]).count();
                let consistent = c.iter().all(|&n| n == first) && first > 1;
                let n = c[c.len().min(2) - 1];
                if n <= 1 {
                    continue;
                }
                let better = match best {
                    None => true,
                    Some((_, bc, bagree, _)) => {
                        (consistent && !bc) || (consistent == bc && agree > bagree)
                    }
                };
                if better {
                    best = Some((d, consistent, agree, n));
                }
            }
            best.map(|b| b.0).unwrap_or(Delimiter::Comma)
        }
    };
    let rows: Vec<Vec<String>> = lines
        .iter()
        .enumerate()
        .map(|(i, l)| {
            sp.split(l, delimiter)
                .map_err(|_| TableError::UnclosedQuote {
                    file: file.to_path_buf(),
                    line: i as u64 + 1,
                })?;
            Ok((0..sp.len()).map(|k| sp.field(l, k).to_string()).collect())
        })
        .collect::<Result<_, TableError>>()?;
    let numeric_count = |r: &Vec<String>| {
        r.iter()
            .filter(|t| !t.is_empty() && parse_number(t, delimiter).is_some())
            .count()
    };
    let has_header = match opts.has_header {
        Some(h) => h,
        None => {
            let text_first = rows[0].len() - numeric_count(&rows[0]);
            match rows.get(1) {
                Some(r1) => text_first > r1.len() - numeric_count(r1),
                None => text_first > 0,
            }
        }
    };
    let (names, data) = if has_header {
        (rows[0].clone(), &rows[1..])
    } else {
        (
            (1..=rows[0].len()).map(|i| format!("column {i}")).collect(),
            &rows[..],
        )
    };
    for (i, n) in names.iter().enumerate() {
        if let Some(j) = names[..i].iter().position(|m| m.eq_ignore_ascii_case(n)) {
            return Err(TableError::DuplicateColumn {
                file: file.to_path_buf(),
                name: n.clone(),
                first: j + 1,
                second: i + 1,
            });
        }
    }
    // A column is numeric when at least 80 % of its non-dummy sample values
    // are numbers; the reader then reports the others with their line.
    let kinds = (0..names.len())
        .map(|c| {
            let (mut num, mut text) = (0usize, 0usize);
            for t in data.iter().filter_map(|r| r.get(c)) {
                if is_dummy_token(t) {
                    continue;
                }
                if looks_numeric(t, delimiter, opts.dummy_value) {
                    num += 1;
                } else {
                    text += 1;
                }
            }
            if text == 0 || (num >= 4 * text && num > 0) {
                ColumnKind::Number
            } else {
                ColumnKind::Text
            }
        })
        .collect();
    Ok(Sniffed {
        delimiter,
        has_header,
        names,
        kinds,
        sample: data.iter().take(SAMPLE_LINES).cloned().collect(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn s(text: &str) -> Sniffed {
        sniff(text.as_bytes(), Path::new("t.txt"), &TextOptions::default()).unwrap()
    }

    #[test]
    fn delimiters_are_detected() {
        assert_eq!(s("x,y,z\n1,2,3\n").delimiter, Delimiter::Comma);
        assert_eq!(s("x\ty\tz\n1\t2\t3\n").delimiter, Delimiter::Tab);
        assert_eq!(s("x;y;z\n1,5;2,5;3\n").delimiter, Delimiter::Semicolon);
        assert_eq!(
            s("  x    y   z\n  1  2   3\n").delimiter,
            Delimiter::Whitespace
        );
    }

    #[test]
    fn header_and_kinds_are_detected() {
        let a = s("# exported 2026\nline,x,y,grav\nL100,500,600,978000.1\nL100,525,600,*\n");
        assert!(a.has_header);
        assert_eq!(a.names, ["line", "x", "y", "grav"]);
        assert_eq!(
            a.kinds,
            [
                ColumnKind::Text,
                ColumnKind::Number,
                ColumnKind::Number,
                ColumnKind::Number
            ]
        );
        let b = s("L100,500,600\nL100,525,600\n");
        assert!(
            !b.has_header,
            "a text line name alone does not make a header"
        );
        assert_eq!(b.names[0], "column 1");
    }

    #[test]
    fn quotes_and_decimal_commas() {
        let mut sp = Splitter::default();
        let line = r#""a, b",2,"say ""hi""",  4 "#;
        sp.split(line, Delimiter::Comma).unwrap();
        assert_eq!(sp.len(), 4);
        assert_eq!(sp.field(line, 0), "a, b");
        assert_eq!(sp.field(line, 2), "say \"hi\"");
        assert_eq!(sp.field(line, 3), "4");
        assert!(sp.split("\"open,1", Delimiter::Comma).is_err());
        assert_eq!(parse_number("1,5", Delimiter::Semicolon), Some(1.5));
        assert_eq!(parse_number("1,5", Delimiter::Comma), None);
    }

    #[test]
    fn binary_and_duplicates_are_refused() {
        assert!(matches!(
            sniff(b"x,y\0\x01", Path::new("b"), &TextOptions::default()),
            Err(TableError::Binary { .. })
        ));
        assert!(matches!(
            sniff(b"x,y,X\n1,2,3\n", Path::new("b"), &TextOptions::default()),
            Err(TableError::DuplicateColumn { .. })
        ));
        assert!(matches!(
            sniff(
                b"# only a comment\n\n",
                Path::new("b"),
                &TextOptions::default()
            ),
            Err(TableError::Empty { .. })
        ));
    }
}
