//! GeoTIFF grids (OGC GeoTIFF 1.1, OGC 19-008r4).
//!
//! Read: one band of any integer or floating sample type; georeferencing from
//! ModelPixelScale + ModelTiepoint or from a north-up ModelTransformation;
//! pixel-is-area (the default) or pixel-is-point from GTRasterTypeGeoKey; the
//! EPSG code from ProjectedCSTypeGeoKey or GeographicTypeGeoKey; nodata from
//! the GDAL_NODATA tag (42113). Rotated or sheared rasters are refused.
//!
//! Write: Float32, pixel-is-area, tie point at the upper-left corner, the EPSG
//! code when known, nodata written as the GDAL_NODATA value below.

use super::{Grid2, GridError, MAX_NODES};
use std::io::{BufReader, Cursor};
use std::path::{Path, PathBuf};
use thiserror::Error;
use tiff::decoder::{Decoder, DecodingResult, Limits};
use tiff::encoder::{colortype, TiffEncoder};
use tiff::tags::Tag;

/// Value written for nodata cells, also stored in the GDAL_NODATA tag so GIS
/// programs mask it (common practice sentinel; no potential-field, terrain or
/// model grid holds it as a real value).
pub const NODATA_WRITTEN: f32 = -99999.0;

const TAG_GDAL_NODATA: u16 = 42113;
const KEY_MODEL_TYPE: u16 = 1024;
const KEY_RASTER_TYPE: u16 = 1025;
const KEY_GEOGRAPHIC_TYPE: u16 = 2048;
const KEY_PROJECTED_TYPE: u16 = 3072;

#[derive(Debug, Error)]
pub enum GeoTiffError {
    #[error("cannot read {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: not a readable TIFF: {message}")]
    Decode { file: PathBuf, message: String },
    #[error("{file}: the TIFF has no georeferencing (no ModelPixelScale and ModelTiepoint, and no ModelTransformation); it cannot be placed on the map")]
    NoGeoreference { file: PathBuf },
    #[error("{file}: the raster is rotated or sheared (ModelTransformation has cross terms {b} and {e}); warp it to a north-up grid first")]
    Rotated { file: PathBuf, b: f64, e: f64 },
    #[error("{file}: the raster is not north-up (pixel scale {sx}, {sy}); warp it to a north-up grid first")]
    NotNorthUp { file: PathBuf, sx: f64, sy: f64 },
    #[error("{file}: the image has {0} samples per pixel; a grid file must have one band", .bands)]
    Bands { file: PathBuf, bands: u16 },
    #[error("{file}: {source}")]
    Size { file: PathBuf, source: GridError },
    #[error("could not write {file}: {message}")]
    Write { file: PathBuf, message: String },
}

impl From<crate::io::atomic::WriteError> for GeoTiffError {
    fn from(e: crate::io::atomic::WriteError) -> Self {
        GeoTiffError::Write {
            file: e.path.clone(),
            message: e.source.to_string(),
        }
    }
}

/// Reads a single-band GeoTIFF into a grid.
pub fn read_geotiff(path: &Path) -> Result<Grid2, GeoTiffError> {
    let f = std::fs::File::open(path).map_err(|source| GeoTiffError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    decode_geotiff(BufReader::new(f), path)
}

/// Reads a GeoTIFF from bytes in memory (tests, fuzzing); `path` is used in
/// messages only.
pub fn read_geotiff_bytes(bytes: &[u8], path: &Path) -> Result<Grid2, GeoTiffError> {
    decode_geotiff(std::io::Cursor::new(bytes), path)
}

/// Decodes, turning a panic inside the TIFF decoder into an error: the
/// `tiff` crate (0.10.3) indexes an empty SampleFormat tag (found by the
/// `geotiff` fuzz target), and a damaged file must not end the program.
fn decode_geotiff<R: std::io::Read + std::io::Seek>(
    f: R,
    path: &Path,
) -> Result<Grid2, GeoTiffError> {
    std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| decode_unguarded(f, path)))
        .unwrap_or_else(|panic| {
            let why = panic
                .downcast_ref::<String>()
                .map(String::as_str)
                .or_else(|| panic.downcast_ref::<&str>().copied())
                .unwrap_or("unknown");
            Err(GeoTiffError::Decode {
                file: path.to_path_buf(),
                message: format!(
                    "the file is damaged in a way the TIFF decoder could not handle ({why})"
                ),
            })
        })
}

