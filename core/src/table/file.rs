//! One entry for every reader of line data: a file is either delimited text
//! ([`super::sniff`], [`super::read`]) or an ASEG-GDF2 `.dat` with its
//! `.dfn` beside it ([`super::gdf`]). The importer, the pass-through reader
//! and `inspect` call these and never the two readers directly.

use super::gdf::{definition_beside, read_definition, read_gdf, sniff_gdf, Definition};
use super::read::read_table;
use super::sniff::{sniff, Sniffed};
use super::{ColumnKind, Table, TableError, TextOptions};
use std::path::Path;

/// The definition of `path` when it is an ASEG-GDF2 `.dat` with a `.dfn`
/// beside it.
pub fn gdf_definition(path: &Path) -> Result<Option<Definition>, TableError> {
    match definition_beside(path) {
        Some(dfn) => read_definition(&dfn).map(Some),
        None => Ok(None),
    }
}

/// The layout of a file: delimiter, header, column names and kinds, and a
/// sample of rows.
pub fn sniff_file(path: &Path, opts: &TextOptions) -> Result<Sniffed, TableError> {
    if let Some(def) = gdf_definition(path)? {
        return sniff_gdf(path, &def);
    }
    let head = super::read::read_head(path)?;
    sniff(&head, path, opts)
}

/// Reads a whole file into typed columns (`kinds` overrides the detected
/// kinds, one per column).
pub fn read_table_file(
    path: &Path,
    opts: &TextOptions,
    kinds: Option<&[ColumnKind]>,
) -> Result<Table, TableError> {
    if let Some(def) = gdf_definition(path)? {
        return read_gdf(path, &def, opts, kinds);
    }
    read_table(path, opts, kinds)
}

/// The unit each column's definition states (ASEG-GDF2 `UNIT=`); empty for
/// delimited text, whose units are read from the header names.
pub fn stated_units(path: &Path) -> Result<Vec<Option<String>>, TableError> {
    Ok(match gdf_definition(path)? {
        Some(def) => def.column_fields().iter().map(|f| f.unit.clone()).collect(),
        None => Vec::new(),
    })
}
