//! Import of survey line data: a delimited file and an [`ImportSpec`] (the
//! column mapping and options, saved in the project) → a [`Survey`] with every
//! value in the program's units and coordinates in a projected reference.

use super::columns::{guess_column, ColumnSpec, Role, Unit};
use super::lines::{lines_from_column, split_lines, SplitRule, SurveyLine};
use crate::geodesy::crs::{Crs, CrsError};
use crate::table::file::{read_table_file, sniff_file, stated_units};
use crate::table::{ColumnData, ColumnKind, TableError, TextOptions};
use crate::time::{parse_date, parse_datetime, parse_time_of_day, DateOrder, TimeFormat};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};
use thiserror::Error;

/// Everything needed to import one file, as plain data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ImportSpec {
    pub text: TextOptions,
    /// One entry per column of the file, in file order.
    pub columns: Vec<ColumnSpec>,
    /// The projected reference (EPSG code) of easting/northing columns, and the
    /// one longitude/latitude are projected into. A geographic code here means
    /// longitude/latitude are in that datum and a UTM zone is chosen for them.
    pub epsg: Option<u32>,
    pub date_order: DateOrder,
    pub time_format: TimeFormat,
    /// How to split lines when no column has the line role.
    pub split: SplitRule,
}

/// What the times of a survey count from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum TimeOrigin {
    /// Seconds since 1970-01-01 00:00 UTC: a date and a time of every reading.
    #[default]
    Epoch,
    /// Seconds since midnight of a day the file does not give.
    Midnight,
    /// Seconds since an origin the file does not give (elapsed time).
    Unknown,
}

/// A numeric channel in program units.
#[derive(Debug, Clone, PartialEq)]
pub struct Channel {
    pub name: String,
    pub role: Role,
    /// Program unit of `values` ("mGal", "nT", "m" or "").
    pub unit: &'static str,
    pub values: Vec<f64>,
}

/// Imported line data. Raw readings are kept as imported (converted to
/// program units); QC flags live beside them, never in them.
#[derive(Debug, Clone, PartialEq)]
pub struct Survey {
    pub source: PathBuf,
    /// The projected reference of `x`, `y`; `None` when the file had
    /// easting/northing and no reference was given.
    pub crs: Option<Crs>,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
    /// Geographic coordinates (degrees) when a reference is known.
    pub lat: Option<Vec<f64>>,
    pub lon: Option<Vec<f64>>,
    pub elevation_m: Option<Vec<f64>>,
    /// Seconds since 1970-01-01 UTC, or seconds of day when the file has
    /// times but no dates, or elapsed seconds: see `time_origin`.
    pub time_s: Option<Vec<f64>>,
    pub time_origin: TimeOrigin,
    /// Station or fiducial identifiers (numbers or text).
    pub station: Option<ColumnData>,
    pub lines: Vec<SurveyLine>,
    pub channels: Vec<Channel>,
    pub text_columns: Vec<(String, Vec<String>)>,
    /// File line of each row.
    pub file_lines: Vec<u64>,
    /// Dummy count per original column name.
    pub dummies: Vec<(String, usize)>,
    pub warnings: Vec<String>,
}

impl Survey {
    pub fn n_rows(&self) -> usize {
        self.x.len()
    }

    pub fn channel(&self, role: Role) -> Option<&Channel> {
        self.channels.iter().find(|c| c.role == role)
    }
}

/// A problem importing a file.
#[derive(Debug, Error)]
pub enum ImportError {
    #[error(transparent)]
    Table(#[from] TableError),
    #[error("{file}: the mapping lists {given} columns but the file has {found}")]
    ColumnCount {
        file: PathBuf,
        given: usize,
        found: usize,
    },
    #[error("{file}: columns '{first}' and '{second}' both have the role {role}; give one of them another role")]
    DuplicateRole {
        file: PathBuf,
        role: &'static str,
        first: String,
        second: String,
    },
    #[error("{file}: no coordinates: give one column the role easting and one northing, or longitude and latitude")]
    NoCoordinates { file: PathBuf },
    #[error("{file}: column '{column}' has role {role} but unit {unit}, which does not fit; use one of: {allowed}")]
    BadUnit {
        file: PathBuf,
        column: String,
        role: &'static str,
        unit: &'static str,
        allowed: String,
    },
    #[error("{file}: {message}")]
    Crs { file: PathBuf, message: String },
    #[error("{file}: {source}")]
    Memory {
        file: PathBuf,
        source: crate::memory::MemoryError,
    },
    #[error("{file}: line {line}, column '{column}': {message}")]
    Value {
        file: PathBuf,
        line: u64,
        column: String,
        message: String,
    },
}

impl ImportSpec {
    /// Detects the file layout and guesses every column's role and unit.
    pub fn guess_for_file(
        path: &Path,
        text: &TextOptions,
        epsg: Option<u32>,
    ) -> Result<ImportSpec, ImportError> {
        let sn = sniff_file(path, text)?;
        let stated = stated_units(path)?;
        let columns = sn
            .names
            .iter()
            .zip(&sn.kinds)
            .enumerate()
            .map(|(i, (n, k))| {
                let c = guess_column(n, *k == ColumnKind::Number);
                match stated.get(i).and_then(|u| u.as_deref()) {
                    Some(u) => with_stated_unit(c, u),
                    None => c,
                }
            })
            .collect::<Vec<_>>();
        let columns = first_of_each_role(columns);
        let text = TextOptions {
            delimiter: Some(sn.delimiter),
            has_header: Some(sn.has_header),
            dummy_value: text.dummy_value,
        };
        // A time column whose header names a unit holds elapsed time.
        let time_format = columns
            .iter()
            .find(|c| c.role == Role::Time)
            .and_then(|c| super::columns::time_format_hint(&c.name))
            .unwrap_or_default();
        Ok(ImportSpec {
            text,
            columns,
            epsg,
            date_order: DateOrder::default(),
            time_format,
            split: SplitRule::default(),
        })
    }