fn decode_unguarded<R: std::io::Read + std::io::Seek>(
    f: R,
    path: &Path,
) -> Result<Grid2, GeoTiffError> {
    let file = path.to_path_buf();
    let dec_err = |e: tiff::TiffError| GeoTiffError::Decode {
        file: path.to_path_buf(),
        message: e.to_string(),
    };
    let mut limits = Limits::default();
    limits.decoding_buffer_size = MAX_NODES * 8;
    limits.ifd_value_size = 64 << 20;
    limits.intermediate_buffer_size = 512 << 20;
    let mut d = Decoder::new(f).map_err(dec_err)?.with_limits(limits);
    let (w, h) = d.dimensions().map_err(dec_err)?;
    let (nx, ny) = (w as usize, h as usize);
    if let Some(spp) = d
        .find_tag_unsigned::<u16>(Tag::SamplesPerPixel)
        .map_err(dec_err)?
    {
        if spp != 1 {
            return Err(GeoTiffError::Bands { file, bands: spp });
        }
    }
    let nodes = nx.saturating_mul(ny);
    if nodes > MAX_NODES {
        return Err(GeoTiffError::Size {
            file,
            source: GridError::TooBig {
                nx,
                ny,
                nodes,
                mb: nodes as f64 * 8.0 / 1e6,
                max: MAX_NODES,
            },
        });
    }
    // Georeferencing.
    let keys = d
        .find_tag(Tag::GeoKeyDirectoryTag)
        .map_err(dec_err)?
        .map(|v| v.into_u16_vec())
        .transpose()
        .map_err(dec_err)?
        .unwrap_or_default();
    let key = |id: u16| -> Option<u16> {
        keys.get(4..)
            .unwrap_or(&[])
            .chunks_exact(4)
            .find(|k| k[0] == id && k[1] == 0)
            .map(|k| k[3])
    };
    let pixel_is_point = key(KEY_RASTER_TYPE) == Some(2);
    let epsg = key(KEY_PROJECTED_TYPE)
        .or(key(KEY_GEOGRAPHIC_TYPE))
        .filter(|&c| c != 0 && c != 32767)
        .map(u32::from);
    let f64s = |d: &mut Decoder<R>, t: Tag| -> Result<Option<Vec<f64>>, GeoTiffError> {
        match d.find_tag(t).map_err(dec_err)? {
            Some(v) => Ok(Some(v.into_f64_vec().map_err(dec_err)?)),
            None => Ok(None),
        }
    };
    let scale = f64s(&mut d, Tag::ModelPixelScaleTag)?;
    let tie = f64s(&mut d, Tag::ModelTiepointTag)?;
    let matrix = f64s(&mut d, Tag::ModelTransformationTag)?;
    // (x of column 0's reference point, dx, y of row 0's reference point, dy)
    let (x_ref, dx, y_ref, dy) = match (scale, tie, matrix) {
        (Some(s), Some(t), _) if s.len() >= 2 && t.len() >= 6 => {
            if !(s[0] > 0.0 && s[1] > 0.0) {
                return Err(GeoTiffError::NotNorthUp {
                    file,
                    sx: s[0],
                    sy: s[1],
                });
            }
            (t[3] - t[0] * s[0], s[0], t[4] + t[1] * s[1], s[1])
        }
        (_, _, Some(m)) if m.len() >= 16 => {
            let (a, b, dd, e, f, hh) = (m[0], m[1], m[3], m[4], m[5], m[7]);
            if b != 0.0 || e != 0.0 {
                return Err(GeoTiffError::Rotated { file, b, e });
            }
            if !(a > 0.0 && f < 0.0) {
                return Err(GeoTiffError::NotNorthUp {
                    file,
                    sx: a,
                    sy: -f,
                });
            }
            (dd, a, hh, -f)
        }
        _ => return Err(GeoTiffError::NoGeoreference { file }),
    };
    let nodata: Option<f64> = match d.find_tag(Tag::Unknown(TAG_GDAL_NODATA)).map_err(dec_err)? {
        Some(v) => v
            .into_string()
            .ok()
            .and_then(|s| s.trim_matches(char::from(0)).trim().parse::<f64>().ok()),
        None => None,
    };
    let data: Vec<f64> = match d.read_image().map_err(dec_err)? {
        DecodingResult::U8(v) => v.into_iter().map(f64::from).collect(),
        DecodingResult::U16(v) => v.into_iter().map(f64::from).collect(),
        DecodingResult::U32(v) => v.into_iter().map(f64::from).collect(),
        DecodingResult::U64(v) => v.into_iter().map(|a| a as f64).collect(),
        DecodingResult::I8(v) => v.into_iter().map(f64::from).collect(),
        DecodingResult::I16(v) => v.into_iter().map(f64::from).collect(),
        DecodingResult::I32(v) => v.into_iter().map(f64::from).collect(),
        DecodingResult::I64(v) => v.into_iter().map(|a| a as f64).collect(),
        DecodingResult::F16(v) => v.into_iter().map(f64::from).collect(),
        DecodingResult::F32(v) => v.into_iter().map(f64::from).collect(),
        DecodingResult::F64(v) => v,
    };
    if data.len() != nodes {
        return Err(GeoTiffError::Decode {
            file,
            message: format!("expected {nodes} samples, decoded {}", data.len()),
        });
    }
    let half = if pixel_is_point { 0.0 } else { 0.5 };
    let x0 = x_ref + half * dx;
    let y_top = y_ref - half * dy;
    let mut g =
        Grid2::new_empty(x0, y_top - (ny as f64 - 1.0) * dy, dx, dy, nx, ny).map_err(|source| {
            GeoTiffError::Size {
                file: file.clone(),
                source,
            }
        })?;
    for r in 0..ny {
        let j = ny - 1 - r;
        for c in 0..nx {
            let v = data[c + nx * r];
            let is_nodata =
                !v.is_finite() || nodata.is_some_and(|nd| v == nd || nd as f32 == v as f32);
            g.values[c + nx * j] = if is_nodata { f64::NAN } else { v };
        }
    }
    g.epsg = epsg;
    g.note = format!("read from {}", path.display());
    Ok(g)
}

