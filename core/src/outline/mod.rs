//! Map outlines: polygons with holes, read from GeoJSON ([`geojson`]) or
//! an ESRI shapefile ([`shapefile`]), brought into the project's reference,
//! and used as constraint regions and survey outlines.
//!
//! A point is inside an outline when it is inside one of its parts' outer
//! ring and in none of that part's holes (even–odd crossings per ring).

pub mod geojson;
pub mod shapefile;

use crate::geodesy::crs::Crs;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};
use thiserror::Error;

/// One polygon: an outer ring and its holes, (x, y) vertices, the closing
/// vertex not repeated.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MapPolygon {
    pub outer: Vec<[f64; 2]>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub holes: Vec<Vec<[f64; 2]>>,
}

impl MapPolygon {
    /// True when (x, y) is inside the outer ring and in no hole.
    pub fn contains(&self, x: f64, y: f64) -> bool {
        in_ring(&self.outer, x, y) && !self.holes.iter().any(|h| in_ring(h, x, y))
    }

    /// Area inside the outer ring less the holes, square units of the
    /// coordinates.
    pub fn area(&self) -> f64 {
        signed_area(&self.outer).abs()
            - self.holes.iter().map(|h| signed_area(h).abs()).sum::<f64>()
    }
}

/// True when (x, y) is inside `ring` (even–odd rule).
pub fn in_ring(ring: &[[f64; 2]], x: f64, y: f64) -> bool {
    let mut inside = false;
    let n = ring.len();
    for k in 0..n {
        let (a, b) = (ring[k], ring[(k + 1) % n]);
        if (a[1] > y) != (b[1] > y) && x < a[0] + (y - a[1]) / (b[1] - a[1]) * (b[0] - a[0]) {
            inside = !inside;
        }
    }
    inside
}

/// Shoelace area: positive for counter-clockwise rings.
pub fn signed_area(ring: &[[f64; 2]]) -> f64 {
    let n = ring.len();
    (0..n)
        .map(|k| {
            let (a, b) = (ring[k], ring[(k + 1) % n]);
            a[0] * b[1] - b[0] * a[1]
        })
        .sum::<f64>()
        / 2.0
}

/// A named outline of one or more polygons.
#[derive(Debug, Clone, PartialEq)]
pub struct Outline {
    /// The feature's name (a `name` property or attribute), or its number.
    pub name: String,
    pub parts: Vec<MapPolygon>,
}

/// The outlines of a file and the reference their coordinates are in.
#[derive(Debug, Clone, PartialEq)]
pub struct OutlineFile {
    pub file: PathBuf,
    pub outlines: Vec<Outline>,
    /// EPSG code of the coordinates; None when the file does not say.
    pub epsg: Option<u32>,
}

#[derive(Debug, Error)]
pub enum OutlineError {
    #[error("cannot read {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: {message}")]
    Format { file: PathBuf, message: String },
    #[error("{file}: {place}: {message}")]
    Feature {
        file: PathBuf,
        place: String,
        message: String,
    },
    #[error("{file}: {message}")]
    Reference { file: PathBuf, message: String },
}

/// Reads outlines by the file's ending: `.geojson`/`.json` or `.shp`.
pub fn read_outlines(path: &Path) -> Result<OutlineFile, OutlineError> {
    let ext = crate::io::ending(path);
    match ext.as_str() {
        "geojson" | "json" => geojson::read_geojson(path),
        "shp" => shapefile::read_shapefile(path),
        _ => Err(OutlineError::Format {
            file: path.to_path_buf(),
            message: "outlines are read from GeoJSON (.geojson) or an ESRI shapefile (.shp with its .shx and .dbf)".into(),
        }),
    }
}

