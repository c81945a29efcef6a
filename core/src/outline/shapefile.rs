//! ESRI shapefile outlines, read from the published layout (ESRI Shapefile
//! Technical Description, an ESRI White Paper, July 1998): the `.shp` main
//! file's 100-byte header (file code 9994 and length big-endian, version
//! 1000 and shape type little-endian), then records of a big-endian header
//! and a little-endian shape. Polygon (5), PolygonZ (15) and PolygonM (25)
//! shapes are read; a ring whose vertices run clockwise is an outer ring
//! and one running anticlockwise a hole, as the description specifies.
//! Names come from the `.dbf` beside it (dBASE III: the `NAME` field or the
//! first character field), the reference from the `.prj` (WKT).

use super::{clean_ring, signed_area, MapPolygon, Outline, OutlineError, OutlineFile};
use crate::geodesy::wkt::epsg_of_wkt;
use std::path::Path;

/// Reads a shapefile: `path` is the `.shp`.
pub fn read_shapefile(path: &Path) -> Result<OutlineFile, OutlineError> {
    let bytes = std::fs::read(path).map_err(|source| OutlineError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    let names = ["dbf", "DBF"]
        .iter()
        .map(|e| path.with_extension(e))
        .find(|p| p.is_file())
        .map(|p| {
            let b = std::fs::read(&p).map_err(|source| OutlineError::Read {
                file: p.clone(),
                source,
            })?;
            dbf_names(&b, &p)
        })
        .transpose()?;
    let mut f = parse_shp(&bytes, path, names.as_deref())?;
    if let Some(wkt) = ["prj", "PRJ"]
        .iter()
        .find_map(|e| std::fs::read_to_string(path.with_extension(e)).ok())
    {
        f.epsg = epsg_of_wkt(&wkt);
    }
    Ok(f)
}

fn be_i32(b: &[u8], at: usize) -> Option<i32> {
    Some(i32::from_be_bytes(b.get(at..at + 4)?.try_into().ok()?))
}

fn le_i32(b: &[u8], at: usize) -> Option<i32> {
    Some(i32::from_le_bytes(b.get(at..at + 4)?.try_into().ok()?))
}

fn le_f64(b: &[u8], at: usize) -> Option<f64> {
    Some(f64::from_le_bytes(b.get(at..at + 8)?.try_into().ok()?))
}

/// Parses the bytes of a `.shp`; `names` are the record names from the
/// `.dbf`, in record order.
pub fn parse_shp(
    bytes: &[u8],
    path: &Path,
    names: Option<&[String]>,
) -> Result<OutlineFile, OutlineError> {
    let file = path.to_path_buf();
    let format = |message: String| OutlineError::Format {
        file: file.clone(),
        message,
    };
    if bytes.len() < 100 || be_i32(bytes, 0) != Some(9994) {
        return Err(format(
            "not a shapefile: the main file starts with the file code 9994 in a 100-byte header"
                .into(),
        ));
    }
    let version = le_i32(bytes, 28).unwrap_or(0);
    if version != 1000 {
        return Err(format(format!(
            "version {version} in the header; shapefiles are version 1000"
        )));
    }
    let shape_type = le_i32(bytes, 32).unwrap_or(-1);
    if !matches!(shape_type, 0 | 5 | 15 | 25) {
        return Err(format(format!(
            "the shapes are of type {shape_type} ({}); outlines are polygons (types 5, 15 or 25)",
            type_name(shape_type)
        )));
    }
    let mut outlines = Vec::new();
    let mut at = 100usize;
    let mut k = 0usize;
    while at + 8 <= bytes.len() {
        k += 1;
        let place = format!("record {k} (byte {at})");
        let rec_err = |message: String| OutlineError::Feature {
            file: file.clone(),
            place: place.clone(),
            message,
        };
        let words = be_i32(bytes, at + 4).unwrap_or(-1);
        if words < 2 {
            return Err(rec_err(format!(
                "content length {words} words is too short"
            )));
        }
        let start = at + 8;
        let end = start
            .checked_add(words as usize * 2)
            .filter(|e| *e <= bytes.len())
            .ok_or_else(|| rec_err("the record runs past the end of the file".into()))?;
        let content = &bytes[start..end];
        at = end;
        let t = le_i32(content, 0).unwrap_or(-1);
        if t == 0 {
            continue; // a null shape
        }
        if !matches!(t, 5 | 15 | 25) {
            return Err(rec_err(format!(
                "shape type {t} ({}) is not a polygon",
                type_name(t)
            )));
        }
        let parts = polygon_record(content).map_err(rec_err)?;
        let name = names
            .and_then(|n| n.get(k - 1))
            .filter(|n| !n.is_empty())
            .cloned()
            .unwrap_or_else(|| k.to_string());
        outlines.push(Outline { name, parts });
    }
    if outlines.is_empty() {
        return Err(format("no polygon records".into()));
    }
    Ok(OutlineFile {
        file,
        outlines,
        epsg: None,
    })
}

fn type_name(t: i32) -> &'static str {
    match t {
        0 => "null",
        1 | 11 | 21 => "point",
        3 | 13 | 23 => "polyline",
        5 | 15 | 25 => "polygon",
        8 | 18 | 28 => "multipoint",
        31 => "multipatch",
        _ => "unknown",
    }
}

