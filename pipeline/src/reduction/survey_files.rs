//! A survey of one or more files read through core's importer
//! (`core::survey::import`): roles and units guessed from each header,
//! overridden by `--column ROLE=HEADER` and `--unit HEADER=UNIT`; each
//! file's own text kept so the output carries every input column.

use crate::error::{Error, Result};
use fieldstone_core::survey::columns::Role;
use fieldstone_core::survey::import::{import_survey, ImportSpec, Survey, TimeOrigin};
use fieldstone_core::table::passthrough::{read_passthrough, PassThroughTable};
use fieldstone_core::table::TextOptions;
use std::path::{Path, PathBuf};

/// The name of the output column that says which file a row came from.
pub const SOURCE_COLUMN: &str = "source_file";

/// How the files of a survey are read: overrides of the guessed roles and
/// units, and the projected reference of easting/northing columns.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ReadOptions {
    /// (role key, header): the column `header` takes the role.
    pub columns: Vec<(String, String)>,
    /// (header, unit): the column `header` is in `unit`.
    pub units: Vec<(String, String)>,
    /// EPSG code of easting/northing columns.
    pub epsg: Option<u32>,
}

/// Splits `KEY=VALUE` (an option's argument) at its first `=`.
pub fn split_pair(option: &str, text: &str) -> Result<(String, String)> {
    match text.split_once('=') {
        Some((a, b)) if !a.trim().is_empty() && !b.trim().is_empty() => {
            Ok((a.trim().to_string(), b.trim().to_string()))
        }
        _ => Err(format!("{option} '{text}' is not of the form NAME=VALUE").into()),
    }
}

/// The role keys, for messages.
pub fn role_keys() -> String {
    Role::ALL
        .iter()
        .map(|r| r.key())
        .collect::<Vec<_>>()
        .join(", ")
}

/// One file of a survey.
pub struct SurveyFile {
    pub path: PathBuf,
    pub spec: ImportSpec,
    pub survey: Survey,
    /// The file's own text, for the output.
    pub raw: PassThroughTable,
}

/// Reads every file of a survey; `output_columns` are the names the output
/// adds (an input column of the same name is refused).
pub fn read_survey_files(
    paths: &[PathBuf],
    opts: &ReadOptions,
    output_columns: &[&str],
) -> Result<Vec<SurveyFile>> {
    if paths.is_empty() {
        return Err("no input file: give --in FILE (once per file of the survey)".into());
    }
    let mut names = output_columns.to_vec();
    names.push(SOURCE_COLUMN);
    paths
        .iter()
        .map(|p| read_survey_file(p, opts, &names))
        .collect()
}

/// The importer's guesses for `path` with the overrides of `opts` applied.
pub fn spec_for_file(path: &Path, opts: &ReadOptions) -> Result<ImportSpec> {
    let at = |e: String| Error::Input(format!("{}: {e}", path.display()));
    let mut spec = ImportSpec::guess_for_file(path, &TextOptions::default(), opts.epsg)
        .map_err(|e| Error::Input(e.to_string()))?;
    for (key, header) in &opts.columns {
        let role = Role::from_key(key).ok_or_else(|| {
            Error::Input(format!(
                "--column {key}={header}: '{key}' is not a role; the roles are: {}",
                role_keys()
            ))
        })?;
        spec.set_role(role, header).map_err(at)?;
    }
    for (header, unit) in &opts.units {
        spec.set_unit(header, unit).map_err(at)?;
    }
    Ok(spec)
}

/// Reads one file; `output_columns` are the names the output adds (an input
/// column of the same name is refused).
pub fn read_survey_file(
    path: &Path,
    opts: &ReadOptions,
    output_columns: &[&str],
) -> Result<SurveyFile> {
    let spec = spec_for_file(path, opts)?;
    let survey = import_survey(path, &spec).map_err(|e| Error::Input(e.to_string()))?;
    let raw = read_passthrough(path, output_columns).map_err(|e| Error::Input(e.to_string()))?;
    if raw.lines != survey.file_lines {
        return Err(Error::Internal(format!(
            "{}: the importer and the pass-through reader disagree on the file's rows ({} against {}); please report this file",
            path.display(),
            survey.n_rows(),
            raw.n_rows()
        )));
    }
    Ok(SurveyFile {
        path: path.to_path_buf(),
        spec,
        survey,
        raw,
    })
}

impl SurveyFile {
    /// The message for a role no column has: the columns with their
    /// guessed roles and the option that would fix it.
    pub fn missing(&self, what: &str, key: &str, example: &str) -> Error {
        Error::Input(format!(
            "{}: no column was taken for {what} (a header such as {example}); the columns and their guessed roles: {}; name the column with --column {key}=HEADER",
            self.path.display(),
            self.spec.describe_columns()
        ))
    }

    /// The header of the column with `role`.
    pub fn header_of(&self, role: Role) -> Option<&str> {
        self.spec
            .columns
            .iter()
            .find(|c| c.role == role)
            .map(|c| c.name.as_str())
    }

    /// Refuses a missing value in a required column, naming file, line
    /// and column.
    pub fn require_finite(&self, values: &[f64], role: Role) -> Result<()> {
        if let Some(k) = values.iter().position(|v| !v.is_finite()) {
            return Err(Error::Input(format!(
                "{}: line {}, column '{}': the value is missing or a dummy",
                self.path.display(),
                self.survey.file_lines[k],
                self.header_of(role).unwrap_or(role.key())
            )));
        }
        Ok(())
    }