impl OutlineFile {
    /// The outlines in the reference `project_epsg`: geographic coordinates
    /// are projected, projected ones in another reference go through
    /// latitude/longitude (no datum shift is applied: references on
    /// different datums differ by up to a few metres). A file that names no
    /// reference is taken to be in the project's, with a warning.
    pub fn to_project(
        &self,
        project_epsg: Option<u32>,
    ) -> Result<(Vec<Outline>, Vec<String>), OutlineError> {
        let err = |message: String| OutlineError::Reference {
            file: self.file.clone(),
            message,
        };
        let mut warnings = Vec::new();
        let (from, to) = match (self.epsg, project_epsg) {
            (None, _) => {
                warnings.push(format!(
                    "{}: the file names no coordinate reference; its coordinates are taken to be in the project's",
                    self.file.display()
                ));
                return Ok((self.outlines.clone(), warnings));
            }
            (Some(a), Some(b)) if a == b => return Ok((self.outlines.clone(), warnings)),
            (Some(a), None) => {
                let c = Crs::from_epsg(a).map_err(|e| err(e.to_string()))?;
                if c.is_geographic() {
                    return Err(err(format!(
                        "the outlines are in longitude/latitude (EPSG:{a}) and the project has no projected reference to bring them into; set the project's EPSG code first"
                    )));
                }
                return Ok((self.outlines.clone(), warnings));
            }
            (Some(a), Some(b)) => (
                Crs::from_epsg(a).map_err(|e| err(e.to_string()))?,
                Crs::from_epsg(b).map_err(|e| err(e.to_string()))?,
            ),
        };
        if to.is_geographic() {
            return Err(err(format!(
                "the project's reference EPSG:{} is geographic; outlines need a projected one",
                to.epsg()
            )));
        }
        let convert = |p: [f64; 2]| -> Result<[f64; 2], OutlineError> {
            let (lat, lon) = if from.is_geographic() {
                (p[1], p[0])
            } else {
                from.unproject(p[0], p[1]).map_err(|e| err(e.to_string()))?
            };
            let (x, y) = to.project(lat, lon).map_err(|e| err(e.to_string()))?;
            Ok([x, y])
        };
        let ring = |r: &Vec<[f64; 2]>| r.iter().map(|p| convert(*p)).collect::<Result<Vec<_>, _>>();
        let mut out = Vec::with_capacity(self.outlines.len());
        for o in &self.outlines {
            let mut parts = Vec::with_capacity(o.parts.len());
            for p in &o.parts {
                parts.push(MapPolygon {
                    outer: ring(&p.outer)?,
                    holes: p.holes.iter().map(ring).collect::<Result<_, _>>()?,
                });
            }
            out.push(Outline {
                name: o.name.clone(),
                parts,
            });
        }
        if from.is_geographic() {
            warnings.push(format!(
                "{}: outlines projected from {} to {}",
                self.file.display(),
                from.name(),
                to.name()
            ));
        }
        Ok((out, warnings))
    }
}

/// Drops a closing vertex equal to the first and refuses rings of fewer
/// than three distinct vertices or with values that are not finite.
pub(crate) fn clean_ring(mut r: Vec<[f64; 2]>) -> Result<Vec<[f64; 2]>, String> {
    if r.iter().any(|p| !(p[0].is_finite() && p[1].is_finite())) {
        return Err("a vertex is not a finite number".into());
    }
    if r.len() >= 2 && r.first() == r.last() {
        r.pop();
    }
    if r.len() < 3 {
        return Err(format!(
            "a ring needs at least three distinct vertices; it has {}",
            r.len()
        ));
    }
    Ok(r)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_hole_is_outside_and_the_area_leaves_it_out() {
        let p = MapPolygon {
            outer: vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
            holes: vec![vec![[4.0, 4.0], [6.0, 4.0], [6.0, 6.0], [4.0, 6.0]]],
        };
        assert!(p.contains(1.0, 1.0));
        assert!(!p.contains(5.0, 5.0));
        assert!(!p.contains(11.0, 5.0));
        assert_eq!(p.area(), 96.0);
        assert_eq!(signed_area(&p.outer), 100.0);
    }
}
