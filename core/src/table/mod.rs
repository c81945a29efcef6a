//! Delimited text tables: detection of delimiter and header, and a streaming
//! reader into typed columns.
//!
//! * [`sniff`]: looks at the first lines and proposes a delimiter (comma, tab,
//!   semicolon or runs of white space), whether the first line is a header,
//!   and the kind (number or text) of each column.
//! * [`read`]: streams the whole file into columns, with the file line of every
//!   row kept for messages. Dummy values (empty fields, `NaN`, `*`, and a
//!   user-set sentinel) become NaN in numeric columns and are counted; they
//!   are never turned into zeros.
//!
//! Lines starting with `#` or `/` are comments; blank lines are skipped;
//! fields may be quoted with `"` (a doubled `""` inside is a quote); LF and
//! CRLF endings, a UTF-8 byte-order mark and Windows-1252 text are accepted.

pub mod file;
pub mod gdf;
pub mod passthrough;
pub mod read;
pub mod sniff;

use serde::{Deserialize, Serialize};
use std::path::PathBuf;
use thiserror::Error;

/// Field separator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Delimiter {
    Comma,
    Tab,
    Semicolon,
    /// One or more spaces or tabs.
    Whitespace,
}

impl Delimiter {
    pub fn name(&self) -> &'static str {
        match self {
            Delimiter::Comma => "comma",
            Delimiter::Tab => "tab",
            Delimiter::Semicolon => "semicolon",
            Delimiter::Whitespace => "whitespace",
        }
    }

    /// Parses a user's word for a delimiter.
    pub fn parse(s: &str) -> Option<Delimiter> {
        match s.trim().to_ascii_lowercase().as_str() {
            "," | "comma" | "csv" => Some(Delimiter::Comma),
            "\\t" | "tab" | "tsv" => Some(Delimiter::Tab),
            ";" | "semicolon" => Some(Delimiter::Semicolon),
            " " | "space" | "whitespace" | "ws" => Some(Delimiter::Whitespace),
            _ => None,
        }
    }
}

/// Whether a column holds numbers or text.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ColumnKind {
    Number,
    Text,
}

/// Reading options; `None` means "detect".
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct TextOptions {
    pub delimiter: Option<Delimiter>,
    pub has_header: Option<bool>,
    /// A numeric dummy value (e.g. −99999) treated like an empty field.
    pub dummy_value: Option<f64>,
}

/// A problem reading a table.
#[derive(Debug, Error)]
pub enum TableError {
    #[error("cannot read {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: the file is empty (no data lines after comments and blank lines)")]
    Empty { file: PathBuf },
    #[error("{file}: the file has a header row but no data rows")]
    HeaderOnly { file: PathBuf },
    #[error("{file}: line {line}: expected {expected} fields (as in {reference}), found {found}; check the delimiter ({delimiter}) and quoting")]
    Ragged {
        file: PathBuf,
        line: u64,
        expected: usize,
        found: usize,
        reference: String,
        delimiter: &'static str,
    },
    #[error("{file}: line {line}, column '{column}': '{text}' is not a number")]
    NotNumber {
        file: PathBuf,
        line: u64,
        column: String,
        text: String,
    },
    #[error("{file}: line {line}: a quoted field is not closed before the end of the line")]
    UnclosedQuote { file: PathBuf, line: u64 },
    #[error("{file}: line 1: column name '{name}' appears twice (columns {first} and {second}); rename one")]
    DuplicateColumn {
        file: PathBuf,
        name: String,
        first: usize,
        second: usize,
    },
    #[error(
        "{file}: line {line}: this looks like a binary file, not delimited text (byte {column} of the line is {byte:#04x})"
    )]
    Binary {
        file: PathBuf,
        line: u64,
        /// 1-based byte position in the line.
        column: usize,
        byte: u8,
    },
    #[error("{file}: {source}")]
    Memory {
        file: PathBuf,
        source: crate::memory::MemoryError,
    },
    #[error("{file}: line {line}: {message}")]
    Definition {
        file: PathBuf,
        line: u64,
        message: String,
    },
    #[error("{file}: line {line}: {message} (definition: {definition})")]
    Record {
        file: PathBuf,
        line: u64,
        message: String,
        definition: PathBuf,
    },
    #[error("{file}: {given} column kinds given for {found} columns")]
    KindCount {
        file: PathBuf,
        given: usize,
        found: usize,
    },
}

/// One column of a table.
#[derive(Debug, Clone, PartialEq)]
pub enum ColumnData {
    /// Numbers; dummies are NaN.
    Number(Vec<f64>),
    /// Text, trimmed; dummies are empty strings.
    Text(Vec<String>),
}

impl ColumnData {
    pub fn len(&self) -> usize {
        match self {
            ColumnData::Number(v) => v.len(),
            ColumnData::Text(v) => v.len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    pub fn as_numbers(&self) -> Option<&[f64]> {
        match self {
            ColumnData::Number(v) => Some(v),
            ColumnData::Text(_) => None,
        }
    }

    /// Value `i` as text (numbers in shortest form, dummies empty).
    pub fn text_at(&self, i: usize) -> std::borrow::Cow<'_, str> {
        match self {
            ColumnData::Text(v) => std::borrow::Cow::Borrowed(v[i].as_str()),
            ColumnData::Number(v) if v[i].is_finite() => {
                std::borrow::Cow::Owned(format!("{}", v[i]))
            }
            ColumnData::Number(_) => std::borrow::Cow::Borrowed(""),
        }
    }

    pub fn as_text(&self) -> Option<&[String]> {
        match self {
            ColumnData::Text(v) => Some(v),
            ColumnData::Number(_) => None,
        }
    }
}

/// A table read from a file: column names, columns, the file line of every
/// row and the number of dummy values in each column.
#[derive(Debug, Clone, PartialEq)]
pub struct Table {
    pub file: PathBuf,
    pub delimiter: Delimiter,
    pub has_header: bool,
    pub names: Vec<String>,
    pub columns: Vec<ColumnData>,
    pub lines: Vec<u64>,
    pub dummies: Vec<usize>,
}

impl Table {
    pub fn n_rows(&self) -> usize {
        self.lines.len()
    }

    /// Index of the column named `name` (case-insensitive).
    pub fn column_index(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n.eq_ignore_ascii_case(name))
    }
}

/// The tokens that mean "no value" in any column (common practice in survey
/// exports): empty, `*`, `NaN`, `NA`, `N/A`, `null`, `-`, `--`.
pub fn is_dummy_token(t: &str) -> bool {
    t.is_empty()
        || t == "*"
        || t == "-"
        || t == "--"
        || t.eq_ignore_ascii_case("nan")
        || t.eq_ignore_ascii_case("na")
        || t.eq_ignore_ascii_case("n/a")
        || t.eq_ignore_ascii_case("null")
}