/// The polygons of one record: clockwise rings are outer, anticlockwise
/// ones holes of the outer ring that holds their first vertex.
fn polygon_record(c: &[u8]) -> Result<Vec<MapPolygon>, String> {
    let n_parts = le_i32(c, 36).ok_or("the record ends in its header")?;
    let n_points = le_i32(c, 40).ok_or("the record ends in its header")?;
    if n_parts < 1 || n_points < 3 || n_parts > n_points {
        return Err(format!("{n_parts} parts of {n_points} points"));
    }
    let (np, nv) = (n_parts as usize, n_points as usize);
    let points_at = 44 + 4 * np;
    if points_at + 16 * nv > c.len() {
        return Err(format!(
            "{np} parts of {nv} points need {} bytes; the record holds {}",
            points_at + 16 * nv,
            c.len()
        ));
    }
    let mut starts = Vec::with_capacity(np + 1);
    for p in 0..np {
        let s = le_i32(c, 44 + 4 * p).unwrap_or(-1);
        if s < 0 || s as usize >= nv || starts.last().is_some_and(|l| s as usize <= *l) {
            return Err(format!(
                "part {p} starts at point {s}, not after the part before it within the {nv} points"
            ));
        }
        starts.push(s as usize);
    }
    starts.push(nv);
    let mut outers: Vec<MapPolygon> = Vec::new();
    let mut holes = Vec::new();
    for p in 0..np {
        let ring: Vec<[f64; 2]> = (starts[p]..starts[p + 1])
            .map(|i| {
                let a = points_at + 16 * i;
                [
                    le_f64(c, a).unwrap_or(f64::NAN),
                    le_f64(c, a + 8).unwrap_or(f64::NAN),
                ]
            })
            .collect();
        let ring = clean_ring(ring).map_err(|m| format!("part {p}: {m}"))?;
        if signed_area(&ring) <= 0.0 {
            outers.push(MapPolygon {
                outer: ring,
                holes: Vec::new(),
            });
        } else {
            holes.push((p, ring));
        }
    }
    if outers.is_empty() {
        return Err("no ring runs clockwise, so none is an outer ring".into());
    }
    for (p, h) in holes {
        let owner = outers
            .iter_mut()
            .find(|o| super::in_ring(&o.outer, h[0][0], h[0][1]))
            .ok_or_else(|| {
                format!("part {p} runs anticlockwise (a hole) but lies in no outer ring")
            })?;
        owner.holes.push(h);
    }
    Ok(outers)
}

/// The record names of a `.dbf` (dBASE III): the field called NAME, or the
/// first character field; empty names where neither exists.
pub fn dbf_names(b: &[u8], path: &Path) -> Result<Vec<String>, OutlineError> {
    let err = |message: String| OutlineError::Format {
        file: path.to_path_buf(),
        message,
    };
    if b.len() < 33 {
        return Err(err("too short for a dBASE table header".into()));
    }
    let n_records = u32::from_le_bytes([b[4], b[5], b[6], b[7]]) as usize;
    let header_len = u16::from_le_bytes([b[8], b[9]]) as usize;
    let record_len = u16::from_le_bytes([b[10], b[11]]) as usize;
    // Field descriptors: 32 bytes each from byte 32 to the 0x0D terminator.
    let mut fields = Vec::new();
    let mut at = 32;
    let mut offset = 1; // the deletion flag
    while at + 32 <= b.len() && b[at] != 0x0D {
        let d = &b[at..at + 32];
        let name: String = d[..11]
            .iter()
            .take_while(|c| **c != 0)
            .map(|c| *c as char)
            .collect();
        let (kind, len) = (d[11], d[16] as usize);
        fields.push((name.trim().to_string(), kind, offset, len));
        offset += len;
        at += 32;
    }
    if fields.is_empty() || offset > record_len.max(1) || header_len < at {
        return Err(err(format!(
            "the field descriptors ({} fields of {offset} bytes) do not fit the record length {record_len} and header length {header_len}",
            fields.len()
        )));
    }
    let chosen = fields
        .iter()
        .find(|f| f.0.eq_ignore_ascii_case("name"))
        .or_else(|| fields.iter().find(|f| f.1 == b'C'));
    let mut names = Vec::with_capacity(n_records.min(1 << 20));
    for r in 0..n_records {
        let Some(start) = header_len.checked_add(r.saturating_mul(record_len)) else {
            break;
        };
        let Some(rec) = b.get(start..start + record_len) else {
            return Err(err(format!(
                "the table says {n_records} records but ends in record {}",
                r + 1
            )));
        };
        names.push(match chosen {
            Some(&(_, _, off, len)) => rec
                .get(off..off + len)
                .map(|t| String::from_utf8_lossy(t).trim().to_string())
                .unwrap_or_default(),
            None => String::new(),
        });
    }
    Ok(names)
}
