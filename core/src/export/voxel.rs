//! Voxel files. Cell order everywhere is x fastest, then y, then z from the
//! bottom (the project convention, which is also VTK's and NumPy C order with
//! shape (nz, ny, nx)). Air or inactive cells are written as NaN.

use crate::io::atomic::{write_atomically, WriteError};
use crate::mesh::TensorMesh;
use serde::Serialize;
use std::io::Write;
use std::path::Path;
use thiserror::Error;

#[derive(Debug, Error)]
pub enum ExportError {
    #[error(transparent)]
    Write(#[from] WriteError),
    #[error("could not write {file}: {message}")]
    Io { file: String, message: String },
    #[error("array '{name}' has {got} values but the mesh has {want} cells")]
    Length {
        name: String,
        got: usize,
        want: usize,
    },
    #[error("{0}")]
    Request(String),
}

/// A named cell array.
pub struct CellArray<'a> {
    pub name: &'a str,
    pub values: &'a [f64],
}

/// What an export came from, recorded in every file.
#[derive(Debug, Clone, Serialize)]
pub struct Provenance {
    pub program: String,
    pub source: String,
    pub units: String,
    pub background: String,
    pub epsg: Option<u32>,
}

fn check(mesh: &TensorMesh, arrays: &[CellArray]) -> Result<(), ExportError> {
    for a in arrays {
        if a.values.len() != mesh.n_cells() {
            return Err(ExportError::Length {
                name: a.name.to_string(),
                got: a.values.len(),
                want: mesh.n_cells(),
            });
        }
    }
    Ok(())
}

fn io(path: &Path) -> impl Fn(std::io::Error) -> ExportError + '_ {
    move |e| ExportError::Io {
        file: path.display().to_string(),
        message: e.to_string(),
    }
}

fn xml_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Writes a `.vtr` file with one CellData array per entry of `arrays`.
pub fn write_vtr(
    path: &Path,
    mesh: &TensorMesh,
    arrays: &[CellArray],
    prov: &Provenance,
    binary: bool,
) -> Result<(), ExportError> {
    check(mesh, arrays)?;
    let [nx, ny, nz] = mesh.shape();
    write_atomically::<ExportError>(path, |w| {
        let e = io(path);
        writeln!(w, "<?xml version=\"1.0\"?>").map_err(&e)?;
        writeln!(
            w,
            "<!-- {} ; source: {} ; units: {} ; background: {} ; EPSG: {} -->",
            xml_escape(&prov.program),
            xml_escape(&prov.source),
            xml_escape(&prov.units),
            xml_escape(&prov.background),
            prov.epsg
                .map(|c| c.to_string())
                .unwrap_or_else(|| "unknown".into())
        )
        .map_err(&e)?;
        writeln!(w, "<VTKFile type=\"RectilinearGrid\" version=\"1.0\" byte_order=\"LittleEndian\" header_type=\"UInt64\">").map_err(&e)?;
        writeln!(
            w,
            "  <RectilinearGrid WholeExtent=\"0 {nx} 0 {ny} 0 {nz}\">"
        )
        .map_err(&e)?;
        writeln!(w, "    <Piece Extent=\"0 {nx} 0 {ny} 0 {nz}\">").map_err(&e)?;
        let first = arrays.first().map(|a| a.name).unwrap_or("");
        writeln!(w, "      <CellData Scalars=\"{}\">", xml_escape(first)).map_err(&e)?;
        let mut blocks: Vec<Vec<f64>> = Vec::new();
        let mut offset: u64 = 0;
        let mut array = |w: &mut dyn Write,
                         name: &str,
                         values: &[f64],
                         indent: &str|
         -> Result<(), ExportError> {
            if binary {
                writeln!(w, "{indent}<DataArray type=\"Float64\" Name=\"{}\" format=\"appended\" offset=\"{offset}\"/>", xml_escape(name)).map_err(&e)?;
                offset += 8 + 8 * values.len() as u64;
                blocks.push(values.to_vec());
            } else {
                writeln!(
                    w,
                    "{indent}<DataArray type=\"Float64\" Name=\"{}\" format=\"ascii\">",
                    xml_escape(name)
                )
                .map_err(&e)?;
                for chunk in values.chunks(6) {
                    let line: Vec<String> = chunk
                        .iter()
                        .map(|v| {
                            if v.is_finite() {
                                format!("{v}")
                            } else {
                                "nan".into()
                            }
                        })
                        .collect();
                    writeln!(w, "{indent}  {}", line.join(" ")).map_err(&e)?;
                }
                writeln!(w, "{indent}</DataArray>").map_err(&e)?;
            }
            Ok(())
        };
        for a in arrays {
            array(w, a.name, a.values, "        ")?;
        }
        writeln!(w, "      </CellData>").map_err(&e)?;
        writeln!(w, "      <Coordinates>").map_err(&e)?;
        array(w, "x", &mesh.x, "        ")?;
        array(w, "y", &mesh.y, "        ")?;
        array(w, "z", &mesh.z, "        ")?;
        writeln!(w, "      </Coordinates>").map_err(&e)?;
        writeln!(w, "    </Piece>").map_err(&e)?;
        writeln!(w, "  </RectilinearGrid>").map_err(&e)?;
        if binary {
            write!(w, "  <AppendedData encoding=\"raw\">\n   _").map_err(&e)?;
            for b in &blocks {
                w.write_all(&((b.len() * 8) as u64).to_le_bytes())
                    .map_err(&e)?;
                for v in b {
                    w.write_all(&v.to_le_bytes()).map_err(&e)?;
                }
            }
            writeln!(w, "\n  </AppendedData>").map_err(&e)?;
        }
        writeln!(w, "</VTKFile>").map_err(&e)?;
        Ok(())
    })
}

