//! VTK RectilinearGrid files read back by an independent parser: Python's
//! xml.etree and struct (script `fixtures/vtk/readback_vtr.py`, output
//! `fixtures/vtk/readback.json`). The test checks that the writer still makes
//! exactly the committed files and that the parser saw the same coordinates
//! and values. FIELDSTONE_WRITE_FIXTURES=1 rewrites the files after a
//! deliberate format change (then rerun the script).

use fieldstone_core::export::voxel::{write_vtr, CellArray, Provenance};
use fieldstone_core::mesh::recipe::{MeshRecipe, Padding};
use fieldstone_core::mesh::TensorMesh;
use std::path::PathBuf;

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(concat!(env!("CARGO_MANIFEST_DIR"), "/fixtures/vtk")).join(name)
}

fn mesh() -> TensorMesh {
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
fn vtr_files_read_back_with_the_same_coordinates_and_values() {
    let m = mesh();
    let model: Vec<f64> = (0..m.n_cells())
        .map(|k| {
            if k % 7 == 0 {
                f64::NAN
            } else {
                0.01 * k as f64 - 0.2
            }
        })
        .collect();
    let lower: Vec<f64> = vec![0.0; m.n_cells()];
    let prov = Provenance {
        program: "Fieldstone test".into(),
        source: "test mesh".into(),
        units: "g/cm3".into(),
        background: "2.67 g/cm3".into(),
        epsg: Some(32755),
    };
    let rb: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(fixture("readback.json")).unwrap_or_else(|_| "{}".into()),
    )
    .unwrap();
    for (name, binary) in [("ascii.vtr", false), ("binary.vtr", true)] {
        let tmp = std::env::temp_dir().join(format!("fieldstone-{name}-{}", std::process::id()));
        write_vtr(
            &tmp,
            &m,
            &[
                CellArray {
                    name: "model",
                    values: &model,
                },
                CellArray {
                    name: "lower",
                    values: &lower,
                },
            ],
            &prov,
            binary,
        )
        .unwrap();
        let bytes = std::fs::read(&tmp).unwrap();
        std::fs::remove_file(&tmp).unwrap();
        if std::env::var("FIELDSTONE_WRITE_FIXTURES").is_ok() {
            std::fs::write(fixture(name), &bytes).unwrap();
            continue;
        }
        assert_eq!(
            bytes,
            std::fs::read(fixture(name)).unwrap(),
            "{name}: the writer's output changed"
        );
        let r = &rb[name];
        let [nx, ny, nz] = m.shape();
        assert_eq!(
            r["extent"],
            serde_json::json!([0, nx, 0, ny, 0, nz]),
            "{name}"
        );
        for (axis, nodes) in [("x", &m.x), ("y", &m.y), ("z", &m.z)] {
            let got: Vec<f64> = r[axis]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap())
                .collect();
            assert_eq!(&got, nodes, "{name} {axis}");
        }
        let vals = r["model"].as_array().unwrap();
        assert_eq!(vals.len(), m.n_cells());
        for (k, v) in vals.iter().enumerate() {
            match v.as_f64() {
                Some(x) => assert_eq!(x, model[k], "{name} cell {k}"),
                None => assert!(model[k].is_nan(), "{name} cell {k}"),
            }
        }
    }
}