/// Writes a grid as a Float32 GeoTIFF, atomically.
pub fn write_geotiff(path: &Path, g: &Grid2) -> Result<(), GeoTiffError> {
    let werr = |e: tiff::TiffError| GeoTiffError::Write {
        file: path.to_path_buf(),
        message: e.to_string(),
    };
    let mut buf = Cursor::new(Vec::new());
    {
        let mut enc = TiffEncoder::new(&mut buf).map_err(werr)?;
        let mut img = enc
            .new_image::<colortype::Gray32Float>(g.nx as u32, g.ny as u32)
            .map_err(werr)?;
        let (xmin, _, _, ymax) = g.extent();
        img.encoder()
            .write_tag(Tag::ModelPixelScaleTag, &[g.dx, g.dy, 0.0][..])
            .map_err(werr)?;
        img.encoder()
            .write_tag(Tag::ModelTiepointTag, &[0.0, 0.0, 0.0, xmin, ymax, 0.0][..])
            .map_err(werr)?;
        let mut keys: Vec<u16> = vec![1, 1, 0, 0];
        let mut push = |k: u16, v: u16| {
            keys.extend_from_slice(&[k, 0, 1, v]);
            keys[3] += 1;
        };
        match g
            .epsg
            .and_then(|c| crate::geodesy::crs::Crs::from_epsg(c).ok())
        {
            Some(c) if c.is_geographic() => {
                push(KEY_MODEL_TYPE, 2);
                push(KEY_RASTER_TYPE, 1);
                push(KEY_GEOGRAPHIC_TYPE, c.epsg() as u16);
            }
            Some(c) => {
                push(KEY_MODEL_TYPE, 1);
                push(KEY_RASTER_TYPE, 1);
                push(KEY_PROJECTED_TYPE, c.epsg() as u16);
            }
            None => push(KEY_RASTER_TYPE, 1),
        }
        img.encoder()
            .write_tag(Tag::GeoKeyDirectoryTag, &keys[..])
            .map_err(werr)?;
        img.encoder()
            .write_tag(
                Tag::Unknown(TAG_GDAL_NODATA),
                &format!("{NODATA_WRITTEN}")[..],
            )
            .map_err(werr)?;
        let mut data = vec![0f32; g.nx * g.ny];
        for r in 0..g.ny {
            let j = g.ny - 1 - r;
            for c in 0..g.nx {
                let v = g.values[c + g.nx * j];
                data[c + g.nx * r] = if v.is_finite() {
                    v as f32
                } else {
                    NODATA_WRITTEN
                };
            }
        }
        img.write_data(&data).map_err(werr)?;
    }
    let bytes = buf.into_inner();
    crate::io::atomic::write_atomically::<GeoTiffError>(path, |w| {
        w.write_all(&bytes).map_err(|e| GeoTiffError::Write {
            file: path.to_path_buf(),
            message: e.to_string(),
        })
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn write_then_read_round_trips_values_nodata_and_georeferencing() {
        let mut g = Grid2::new_empty(500_012.5, 7_000_012.5, 25.0, 25.0, 6, 4).unwrap();
        for (k, v) in g.values.iter_mut().enumerate() {
            *v = 100.0 + k as f64 * 0.5;
        }
        g.values[7] = f64::NAN;
        g.epsg = Some(32755);
        let p = std::env::temp_dir().join(format!("fieldstone-gt-{}.tif", std::process::id()));
        write_geotiff(&p, &g).unwrap();
        let r = read_geotiff(&p).unwrap();
        assert_eq!(
            (r.nx, r.ny, r.dx, r.dy, r.x0, r.y0, r.epsg),
            (6, 4, 25.0, 25.0, 500_012.5, 7_000_012.5, Some(32755))
        );
        for k in 0..24 {
            if k == 7 {
                assert!(r.values[k].is_nan());
            } else {
                assert_eq!(r.values[k], g.values[k]);
            }
        }
        std::fs::remove_file(&p).unwrap();
    }

    #[test]
    fn garbage_is_a_decode_error_naming_the_file() {
        let p = std::env::temp_dir().join(format!("fieldstone-gt-bad-{}.tif", std::process::id()));
        std::fs::write(&p, b"II*\0garbage garbage").unwrap();
        let e = read_geotiff(&p).unwrap_err().to_string();
        assert!(e.contains("fieldstone-gt-bad"), "{e}");
        std::fs::remove_file(&p).unwrap();
    }
}
