//! Reading collar, survey and interval tables.

use super::checks::{check_holes, Issue};
use super::{DipConvention, Hole, HoleSet, Interval, SurveyStation};
use crate::survey::columns::normalise;
use crate::table::read::read_table;
use crate::table::{ColumnData, ColumnKind, Table, TableError, TextOptions};
use serde::{Deserialize, Serialize};
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// Where the tables are and how to read them (saved in the project).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DrillholeSpec {
    pub collars: PathBuf,
    pub surveys: Option<PathBuf>,
    pub intervals: Option<PathBuf>,
    pub dip_convention: DipConvention,
    pub text: TextOptions,
}

#[derive(Debug, Error)]
pub enum DrillholeError {
    #[error(transparent)]
    Table(#[from] TableError),
    #[error(
        "{file}: the {table} table has no {what} column (looked for {looked}; found: {found})"
    )]
    MissingColumn {
        file: PathBuf,
        table: &'static str,
        what: &'static str,
        looked: String,
        found: String,
    },
    #[error("{file}: line {line}: collar of hole '{hole}' has no {what}")]
    CollarValue {
        file: PathBuf,
        line: u64,
        hole: String,
        what: &'static str,
    },
}

const HOLE: &[&str] = &[
    "holeid", "hole", "bhid", "dhid", "hole_id", "holename", "id", "name",
];
const X: &[&str] = &["x", "east", "easting", "e", "xcollar", "utme"];
const Y: &[&str] = &["y", "north", "northing", "n", "ycollar", "utmn"];
const Z: &[&str] = &[
    "z",
    "elev",
    "elevation",
    "rl",
    "zcollar",
    "height",
    "collarrl",
];
const TD: &[&str] = &[
    "totaldepth",
    "td",
    "eoh",
    "maxdepth",
    "depth",
    "length",
    "enddepth",
];
const AT: &[&str] = &["depth", "at", "md", "distance", "surveydepth", "from"];
const AZ: &[&str] = &["azimuth", "azi", "az", "azm", "brg", "bearing"];
const DIP: &[&str] = &["dip", "inclination", "incl", "inc"];
const FROM: &[&str] = &["from", "depthfrom", "mfrom", "fromm", "start"];
const TO: &[&str] = &["to", "depthto", "mto", "tom", "end"];

fn find(t: &Table, names: &[&str], skip: &[usize]) -> Option<usize> {
    names.iter().find_map(|n| {
        (0..t.names.len()).find(|&i| !skip.contains(&i) && normalise(&t.names[i]) == normalise(n))
    })
}

fn need(
    t: &Table,
    names: &[&str],
    table: &'static str,
    what: &'static str,
    skip: &[usize],
) -> Result<usize, DrillholeError> {
    find(t, names, skip).ok_or_else(|| DrillholeError::MissingColumn {
        file: t.file.clone(),
        table,
        what,
        looked: names.join(", "),
        found: t.names.join(", "),
    })
}

fn text_col(t: &Table, i: usize) -> Vec<String> {
    match &t.columns[i] {
        ColumnData::Text(v) => v.clone(),
        ColumnData::Number(v) => v
            .iter()
            .map(|a| {
                if a.is_finite() {
                    format!("{a}")
                } else {
                    String::new()
                }
            })
            .collect(),
    }
}

fn num_col(t: &Table, i: usize) -> Vec<f64> {
    match &t.columns[i] {
        ColumnData::Number(v) => v.clone(),
        ColumnData::Text(v) => v.iter().map(|s| s.parse().unwrap_or(f64::NAN)).collect(),
    }
}

/// Reads a table with its hole-id column forced to text.
fn read_with_text_id(path: &Path, opts: &TextOptions) -> Result<Table, DrillholeError> {
    let t = read_table(path, opts, None)?;
    match find(&t, HOLE, &[]) {
        Some(i) if matches!(t.columns[i], ColumnData::Number(_)) => {
            let mut kinds: Vec<ColumnKind> = t
                .columns
                .iter()
                .map(|c| {
                    if matches!(c, ColumnData::Number(_)) {
                        ColumnKind::Number
                    } else {
                        ColumnKind::Text
                    }
                })
                .collect();
            kinds[i] = ColumnKind::Text;
            Ok(read_table(path, opts, Some(&kinds))?)
        }
        _ => Ok(t),
    }
}