/// Writes a NumPy `.npy` (format 1.0, little-endian f64, C order, shape
/// (nz, ny, nx)) per NEP 1.
pub fn write_npy(path: &Path, mesh: &TensorMesh, values: &[f64]) -> Result<(), ExportError> {
    check(
        mesh,
        &[CellArray {
            name: "array",
            values,
        }],
    )?;
    let [nx, ny, nz] = mesh.shape();
    let mut header =
        format!("{{'descr': '<f8', 'fortran_order': False, 'shape': ({nz}, {ny}, {nx}), }}");
    // magic (6) + version (2) + length (2) + header + '\n' is a multiple of 64.
    while (10 + header.len() + 1) % 64 != 0 {
        header.push(' ');
    }
    header.push('\n');
    write_atomically::<ExportError>(path, |w| {
        let e = io(path);
        w.write_all(b"\x93NUMPY\x01\x00").map_err(&e)?;
        w.write_all(&(header.len() as u16).to_le_bytes())
            .map_err(&e)?;
        w.write_all(header.as_bytes()).map_err(&e)?;
        for v in values {
            w.write_all(&v.to_le_bytes()).map_err(&e)?;
        }
        Ok(())
    })
}

/// The JSON mesh description written beside `.npy` arrays.
#[derive(Debug, Serialize)]
pub struct MeshDescription<'a> {
    pub cell_order: &'static str,
    pub shape_zyx: [usize; 3],
    pub origin_m: [f64; 3],
    pub cell_widths_x_m: Vec<f64>,
    pub cell_widths_y_m: Vec<f64>,
    pub cell_widths_z_m: Vec<f64>,
    pub provenance: &'a Provenance,
}

pub fn mesh_description<'a>(mesh: &TensorMesh, prov: &'a Provenance) -> MeshDescription<'a> {
    let widths = |v: &[f64]| v.windows(2).map(|w| w[1] - w[0]).collect::<Vec<f64>>();
    let [nx, ny, nz] = mesh.shape();
    MeshDescription {
        cell_order:
            "x fastest, then y, then z from the bottom (NumPy C order with shape (nz, ny, nx))",
        shape_zyx: [nz, ny, nx],
        origin_m: [mesh.x[0], mesh.y[0], mesh.z[0]],
        cell_widths_x_m: widths(&mesh.x),
        cell_widths_y_m: widths(&mesh.y),
        cell_widths_z_m: widths(&mesh.z),
        provenance: prov,
    }
}