    /// The index of the column named `header` (exactly, else ignoring case).
    fn column_named(&self, header: &str) -> Option<usize> {
        self.columns
            .iter()
            .position(|c| c.name == header)
            .or_else(|| {
                self.columns
                    .iter()
                    .position(|c| c.name.eq_ignore_ascii_case(header.trim()))
            })
    }

    /// The columns with their roles, for messages:
    /// `'station_id' (station), 'reading' (gravity), ...`.
    pub fn describe_columns(&self) -> String {
        self.columns
            .iter()
            .map(|c| format!("'{}' ({})", c.name, c.role.key()))
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// Gives `role` to the column named `header`; a column that had the role
    /// before keeps its values but loses the role (it is carried through).
    pub fn set_role(&mut self, role: Role, header: &str) -> Result<(), String> {
        let i = self.column_named(header).ok_or_else(|| {
            format!(
                "there is no column '{header}' to give the role {}; the columns are: {}",
                role.key(),
                self.describe_columns()
            )
        })?;
        if !matches!(role, Role::PassThrough | Role::Ignore) {
            for c in self.columns.iter_mut() {
                if c.role == role {
                    c.role = Role::PassThrough;
                    c.unit = Unit::None;
                }
            }
        }
        let c = &mut self.columns[i];
        c.role = role;
        let allowed = role.units();
        c.unit = match super::columns::unit_hint(&c.name) {
            Some(u) if allowed.contains(&u) => u,
            _ => allowed[0],
        };
        if role == Role::Time {
            if let Some(f) = super::columns::time_format_hint(&c.name) {
                self.time_format = f;
            }
        }
        Ok(())
    }

    /// Sets the unit of the column named `header`: a length, gravity,
    /// magnetic or angle unit ([`Unit::parse`]), or for the time column a
    /// time format ([`TimeFormat::parse`]).
    pub fn set_unit(&mut self, header: &str, unit: &str) -> Result<(), String> {
        let i = self.column_named(header).ok_or_else(|| {
            format!(
                "there is no column '{header}' to give the unit {unit}; the columns are: {}",
                self.describe_columns()
            )
        })?;
        let c = &mut self.columns[i];
        if c.role == Role::Time {
            self.time_format = TimeFormat::parse(unit).ok_or_else(|| {
                format!("'{unit}' is not a time unit for column '{header}'; use s, min or h (elapsed time), clock, hours_of_day or seconds_of_day")
            })?;
            return Ok(());
        }
        let u = Unit::parse(unit).ok_or_else(|| {
            format!("'{unit}' is not a unit; use one of m, ft, usft, mGal, gu, nT, deg")
        })?;
        if !c.role.units().contains(&u) {
            return Err(format!(
                "column '{header}' has the role {} and cannot be in {}; use one of: {}",
                c.role.key(),
                u.label(),
                c.role
                    .units()
                    .iter()
                    .map(|u| u.label())
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
        c.unit = u;
        Ok(())
    }
}

/// A column whose definition states its unit (ASEG-GDF2 `UNIT=nT`): the
/// unit is taken where it fits the guessed role, and a carried column in a
/// gravity or magnetic unit becomes that reading.
fn with_stated_unit(mut c: ColumnSpec, stated: &str) -> ColumnSpec {
    let Some(u) = Unit::parse(&normalise_unit_word(stated)) else {
        return c;
    };
    if c.role == Role::PassThrough {
        match u {
            Unit::Mgal | Unit::MicrometrePerSecond2 => c.role = Role::Gravity,
            Unit::Nanotesla => c.role = Role::Magnetic,
            _ => {}
        }
    }
    if c.role.units().contains(&u) {
        c.unit = u;
    }
    c
}

/// Unit words as definition files spell them, in the words [`Unit::parse`]
/// knows (`METRES` → `m`, `degrees` → `deg`, `um/s^2` → `gu`).
fn normalise_unit_word(w: &str) -> String {
    let l = w.trim().to_ascii_lowercase();
    match l.as_str() {
        "metres" | "meters" | "metre" | "meter" | "mtrs" => "m".into(),
        "feet" | "foot" => "ft".into(),
        "degrees" | "degree" | "degs" | "dd" => "deg".into(),
        "nanotesla" | "gamma" | "gammas" => "nt".into(),
        "um/s^2" | "um/s2" | "µm/s²" | "µm/s^2" | "gravity units" => "gu".into(),
        "milligal" | "milligals" | "mgals" => "mgal".into(),
        _ => l,
    }
}

/// Where several columns were guessed to have the same role (a reduced
/// table holds the meter reading and the observed gravity), the first keeps
/// it and the others are carried through; `--column` picks another.
fn first_of_each_role(mut columns: Vec<ColumnSpec>) -> Vec<ColumnSpec> {
    for i in 1..columns.len() {
        let r = columns[i].role;
        if !matches!(r, Role::PassThrough | Role::Ignore)
            && columns[..i].iter().any(|c| c.role == r)
        {
            columns[i].role = Role::PassThrough;
            columns[i].unit = Unit::None;
        }
    }
    columns
}

/// Eastings of a UTM or MGA zone lie within a few hundred kilometres of the
/// 500 km false easting (common practice: 166–834 km on the equator); a
/// survey whose "eastings" are far outside 50–950 km while its "northings"
/// are inside has the two columns swapped.
fn check_not_swapped(
    x: &[f64],
    y: &[f64],
    columns: &[crate::survey::columns::ColumnSpec],
    ix: usize,
    iy: usize,
) -> Result<(), String> {
    let median = |v: &[f64]| {
        let mut f: Vec<f64> = v.iter().copied().filter(|a| a.is_finite()).collect();
        if f.is_empty() {
            return None;
        }
        let m = f.len() / 2;
        Some(*f.select_nth_unstable_by(m, f64::total_cmp).1)
    };
    let inside = |v: f64| (50_000.0..=950_000.0).contains(&v);
    match (median(x), median(y)) {
        (Some(mx), Some(my)) if !inside(mx) && inside(my) => Err(format!(
            "column '{}' (easting) has median {mx:.0} m, outside the 50–950 km of a UTM zone, while column '{}' (northing) has median {my:.0} m: easting and northing look swapped; give the two columns each other's roles",
            columns[ix].name, columns[iy].name
        )),
        _ => Ok(()),
    }
}

/// Bytes an import of `path` holds at its peak, from the file size and the
/// line length in its first part (`head`): the table's columns
/// ([`crate::table::read::bytes_per_row`]) and the survey's coordinates,
/// latitudes and longitudes (32 bytes a row).
pub fn import_memory_needed(path: &Path, head: &[u8], kinds: &[ColumnKind]) -> u64 {
    let size = std::fs::metadata(path).map(|m| m.len()).unwrap_or(0);
    let lines = head.iter().filter(|&&b| b == b'\n').count().max(1) as u64;
    let rows = if (head.len() as u64) >= size {
        lines
    } else {
        size * lines / head.len().max(1) as u64 + 16
    };
    rows * (crate::table::read::bytes_per_row(kinds) + 32)
}

pub use crate::table::read::read_head;

/// The UTM (or MGA) reference on the same datum as geographic code `geo` for
/// a survey centred at `lon`, `lat`.
pub fn utm_for(geo: u32, lat: f64, lon: f64) -> Option<u32> {
    let zone = (((lon + 180.0) / 6.0).floor() as i64).rem_euclid(60) as u32 + 1;
    let south = lat < 0.0;
    match geo {
        4326 => Some(if south { 32700 } else { 32600 } + zone),
        4269 if !south && zone <= 23 => Some(26900 + zone),
        4283 if south && (48..=58).contains(&zone) => Some(28300 + zone),
        7844 if south && (46..=59).contains(&zone) => Some(7800 + zone),
        4258 if !south && (28..=38).contains(&zone) => Some(25800 + zone),
        _ => None,
    }
}

/// Imports a file by `spec`.
pub fn import_survey(path: &Path, spec: &ImportSpec) -> Result<Survey, ImportError> {
    let file = path.to_path_buf();
    let head = read_head(path)?;
    let sn = sniff_file(path, &spec.text)?;
    if sn.names.len() != spec.columns.len() {
        return Err(ImportError::ColumnCount {
            file,
            given: spec.columns.len(),
            found: sn.names.len(),
        });
    }
    // Check roles and units before reading the whole file.
    for (i, c) in spec.columns.iter().enumerate() {
        if !c.role.units().contains(&c.unit) {
            let allowed = c
                .role
                .units()
                .iter()
                .map(|u| u.label())
                .collect::<Vec<_>>()
                .join(", ");
            return Err(ImportError::BadUnit {
                file,
                column: c.name.clone(),
                role: c.role.label(),
                unit: c.unit.label(),
                allowed,
            });
        }
        if matches!(c.role, Role::PassThrough | Role::Ignore) {
            continue;
        }
        if let Some(j) = spec.columns[..i].iter().position(|d| d.role == c.role) {
            return Err(ImportError::DuplicateRole {
                file,
                role: c.role.label(),
                first: spec.columns[j].name.clone(),
                second: c.name.clone(),
            });
        }
    }
    let find = |r: Role| spec.columns.iter().position(|c| c.role == r);
    let (ix, iy, ilon, ilat) = (
        find(Role::Easting),
        find(Role::Northing),
        find(Role::Longitude),
        find(Role::Latitude),
    );
    let projected_given = ix.is_some() && iy.is_some();
    let geographic_given = ilon.is_some() && ilat.is_some();
    if !projected_given && !geographic_given {
        return Err(ImportError::NoCoordinates { file });
    }
    let given_crs = match spec.epsg {
        Some(code) => Some(Crs::from_epsg(code).map_err(|e| ImportError::Crs {
            file: file.clone(),
            message: e.to_string(),
        })?),
        None => None,
    };
    if projected_given && !geographic_given && given_crs.is_some_and(|c| c.is_geographic()) {
        return Err(ImportError::Crs {
            file,
            message: format!(
                "EPSG:{} is geographic, but the coordinates are mapped as easting/northing; map them as longitude/latitude, or give the projected EPSG code",
                spec.epsg.unwrap_or(0)
            ),
        });
    }
    let mut kinds: Vec<ColumnKind> = spec
        .columns
        .iter()
        .zip(&sn.kinds)
        .map(|(c, k)| match c.role {
            r if r.is_numeric() => ColumnKind::Number,
            Role::PassThrough | Role::Line | Role::Station | Role::Time => *k,
            _ => ColumnKind::Text,
        })
        .collect();
    let need = import_memory_needed(path, &head, &kinds);
    crate::memory::check_now(
        "importing this file",
        need,
        "split the file by lines or flights, or give unneeded columns the role 'ignore'",
    )
    .map_err(|source| ImportError::Memory {
        file: file.clone(),
        source,
    })?;
    // Station ids, line names and carried columns the first lines showed as
    // numbers may hold a label further down (a base "B1" among numbered
    // stations): such a column is read again as text.
    let table = loop {
        match read_table_file(path, &spec.text, Some(&kinds)) {
            Err(TableError::NotNumber { column, .. })
                if spec.columns.iter().zip(&kinds).any(|(c, k)| {
                    c.name == column
                        && *k == ColumnKind::Number
                        && matches!(
                            c.role,
                            Role::Station | Role::Line | Role::PassThrough | Role::Time
                        )
                }) =>
            {
                if let Some(i) = spec.columns.iter().position(|c| c.name == column) {
                    kinds[i] = ColumnKind::Text;
                }
            }
            r => break r?,
        }
    };
    let n = table.n_rows();
    let mut warnings = Vec::new();
    let dummies: Vec<(String, usize)> = table
        .names
        .iter()
        .cloned()
        .zip(table.dummies.iter().copied())
        .collect();
    let file_lines = table.lines;
    let mut cols: Vec<Option<ColumnData>> = table.columns.into_iter().map(Some).collect();
    let mut take_numbers = |i: usize| -> Vec<f64> {
        let c = &spec.columns[i];
        let mut v = match cols[i].take() {
            Some(ColumnData::Number(v)) => v,
            _ => vec![f64::NAN; n],
        };
        let f = c.unit.factor();
        if f != 1.0 {
            v.iter_mut().for_each(|x| *x *= f);
        }
        v
    };
    // Coordinates.
    let (mut x, mut y) = (Vec::new(), Vec::new());
    let (mut lat, mut lon) = (None, None);
    if let (Some(a), Some(b)) = (ilon, ilat) {
        let lo = take_numbers(a);
        let la = take_numbers(b);
        for (k, &v) in la.iter().enumerate() {
            if v.is_finite() && !(-90.0..=90.0).contains(&v) {
                return Err(ImportError::Value {
                    file,
                    line: file_lines[k],
                    column: spec.columns[b].name.clone(),
                    message: format!(
                        "latitude {v} is outside −90 to 90 (are latitude and longitude swapped?)"
                    ),
                });
            }
        }
        for (k, &v) in lo.iter().enumerate() {
            if v.is_finite() && !(-360.0..=360.0).contains(&v) {
                return Err(ImportError::Value {
                    file,
                    line: file_lines[k],
                    column: spec.columns[a].name.clone(),
                    message: format!("longitude {v} is outside −360 to 360"),
                });
            }
        }
        lat = Some(la);
        lon = Some(lo);
    }
    let crs: Option<Crs> = match (given_crs, projected_given) {
        (Some(c), _) if !c.is_geographic() => Some(c),
        (None, true) => {
            warnings.push("no coordinate reference given: easting/northing are used as they are, and latitude (needed for normal gravity and the main field) is unknown".into());
            None
        }
        (g, _) => {
            // Longitude/latitude only: choose the UTM zone of the survey centre.
            let geo = g.map(|c| c.epsg()).unwrap_or(4326);
            let (la, lo) = (
                lat.as_ref().map(|v| mean_finite(v)).unwrap_or(0.0),
                lon.as_ref().map(|v| mean_finite(v)).unwrap_or(0.0),
            );
            let code = utm_for(geo, la, lo).ok_or_else(|| ImportError::Crs { file: file.clone(), message: format!("no UTM/MGA zone is known on the datum of EPSG:{geo} at latitude {la:.2}, longitude {lo:.2}; give a projected EPSG code") })?;
            let c = Crs::from_epsg(code).map_err(|e| ImportError::Crs {
                file: file.clone(),
                message: e.to_string(),
            })?;
            warnings.push(format!(
                "coordinates projected to {} (chosen from the survey centre)",
                c.name()
            ));
            Some(c)
        }
    };
    if projected_given {
        x = take_numbers(ix.unwrap_or(0));
        y = take_numbers(iy.unwrap_or(0));
        if let Some(Crs::Utm { .. }) = &crs {
            check_not_swapped(&x, &y, &spec.columns, ix.unwrap_or(0), iy.unwrap_or(0)).map_err(
                |message| ImportError::Crs {
                    file: file.clone(),
                    message,
                },
            )?;
        }
        if lat.is_none() {
            if let Some(c) = &crs {
                let (la, lo) =
                    convert_all(&x, &y, |a, b| c.unproject(a, b)).map_err(|(k, e)| {
                        crs_value(&file, file_lines[k], &spec.columns[ix.unwrap_or(0)].name, e)
                    })?;
                lat = Some(la);
                lon = Some(lo);
            }
        }
    } else if let (Some(c), Some(la), Some(lo)) = (&crs, &lat, &lon) {
        let (px, py) = convert_all(la, lo, |p, q| c.project(p, q)).map_err(|(k, e)| {
            crs_value(
                &file,
                file_lines[k],
                &spec.columns[ilat.unwrap_or(0)].name,
                e,
            )
        })?;
        x = px;
        y = py;
    }
    let missing_xy = x
        .iter()
        .zip(&y)
        .filter(|(a, b)| !a.is_finite() || !b.is_finite())
        .count();
    if missing_xy > 0 {
        warnings.push(format!(
            "{missing_xy} rows have no coordinates (dummy or empty); they are kept and flagged"
        ));
    }
    // Elevation, with a plausibility check for feet given as metres.
    let elevation_m = find(Role::Elevation).map(|i| {
        let v = take_numbers(i);
        let c = &spec.columns[i];
        let max = v
            .iter()
            .copied()
            .filter(|a| a.is_finite())
            .fold(f64::NEG_INFINITY, f64::max);
        if c.unit == Unit::Metre
            && super::columns::unit_hint(&c.name)
                .is_some_and(|u| matches!(u, Unit::Foot | Unit::UsSurveyFoot))
        {
            warnings.push(format!(
                "column '{}' is read as metres but its name says feet; check its unit",
                c.name
            ));
        }
        if max > 8_900.0 {
            warnings.push(format!(
                "column '{}' reaches {max:.0} m, higher than any point on Earth; are these feet?",
                c.name
            ));
        }
        v
    });
    // Time.
    let (time_s, time_origin) = read_times(spec, &mut cols, &file_lines, &file, &mut warnings)?;
    let station = find(Role::Station).and_then(|i| cols[i].take());
    let lines = match find(Role::Line).and_then(|i| cols[i].take()) {
        Some(c) => lines_from_column(&c),
        None => split_lines(&x, &y, &spec.split),
    };
    let mut channels = Vec::new();
    let mut text_columns = Vec::new();
    for (i, c) in spec.columns.iter().enumerate() {
        let keep = matches!(
            c.role,
            Role::Gravity
                | Role::Magnetic
                | Role::BaseGravity
                | Role::BaseMagnetic
                | Role::InstrumentHeight
                | Role::HeightAboveGround
                | Role::PassThrough
        );
        if !keep {
            continue;
        }
        match cols[i].take() {
            Some(ColumnData::Number(mut v)) => {
                let f = c.unit.factor();
                if f != 1.0 {
                    v.iter_mut().for_each(|a| *a *= f);
                }
                let unit = match c.role {
                    Role::Gravity | Role::BaseGravity => "mGal",
                    Role::Magnetic | Role::BaseMagnetic => "nT",
                    r if r.is_length() => "m",
                    _ => "",
                };
                channels.push(Channel {
                    name: c.name.clone(),
                    role: c.role,
                    unit,
                    values: v,
                });
            }
            Some(ColumnData::Text(v)) => text_columns.push((c.name.clone(), v)),
            None => {}
        }
    }
    Ok(Survey {
        source: file,
        crs,
        x,
        y,
        lat,
        lon,
        elevation_m,
        time_s,
        time_origin,
        station,
        lines,
        channels,
        text_columns,
        file_lines,
        dummies,
        warnings,
    })
}

/// Applies a coordinate conversion to every row in parallel, writing straight
/// into the two output columns (no per-row temporaries). Rows with a missing
/// input stay NaN; the first failing row is reported with its index.
fn convert_all(
    a: &[f64],
    b: &[f64],
    f: impl Fn(f64, f64) -> Result<(f64, f64), CrsError> + Sync,
) -> Result<(Vec<f64>, Vec<f64>), (usize, CrsError)> {
    let n = a.len();
    let (mut p, mut q) = (vec![f64::NAN; n], vec![f64::NAN; n]);
    let failed = std::sync::atomic::AtomicBool::new(false);
    p.par_iter_mut()
        .zip(q.par_iter_mut())
        .enumerate()
        .for_each(|(k, (pk, qk))| {
            if a[k].is_finite() && b[k].is_finite() {
                match f(a[k], b[k]) {
                    Ok((u, v)) => {
                        *pk = u;
                        *qk = v;
                    }
                    Err(_) => failed.store(true, std::sync::atomic::Ordering::Relaxed),
                }
            }
        });
    if failed.into_inner() {
        for k in 0..n {
            if a[k].is_finite() && b[k].is_finite() {
                f(a[k], b[k]).map_err(|e| (k, e))?;
            }
        }
    }
    Ok((p, q))
}

fn crs_value(file: &Path, line: u64, column: &str, e: CrsError) -> ImportError {
    ImportError::Value {
        file: file.to_path_buf(),
        line,
        column: column.to_string(),
        message: e.to_string(),
    }
}

fn mean_finite(v: &[f64]) -> f64 {
    let (s, n) = v
        .iter()
        .filter(|a| a.is_finite())
        .fold((0.0, 0usize), |(s, n), a| (s + a, n + 1));
    if n == 0 {
        0.0
    } else {
        s / n as f64
    }
}

fn read_times(
    spec: &ImportSpec,
    cols: &mut [Option<ColumnData>],
    lines: &[u64],
    file: &Path,
    warnings: &mut Vec<String>,
) -> Result<(Option<Vec<f64>>, TimeOrigin), ImportError> {
    let find = |r: Role| spec.columns.iter().position(|c| c.role == r);
    let text_of = |cols: &mut [Option<ColumnData>], i: usize| match cols[i].take() {
        Some(ColumnData::Text(v)) => v,
        _ => Vec::new(),
    };
    let bad = |k: usize, i: usize, message: String| ImportError::Value {
        file: file.to_path_buf(),
        line: lines[k],
        column: spec.columns[i].name.clone(),
        message,
    };
    if let Some(i) = find(Role::DateTime) {
        let v = text_of(cols, i);
        let mut out = Vec::with_capacity(v.len());
        for (k, t) in v.iter().enumerate() {
            out.push(if t.is_empty() || crate::table::is_dummy_token(t) {
                f64::NAN
            } else {
                parse_datetime(t, spec.date_order).map_err(|m| bad(k, i, m))?
            });
        }
        return Ok((Some(out), TimeOrigin::Epoch));
    }
    let Some(it) = find(Role::Time) else {
        return Ok((None, TimeOrigin::Epoch));
    };
    let dates = find(Role::Date).map(|i| (i, text_of(cols, i)));
    if let Some(unit_s) = spec.time_format.elapsed_unit_s() {
        // Elapsed time in seconds, minutes or hours.
        let out = match cols[it].take() {
            Some(ColumnData::Number(v)) => v.into_iter().map(|a| a * unit_s).collect(),
            Some(ColumnData::Text(v)) => {
                let mut out = Vec::with_capacity(v.len());
                for (k, t) in v.iter().enumerate() {
                    out.push(if t.is_empty() || crate::table::is_dummy_token(t) {
                        f64::NAN
                    } else {
                        t.trim().parse::<f64>().map_err(|_| {
                            bad(k, it, format!("'{t}' is not a number of elapsed time"))
                        })? * unit_s
                    });
                }
                out
            }
            None => Vec::new(),
        };
        return Ok((Some(out), TimeOrigin::Unknown));
    }
    if let Some(ColumnData::Number(v)) = &cols[it] {
        // Seconds of day or decimal hours, read as numbers.
        let hours = match spec.time_format {
            TimeFormat::DecimalHours => true,
            TimeFormat::SecondsOfDay => false,
            _ => v.iter().filter(|a| a.is_finite()).all(|&a| a < 24.0),
        };
        let mut out = cols[it]
            .take()
            .and_then(|c| {
                if let ColumnData::Number(v) = c {
                    Some(v)
                } else {
                    None
                }
            })
            .unwrap_or_default();
        for (k, t) in out.iter_mut().enumerate() {
            if !t.is_finite() {
                continue;
            }
            let sod = if hours { *t * 3600.0 } else { *t };
            if !(0.0..=86_401.0).contains(&sod) {
                return Err(bad(
                    k,
                    it,
                    format!("{} is not a time of day ({sod} s); set the time format", *t),
                ));
            }
            let day = match &dates {
                Some((i, d)) if crate::table::is_dummy_token(&d[k]) => f64::NAN,
                Some((i, d)) => {
                    parse_date(&d[k], spec.date_order).map_err(|m| bad(k, *i, m))? as f64
                }
                None => 0.0,
            };
            *t = day * 86_400.0 + sod;
        }
        if dates.is_none() {
            warnings.push("times have no dates: they are seconds of day, and readings on different days cannot be told apart".into());
        }
        let origin = if dates.is_some() {
            TimeOrigin::Epoch
        } else {
            TimeOrigin::Midnight
        };
        return Ok((Some(out), origin));
    }
    let times = text_of(cols, it);
    // Date-times written in a column named for times.
    if dates.is_none() && times.iter().any(|t| crate::time::looks_like_datetime(t)) {
        let mut out = Vec::with_capacity(times.len());
        for (k, t) in times.iter().enumerate() {
            out.push(if t.is_empty() || crate::table::is_dummy_token(t) {
                f64::NAN
            } else {
                parse_datetime(t, spec.date_order).map_err(|m| bad(k, it, m))?
            });
        }
        return Ok((Some(out), TimeOrigin::Epoch));
    }
    let all_below_24 = times
        .iter()
        .filter_map(|t| t.parse::<f64>().ok())
        .all(|v| v < 24.0);
    if dates.is_none() {
        warnings.push("times have no dates: they are seconds of day, and readings on different days cannot be told apart".into());
    }
    let mut out = Vec::with_capacity(times.len());
    for (k, t) in times.iter().enumerate() {
        if crate::table::is_dummy_token(t) {
            out.push(f64::NAN);
            continue;
        }
        let sod =
            parse_time_of_day(t, spec.time_format, all_below_24).map_err(|m| bad(k, it, m))?;
        let day = match &dates {
            Some((i, d)) => {
                let dt = &d[k];
                if crate::table::is_dummy_token(dt) {
                    out.push(f64::NAN);
                    continue;
                }
                parse_date(dt, spec.date_order).map_err(|m| bad(k, *i, m))? as f64
            }
            None => 0.0,
        };
        out.push(day * 86_400.0 + sod);
    }
    let origin = if dates.is_some() {
        TimeOrigin::Epoch
    } else {
        TimeOrigin::Midnight
    };
    Ok((Some(out), origin))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn write(name: &str, text: &str) -> PathBuf {
        let p = std::env::temp_dir().join(format!(
            "fieldstone-import-{name}-{}.csv",
            std::process::id()
        ));
        std::fs::write(&p, text).unwrap();
        p
    }

    #[test]
    fn a_field_file_with_elapsed_minutes_imports_with_every_role_guessed() {
        let p = write(
            "elapsed",
            "station_id,longitude,latitude,elevation,time_minutes,reading\n\
             B1,-80.5,43.1,310.2,0,2851.234\n\
             101,-80.49,43.1,312.0,12.5,2849.911\n\
             B1,-80.5,43.1,310.2,95,2851.301\n",
        );
        let spec = ImportSpec::guess_for_file(&p, &TextOptions::default(), None).unwrap();
        let roles: Vec<Role> = spec.columns.iter().map(|c| c.role).collect();
        assert_eq!(
            roles,
            [
                Role::Station,
                Role::Longitude,
                Role::Latitude,
                Role::Elevation,
                Role::Time,
                Role::Gravity
            ],
            "{}",
            spec.describe_columns()
        );
        assert_eq!(spec.time_format, TimeFormat::ElapsedMinutes);
        let s = import_survey(&p, &spec).unwrap();
        assert_eq!(s.time_origin, TimeOrigin::Unknown);
        assert_eq!(s.time_s.as_deref(), Some(&[0.0, 750.0, 5700.0][..]));
        assert_eq!(s.channel(Role::Gravity).unwrap().values[1], 2849.911);
        let _ = std::fs::remove_file(p);
    }

    #[test]
    fn a_lettered_base_among_numbered_stations_reads_as_text() {
        let mut text = String::from(
            "station,lon,lat,elevation,time_minutes,reading\nB1,-80.5,43.1,310,0,2851.2\n",
        );
        for k in 2..40 {
            text.push_str(&format!("{k},-80.4,43.1,311,{},2850.1\n", 10 * k));
        }
        let p = write("lettered", &text);
        let spec = ImportSpec::guess_for_file(&p, &TextOptions::default(), None).unwrap();
        let s = import_survey(&p, &spec).unwrap();
        let st = s.station.as_ref().unwrap();
        assert_eq!(st.text_at(0), "B1");
        assert_eq!(st.text_at(1), "2");
        let _ = std::fs::remove_file(p);
    }

    #[test]
    fn roles_and_units_are_overridden_by_header() {
        let p = write(
            "override",
            "E,N,H,t,obs,other\n500000,4770000,1000,2026-03-14T09:30:00Z,2851.2,1\n",
        );
        let mut spec =
            ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(32617)).unwrap();
        spec.set_role(Role::Gravity, "obs").unwrap();
        spec.set_role(Role::Elevation, "H").unwrap();
        spec.set_role(Role::Time, "t").unwrap();
        spec.set_unit("H", "ft").unwrap();
        let e = spec.set_role(Role::Gravity, "nope").unwrap_err();
        assert!(
            e.contains("no column 'nope'") && e.contains("'obs' (gravity)"),
            "{e}"
        );
        assert!(spec
            .set_unit("H", "nT")
            .unwrap_err()
            .contains("cannot be in nT"));
        assert!(spec.set_unit("H", "furlong").is_err());
        let s = import_survey(&p, &spec).unwrap();
        assert!((s.elevation_m.as_ref().unwrap()[0] - 304.8).abs() < 1e-9);
        // An ISO date-time in a column named for times.
        assert_eq!(s.time_origin, TimeOrigin::Epoch);
        let want =
            crate::time::parse_datetime("2026-03-14T09:30:00Z", DateOrder::YearMonthDay).unwrap();
        assert_eq!(s.time_s.as_ref().unwrap()[0], want);
        let _ = std::fs::remove_file(p);
    }

    #[test]
    fn a_ground_gravity_file_imports_with_units_converted() {
        let p = write(
            "grav",
            "Line,Station,Easting,Northing,ELEV_FT,Date,Time,Grav_gu\n\
             L10,1,500000,7000000,1000,14/03/2026,09:30:00,9781234.5\n\
             L10,2,500025,7000000,1010,14/03/2026,09:35:00,*\n\
             L20,1,500000,7000100,990,14/03/2026,10:00:00,9781230.0\n",
        );
        let mut spec =
            ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(32755)).unwrap();
        spec.date_order = DateOrder::DayMonthYear;
        let roles: Vec<Role> = spec.columns.iter().map(|c| c.role).collect();
        assert_eq!(
            roles,
            [
                Role::Line,
                Role::Station,
                Role::Easting,
                Role::Northing,
                Role::Elevation,
                Role::Date,
                Role::Time,
                Role::Gravity
            ]
        );
        let s = import_survey(&p, &spec).unwrap();
        assert_eq!(s.n_rows(), 3);
        assert_eq!(s.lines.len(), 2);
        assert!((s.elevation_m.as_ref().unwrap()[0] - 304.8).abs() < 1e-9);
        let g = &s.channel(Role::Gravity).unwrap().values;
        assert!((g[0] - 978_123.45).abs() < 1e-6, "gu → mGal");
        assert!(g[1].is_nan(), "dummy stays a dummy, not zero");
        let t = s.time_s.as_ref().unwrap();
        assert_eq!(t[1] - t[0], 300.0);
        // UTM zone 55S, easting 500 000 is the central meridian 147° E.
        assert!((s.lon.as_ref().unwrap()[0] - 147.0).abs() < 1e-9);
        assert!(s.lat.as_ref().unwrap()[0] < 0.0);
        assert_eq!(s.dummies.iter().find(|d| d.0 == "Grav_gu").unwrap().1, 1);
    }

    #[test]
    fn geographic_input_is_projected_to_a_chosen_zone() {
        let p = write(
            "geo",
            "lat,lon,mag\n-33.5,151.2,57000\n-33.5,151.21,57001\n",
        );
        let spec = ImportSpec::guess_for_file(&p, &TextOptions::default(), None).unwrap();
        let s = import_survey(&p, &spec).unwrap();
        assert_eq!(s.crs.unwrap().epsg(), 32756);
        assert!(s.warnings.iter().any(|w| w.contains("UTM zone 56S")));
        assert!(
            (s.x[1] - s.x[0] - 928.0).abs() < 5.0,
            "0.01° of longitude at 33.5° S is about 928 m: {}",
            s.x[1] - s.x[0]
        );
    }

    #[test]
    fn bad_files_get_precise_messages() {
        let p = write("swapped", "lat,lon,mag\n151.2,-33.5,57000\n");
        let spec = ImportSpec::guess_for_file(&p, &TextOptions::default(), None).unwrap();
        let e = import_survey(&p, &spec).unwrap_err().to_string();
        assert!(e.contains("line 2") && e.contains("swapped"), "{e}");
        let p = write("nocoords", "a,b,mag\n1,2,3\n");
        let spec = ImportSpec::guess_for_file(&p, &TextOptions::default(), None).unwrap();
        assert!(matches!(
            import_survey(&p, &spec),
            Err(ImportError::NoCoordinates { .. })
        ));
        let p = write("epsg", "x,y,mag\n1,2,3\n");
        let e = ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(9999))
            .and_then(|s| import_survey(&p, &s))
            .unwrap_err()
            .to_string();
        assert!(e.contains("EPSG:9999"), "{e}");
        let p = write("geoxy", "x,y,mag\n1,2,3\n");
        let e = ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(4326))
            .and_then(|s| import_survey(&p, &s))
            .unwrap_err()
            .to_string();
        assert!(e.contains("geographic"), "{e}");
        let p = write("time", "x,y,time,mag\n1,2,09:61,3\n");
        let e = ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(32755))
            .and_then(|s| import_survey(&p, &s))
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 2") && e.contains("'time'"), "{e}");
        let p = write("feet", "x,y,elevation_ft,mag\n1,2,3,4\n");
        let mut spec =
            ImportSpec::guess_for_file(&p, &TextOptions::default(), Some(32755)).unwrap();
        spec.columns[2].unit = Unit::Metre;
        let s = import_survey(&p, &spec).unwrap();
        assert!(
            s.warnings.iter().any(|w| w.contains("feet")),
            "{:?}",
            s.warnings
        );
        let mut spec2 = spec.clone();
        spec2.columns[3].role = Role::Easting;
        spec2.columns[3].unit = Unit::Metre;
        assert!(matches!(
            import_survey(&p, &spec2),
            Err(ImportError::DuplicateRole { .. })
        ));
    }
}
