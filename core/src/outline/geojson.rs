//! GeoJSON outlines (RFC 7946, The GeoJSON Format, IETF 2016): a
//! FeatureCollection, a Feature or a bare geometry; Polygon and
//! MultiPolygon geometries, the first ring of each polygon its exterior and
//! the others its holes. RFC 7946 coordinates are WGS 84 longitude and
//! latitude (EPSG:4326); the older 2008 specification's `crs` member
//! (`urn:ogc:def:crs:EPSG::32617`) is honoured when present. A file without
//! `crs` whose coordinates cannot be degrees is taken to name no reference.

use super::{clean_ring, MapPolygon, Outline, OutlineError, OutlineFile};
use serde_json::Value;
use std::path::Path;

/// Reads a GeoJSON file.
pub fn read_geojson(path: &Path) -> Result<OutlineFile, OutlineError> {
    let bytes = std::fs::read(path).map_err(|source| OutlineError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    parse_geojson(&bytes, path)
}

/// Parses GeoJSON bytes; `path` is named in messages.
pub fn parse_geojson(bytes: &[u8], path: &Path) -> Result<OutlineFile, OutlineError> {
    let file = path.to_path_buf();
    let v: Value = serde_json::from_slice(bytes).map_err(|e| OutlineError::Format {
        file: file.clone(),
        message: format!("line {}, column {}: not JSON: {e}", e.line(), e.column()),
    })?;
    let feature_err = |place: &str, message: String| OutlineError::Feature {
        file: file.clone(),
        place: place.to_string(),
        message,
    };
    let kind = v.get("type").and_then(Value::as_str).unwrap_or("");
    let mut outlines = Vec::new();
    match kind {
        "FeatureCollection" => {
            let features = v
                .get("features")
                .and_then(Value::as_array)
                .ok_or_else(|| feature_err("features", "a FeatureCollection needs a 'features' array".into()))?;
            for (k, f) in features.iter().enumerate() {
                let place = format!("features[{k}]");
                if let Some(o) = feature(f, &place, k).map_err(|m| feature_err(&place, m))? {
                    outlines.push(o);
                }
            }
        }
        "Feature" => {
            if let Some(o) = feature(&v, "feature", 0).map_err(|m| feature_err("feature", m))? {
                outlines.push(o);
            }
        }
        "Polygon" | "MultiPolygon" => outlines.push(Outline {
            name: "1".into(),
            parts: geometry(&v).map_err(|m| feature_err("geometry", m))?,
        }),
        other => {
            return Err(OutlineError::Format {
                file,
                message: format!(
                    "the top-level 'type' is '{other}'; expected FeatureCollection, Feature, Polygon or MultiPolygon"
                ),
            })
        }
    }
    if outlines.is_empty() {
        return Err(OutlineError::Format {
            file,
            message: "no Polygon or MultiPolygon features".into(),
        });
    }
    let epsg = match named_crs(&v) {
        Some(r) => Some(r.map_err(|message| OutlineError::Reference {
            file: file.clone(),
            message,
        })?),
        None if looks_geographic(&outlines) => Some(4326),
        None => None,
    };
    Ok(OutlineFile {
        file,
        outlines,
        epsg,
    })
}

/// The EPSG code of a 2008-style `crs` member, if there is one.
fn named_crs(v: &Value) -> Option<Result<u32, String>> {
    let name = v.get("crs")?.get("properties")?.get("name")?.as_str()?;
    let upper = name.to_ascii_uppercase();
    if upper.ends_with("CRS84") {
        return Some(Ok(4326));
    }
    let code = upper
        .rsplit([':', '/'])
        .next()
        .and_then(|c| c.parse::<u32>().ok());
    Some(code.ok_or_else(|| {
        format!("the crs name '{name}' does not end in an EPSG code (urn:ogc:def:crs:EPSG::32617)")
    }))
}

fn looks_geographic(outlines: &[Outline]) -> bool {
    outlines.iter().flat_map(|o| &o.parts).all(|p| {
        p.outer
            .iter()
            .chain(p.holes.iter().flatten())
            .all(|q| q[0].abs() <= 360.0 && q[1].abs() <= 90.0)
    })
}

/// A Feature's outline; None for a feature that is not a polygon (a point
/// or line among outlines is refused, a null geometry skipped).
fn feature(f: &Value, place: &str, k: usize) -> Result<Option<Outline>, String> {
    let g = match f.get("geometry") {
        Some(Value::Null) | None => return Ok(None),
        Some(g) => g,
    };
    let props = f.get("properties");
    let name = ["name", "NAME", "Name", "id", "ID"]
        .iter()
        .find_map(|key| {
            props
                .and_then(|p| p.get(*key))
                .or_else(|| f.get(*key))
                .and_then(|v| match v {
                    Value::String(s) => Some(s.clone()),
                    Value::Number(n) => Some(n.to_string()),
                    _ => None,
                })
        })
        .unwrap_or_else(|| (k + 1).to_string());
    let parts = geometry(g).map_err(|m| format!("{place}.geometry: {m}"))?;
    Ok(Some(Outline { name, parts }))
}

fn geometry(g: &Value) -> Result<Vec<MapPolygon>, String> {
    let kind = g.get("type").and_then(Value::as_str).unwrap_or("");
    let coords = g.get("coordinates").ok_or("no 'coordinates'")?;
    match kind {
        "Polygon" => Ok(vec![
            polygon(coords).map_err(|m| format!("coordinates: {m}"))?
        ]),
        "MultiPolygon" => coords
            .as_array()
            .ok_or("'coordinates' is not an array of polygons")?
            .iter()
            .enumerate()
            .map(|(k, p)| polygon(p).map_err(|m| format!("coordinates[{k}]: {m}")))
            .collect(),
        other => Err(format!(
            "a {other} is not an outline; use Polygon or MultiPolygon"
        )),
    }
}

fn polygon(v: &Value) -> Result<MapPolygon, String> {
    let rings = v.as_array().ok_or("a polygon is an array of rings")?;
    let mut out = Vec::with_capacity(rings.len());
    for (k, r) in rings.iter().enumerate() {
        let pts = r
            .as_array()
            .ok_or_else(|| format!("[{k}] is not an array of positions"))?;
        let mut ring = Vec::with_capacity(pts.len());
        for (m, p) in pts.iter().enumerate() {
            let a = p.as_array().filter(|a| a.len() >= 2);
            let xy = a.and_then(|a| Some([a[0].as_f64()?, a[1].as_f64()?]));
            ring.push(xy.ok_or_else(|| format!("[{k}][{m}] is not a position [x, y]"))?);
        }
        out.push(clean_ring(ring).map_err(|m| format!("[{k}]: {m}"))?);
    }
    let mut it = out.into_iter();
    let outer = it
        .next()
        .ok_or("a polygon needs at least its exterior ring")?;
    Ok(MapPolygon {
        outer,
        holes: it.collect(),
    })
}