/// Writes `x,y,z,dx,dy,dz,<arrays...>` for every cell where `active` is true
/// (cell centres), with a comment line of provenance.
pub fn write_cell_table(
    path: &Path,
    mesh: &TensorMesh,
    active: &[bool],
    arrays: &[CellArray],
    prov: &Provenance,
) -> Result<(), ExportError> {
    check(mesh, arrays)?;
    let [nx, ny, nz] = mesh.shape();
    write_atomically::<ExportError>(path, |w| {
        let e = io(path);
        writeln!(
            w,
            "# {} ; source: {} ; units: {} ; background: {} ; EPSG: {}",
            prov.program,
            prov.source,
            prov.units,
            prov.background,
            prov.epsg
                .map(|c| c.to_string())
                .unwrap_or_else(|| "unknown".into())
        )
        .map_err(&e)?;
        let names: Vec<&str> = arrays.iter().map(|a| a.name).collect();
        writeln!(w, "x,y,z,dx,dy,dz,{}", names.join(",")).map_err(&e)?;
        for k in 0..nz {
            for j in 0..ny {
                for i in 0..nx {
                    let c = mesh.index(i, j, k);
                    if !active[c] {
                        continue;
                    }
                    let p = mesh.centre(i, j, k);
                    write!(
                        w,
                        "{},{},{},{},{},{}",
                        p[0],
                        p[1],
                        p[2],
                        mesh.x[i + 1] - mesh.x[i],
                        mesh.y[j + 1] - mesh.y[j],
                        mesh.z[k + 1] - mesh.z[k]
                    )
                    .map_err(&e)?;
                    for a in arrays {
                        write!(w, ",{}", a.values[c]).map_err(&e)?;
                    }
                    writeln!(w).map_err(&e)?;
                }
            }
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::mesh::recipe::{MeshRecipe, Padding};

    pub(crate) fn small_mesh() -> TensorMesh {
        MeshRecipe {
            cell_xy_m: [10.0, 20.0],
            cell_z_m: 5.0,
            z_growth: 1.5,
            x_range_m: [0.0, 30.0],
            y_range_m: [0.0, 40.0],
            top_m: 100.0,
            depth_m: 20.0,
            padding: Padding::Expanding {
                cells: 1,
                factor: 2.0,
            },
            bottom_padding_cells: 0,
            bottom_padding_factor: 1.0,
        }
        .build()
        .unwrap()
    }

    #[test]
    fn npy_header_is_aligned_and_data_follow() {
        let m = small_mesh();
        let v: Vec<f64> = (0..m.n_cells()).map(|k| k as f64).collect();
        let p = std::env::temp_dir().join(format!("fieldstone-npy-{}.npy", std::process::id()));
        write_npy(&p, &m, &v).unwrap();
        let b = std::fs::read(&p).unwrap();
        assert_eq!(&b[..8], b"\x93NUMPY\x01\x00");
        let hl = u16::from_le_bytes([b[8], b[9]]) as usize;
        assert_eq!((10 + hl) % 64, 0);
        let [nx, ny, nz] = m.shape();
        assert!(String::from_utf8_lossy(&b[10..10 + hl])
            .contains(&format!("'shape': ({nz}, {ny}, {nx})")));
        assert_eq!(b.len(), 10 + hl + 8 * m.n_cells());
        let last = f64::from_le_bytes(b[b.len() - 8..].try_into().unwrap());
        assert_eq!(last, (m.n_cells() - 1) as f64);
        std::fs::remove_file(&p).unwrap();
        let short = vec![0.0; 3];
        assert!(matches!(
            write_npy(&p, &m, &short),
            Err(ExportError::Length { .. })
        ));
    }
}