/// Loads the holes and reports every inconsistency found.
pub fn load_holes(spec: &DrillholeSpec) -> Result<(HoleSet, Vec<Issue>), DrillholeError> {
    let mut issues = Vec::new();
    let c = read_with_text_id(&spec.collars, &spec.text)?;
    let ih = need(&c, HOLE, "collar", "hole id", &[])?;
    let ix = need(&c, X, "collar", "easting", &[ih])?;
    let iy = need(&c, Y, "collar", "northing", &[ih, ix])?;
    let iz = need(&c, Z, "collar", "elevation", &[ih, ix, iy])?;
    let itd = find(&c, TD, &[ih, ix, iy, iz]);
    let (iaz, idip) = (find(&c, AZ, &[]), find(&c, DIP, &[]));
    let ids = text_col(&c, ih);
    let (xs, ys, zs) = (num_col(&c, ix), num_col(&c, iy), num_col(&c, iz));
    let tds = itd.map(|i| num_col(&c, i));
    let collar_az = iaz.map(|i| num_col(&c, i));
    let collar_dip = idip.map(|i| num_col(&c, i));
    let mut holes: Vec<Hole> = Vec::new();
    let mut index: HashMap<String, usize> = HashMap::new();
    let mut collar_orient: Vec<Option<SurveyStation>> = Vec::new();
    for k in 0..c.n_rows() {
        let id = ids[k].clone();
        let line = c.lines[k];
        for (v, what) in [
            (xs[k], "easting"),
            (ys[k], "northing"),
            (zs[k], "elevation"),
        ] {
            if !v.is_finite() {
                return Err(DrillholeError::CollarValue {
                    file: c.file.clone(),
                    line,
                    hole: id,
                    what,
                });
            }
        }
        if let Some(&first) = index.get(&id) {
            issues.push(Issue::at(
                &c.file,
                line,
                &id,
                format!(
                    "hole '{id}' has a second collar (the first is kept, from line {})",
                    c.lines[first]
                ),
            ));
            continue;
        }
        index.insert(id.clone(), holes.len());
        let orient = match (&collar_az, &collar_dip) {
            (Some(a), Some(d)) if a[k].is_finite() && d[k].is_finite() => Some(SurveyStation {
                depth_m: 0.0,
                azimuth_deg: a[k],
                dip_deg: spec.dip_convention.to_negative_down(d[k]),
            }),
            _ => None,
        };
        collar_orient.push(orient);
        holes.push(Hole {
            id,
            collar: [xs[k], ys[k], zs[k]],
            total_depth_m: tds.as_ref().map(|t| t[k]).filter(|v| v.is_finite()),
            surveys: vec![],
            intervals: vec![],
        });
        let _ = line;
    }
    if let Some(sp) = &spec.surveys {
        let s = read_with_text_id(sp, &spec.text)?;
        let ih = need(&s, HOLE, "survey", "hole id", &[])?;
        let iat = need(&s, AT, "survey", "depth", &[ih])?;
        let iaz = need(&s, AZ, "survey", "azimuth", &[ih, iat])?;
        let idp = need(&s, DIP, "survey", "dip", &[ih, iat, iaz])?;
        let (ids, at, az, dip) = (
            text_col(&s, ih),
            num_col(&s, iat),
            num_col(&s, iaz),
            num_col(&s, idp),
        );
        let mut positive = 0usize;
        let mut total = 0usize;
        for k in 0..s.n_rows() {
            let line = s.lines[k];
            let Some(&h) = index.get(&ids[k]) else {
                issues.push(Issue::at(
                    &s.file,
                    line,
                    &ids[k],
                    format!("survey for hole '{}', which has no collar; ignored", ids[k]),
                ));
                continue;
            };
            if !(at[k].is_finite() && at[k] >= 0.0 && az[k].is_finite() && dip[k].is_finite()) {
                issues.push(Issue::at(
                    &s.file,
                    line,
                    &ids[k],
                    format!("survey row of hole '{}' has a missing or negative depth, azimuth or dip; ignored", ids[k]),
                ));
                continue;
            }
            let d = spec.dip_convention.to_negative_down(dip[k]);
            if !(-90.0..=90.0).contains(&d) || !(-360.0..=360.0).contains(&az[k]) {
                issues.push(Issue::at(
                    &s.file,
                    line,
                    &ids[k],
                    format!(
                        "azimuth {} or dip {} of hole '{}' is out of range; ignored",
                        az[k], dip[k], ids[k]
                    ),
                ));
                continue;
            }
            if let Some(td) = holes[h].total_depth_m {
                // 1 m of slack for rounding at the end of the hole (common practice).
                if at[k] > td + 1.0 {
                    issues.push(Issue::at(
                        &s.file,
                        line,
                        &ids[k],
                        format!(
                            "survey depth {} m is beyond the total depth {td} m of hole '{}'; ignored",
                            at[k], ids[k]
                        ),
                    ));
                    continue;
                }
            }
            total += 1;
            if d > 0.0 {
                positive += 1;
            }
            holes[h].surveys.push(SurveyStation {
                depth_m: at[k],
                azimuth_deg: az[k],
                dip_deg: d,
            });
        }
        if total > 0 && positive == total {
            issues.push(Issue::file(&s.file, "every dip points upward in the chosen convention (negative down); if the file writes downward dips as positive, choose 'positive down'".into()));
        }
    }
    for (h, o) in holes.iter_mut().zip(&collar_orient) {
        h.surveys.sort_by(|a, b| a.depth_m.total_cmp(&b.depth_m));
        if h.surveys.is_empty() {
            match o {
                Some(st) => h.surveys.push(*st),
                None => {
                    issues.push(Issue::hole(
                        &h.id,
                        "no survey and no collar orientation: the hole is taken as vertical".into(),
                    ));
                    h.surveys.push(SurveyStation {
                        depth_m: 0.0,
                        azimuth_deg: 0.0,
                        dip_deg: -90.0,
                    });
                }
            }
        }
    }
    let (mut value_names, mut text_names) = (Vec::new(), Vec::new());
    if let Some(ip) = &spec.intervals {
        let t = read_with_text_id(ip, &spec.text)?;
        let ih = need(&t, HOLE, "interval", "hole id", &[])?;
        let ifrom = need(&t, FROM, "interval", "from depth", &[ih])?;
        let ito = need(&t, TO, "interval", "to depth", &[ih, ifrom])?;
        let ids = text_col(&t, ih);
        let (from, to) = (num_col(&t, ifrom), num_col(&t, ito));
        let rest: Vec<usize> = (0..t.names.len())
            .filter(|i| ![ih, ifrom, ito].contains(i))
            .collect();
        let nums: Vec<usize> = rest
            .iter()
            .copied()
            .filter(|&i| matches!(t.columns[i], ColumnData::Number(_)))
            .collect();
        let texts: Vec<usize> = rest
            .iter()
            .copied()
            .filter(|&i| matches!(t.columns[i], ColumnData::Text(_)))
            .collect();
        value_names = nums.iter().map(|&i| t.names[i].clone()).collect();
        text_names = texts.iter().map(|&i| t.names[i].clone()).collect();
        for k in 0..t.n_rows() {
            let line = t.lines[k];
            let Some(&h) = index.get(&ids[k]) else {
                issues.push(Issue::at(
                    &t.file,
                    line,
                    &ids[k],
                    format!(
                        "interval for hole '{}', which has no collar; ignored",
                        ids[k]
                    ),
                ));
                continue;
            };
            if !(from[k].is_finite() && to[k].is_finite() && from[k] >= 0.0 && from[k] < to[k]) {
                issues.push(Issue::at(
                    &t.file,
                    line,
                    &ids[k],
                    format!(
                        "interval from {} to {} in hole '{}' is not a valid depth range (from must be at least 0 and less than to); ignored",
                        from[k], to[k], ids[k]
                    ),
                ));
                continue;
            }
            let values = nums
                .iter()
                .map(|&i| t.columns[i].as_numbers().map(|v| v[k]).unwrap_or(f64::NAN))
                .collect();
            let text = texts
                .iter()
                .map(|&i| {
                    t.columns[i]
                        .as_text()
                        .map(|v| v[k].clone())
                        .unwrap_or_default()
                })
                .collect();
            holes[h].intervals.push(Interval {
                from_m: from[k],
                to_m: to[k],
                values,
                text,
                line,
            });
        }
        for h in &mut holes {
            h.intervals.sort_by(|a, b| a.from_m.total_cmp(&b.from_m));
        }
        issues.extend(check_holes(&holes, &t.file));
    }
    Ok((
        HoleSet {
            holes,
            value_names,
            text_names,
        },
        issues,
    ))
}