    /// Latitude and longitude of every row, degrees.
    pub fn lat_lon(&self) -> Result<(&[f64], &[f64])> {
        match (&self.survey.lat, &self.survey.lon) {
            (Some(la), Some(lo)) => {
                let role = if self.header_of(Role::Latitude).is_some() {
                    Role::Latitude
                } else {
                    Role::Easting
                };
                self.require_finite(la, role)?;
                self.require_finite(lo, role)?;
                Ok((la, lo))
            }
            _ => Err(Error::Input(format!(
                "{}: the latitude of the readings is unknown: the coordinates are easting/northing ('{}', '{}') with no reference; give their projected EPSG code with --epsg",
                self.path.display(),
                self.header_of(Role::Easting).unwrap_or("x"),
                self.header_of(Role::Northing).unwrap_or("y"),
            ))),
        }
    }

    /// Heights of the stations, metres.
    pub fn heights(&self) -> Result<&[f64]> {
        let h = self.survey.elevation_m.as_deref().ok_or_else(|| {
            self.missing(
                "the station heights",
                "height",
                "height_m or elevation, in metres above the ellipsoid",
            )
        })?;
        self.require_finite(h, Role::Elevation)?;
        Ok(h)
    }

    /// The values of the channel with `role` (in program units).
    pub fn channel(&self, role: Role, what: &str, example: &str) -> Result<&[f64]> {
        let c = self
            .survey
            .channel(role)
            .ok_or_else(|| self.missing(what, role.key(), example))?;
        self.require_finite(&c.values, role)?;
        Ok(&c.values)
    }

    /// The numbers of the column named `header` (exactly, else ignoring
    /// case), whatever its role, in program units; missing values are NaN.
    pub fn column_values(&self, header: &str) -> Result<Vec<f64>> {
        column_values(&self.path, &self.spec, &self.survey, header)
    }

    /// Station ids as written in the file.
    pub fn station_ids(&self, why: &str) -> Result<Vec<String>> {
        let header = self
            .header_of(Role::Station)
            .ok_or_else(|| self.missing(why, "station", "station or station_id"))?;
        let c = self.raw.column(header).ok_or_else(|| {
            Error::Internal(format!(
                "{}: column '{header}' not found",
                self.path.display()
            ))
        })?;
        Ok((0..self.raw.n_rows())
            .map(|r| self.raw.text(r, c))
            .collect())
    }

    /// Times of the readings, seconds, and what they count from; `date`
    /// (YYYY-MM-DD) places times of day.
    pub fn times(&self, date: Option<&str>) -> Result<(Vec<f64>, TimeOrigin)> {
        let t = self
            .survey
            .time_s
            .clone()
            .ok_or_else(|| self.missing("the reading times", "time", "time or time_minutes"))?;
        self.require_finite(&t, Role::Time)?;
        match (self.survey.time_origin, date) {
            (TimeOrigin::Midnight, Some(d)) => {
                let day = fieldstone_core::survey::time::parse_date(
                    d,
                    fieldstone_core::survey::time::DateOrder::YearMonthDay,
                )
                .map_err(|e| format!("survey date: {e}"))? as f64
                    * 86_400.0;
                Ok((t.iter().map(|s| day + s).collect(), TimeOrigin::Epoch))
            }
            (o, _) => Ok((t, o)),
        }
    }

    /// The file's line of row `r`.
    pub fn line(&self, r: usize) -> u64 {
        self.survey.file_lines[r]
    }
}

/// The numbers of the column named `header` (exactly, else ignoring case)
/// of an imported file, whatever its role, in program units; missing values
/// are NaN.
pub fn column_values(
    path: &Path,
    spec: &ImportSpec,
    survey: &Survey,
    header: &str,
) -> Result<Vec<f64>> {
    let want = header.trim();
    let c = spec
        .columns
        .iter()
        .find(|c| c.name == want)
        .or_else(|| {
            spec.columns
                .iter()
                .find(|c| c.name.eq_ignore_ascii_case(want))
        })
        .ok_or_else(|| {
            Error::Input(format!(
                "{}: no column '{want}'; the columns are: {}",
                path.display(),
                spec.describe_columns()
            ))
        })?;
    match c.role {
        Role::Elevation => Ok(survey.elevation_m.clone().unwrap_or_default()),
        _ => survey
            .channels
            .iter()
            .find(|ch| ch.name == c.name)
            .map(|ch| ch.values.clone())
            .ok_or_else(|| {
                Error::Input(format!(
                    "{}: column '{}' ({}) holds no numbers",
                    path.display(),
                    c.name,
                    c.role.key()
                ))
            }),
    }
}

/// Writes the survey's rows as one table: every input column, the file of
/// each row ([`SOURCE_COLUMN`]), then `names` with `rows(file, row)`.
pub fn write_survey(
    out: &Path,
    files: &[SurveyFile],
    names: &[&str],
    rows: impl FnMut(usize, usize) -> Vec<f64>,
) -> Result<()> {
    let tables: Vec<_> = files.iter().map(|f| &f.raw).collect();
    let sources: Vec<String> = files.iter().map(|f| f.path.display().to_string()).collect();
    super::table::write_tables(out, &tables, SOURCE_COLUMN, &sources, names, rows)
}
