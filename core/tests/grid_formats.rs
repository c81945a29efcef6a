//! Grids a user brings, read through one entry (`grid::read::read_grid`):
//! the same terrain written as GeoTIFF, ESRI ASCII grid (corner and centre
//! registration, with and without a .prj) and gridded XYZ text reads back
//! to the same nodes, values, nodata and reference.

use fieldstone_core::grid::geotiff::write_geotiff;
use fieldstone_core::grid::read::read_grid;
use fieldstone_core::grid::Grid2;
use std::fmt::Write;
use std::path::PathBuf;

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("fieldstone-gridfmt-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn terrain() -> Grid2 {
    let mut g = Grid2::new_empty(451_025.0, 5_400_025.0, 50.0, 50.0, 7, 5).unwrap();
    for j in 0..5 {
        for i in 0..7 {
            g.values[i + 7 * j] = 300.0 + 1.5 * i as f64 - 0.75 * j as f64 + 0.125;
        }
    }
    g.values[3 + 7 * 2] = f64::NAN;
    g.epsg = Some(32617);
    g
}

const WKT: &str = r#"PROJCS["WGS 84 / UTM zone 17N",GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563,AUTHORITY["EPSG","7030"]],AUTHORITY["EPSG","6326"]],PRIMEM["Greenwich",0],UNIT["degree",0.0174532925199433],AUTHORITY["EPSG","4326"]],PROJECTION["Transverse_Mercator"],PARAMETER["central_meridian",-81],PARAMETER["scale_factor",0.9996],PARAMETER["false_easting",500000],UNIT["metre",1,AUTHORITY["EPSG","9001"]],AUTHORITY["EPSG","32617"]]"#;

fn asc(g: &Grid2, corner: bool) -> String {
    let mut s = String::new();
    writeln!(s, "ncols {}\nnrows {}", g.nx, g.ny).unwrap();
    if corner {
        writeln!(
            s,
            "xllcorner {}\nyllcorner {}",
            g.x0 - g.dx / 2.0,
            g.y0 - g.dy / 2.0
        )
        .unwrap();
    } else {
        writeln!(s, "xllcenter {}\nyllcenter {}", g.x0, g.y0).unwrap();
    }
    writeln!(s, "cellsize {}\nNODATA_value -9999", g.dx).unwrap();
    for j in (0..g.ny).rev() {
        let row: Vec<String> = (0..g.nx)
            .map(|i| {
                let v = g.get(i, j);
                if v.is_nan() {
                    "-9999".into()
                } else {
                    format!("{v}")
                }
            })
            .collect();
        writeln!(s, "{}", row.join(" ")).unwrap();
    }
    s
}

fn same(a: &Grid2, b: &Grid2, what: &str) {
    assert_eq!((a.nx, a.ny), (b.nx, b.ny), "{what}");
    assert_eq!((a.x0, a.y0, a.dx, a.dy), (b.x0, b.y0, b.dx, b.dy), "{what}");
    for (p, q) in a.values.iter().zip(&b.values) {
        assert!(
            p == q || (p.is_nan() && q.is_nan()),
            "{what}: {p} against {q}"
        );
    }
    assert_eq!(a.epsg, b.epsg, "{what}");
}

#[test]
fn one_terrain_in_three_formats_reads_the_same() {
    let d = scratch("three");
    let g = terrain();
    write_geotiff(&d.join("t.tif"), &g).unwrap();
    let tif = read_grid(&d.join("t.tif")).unwrap();
    same(&g, &tif, "GeoTIFF");
    for (name, corner) in [("corner", true), ("centre", false)] {
        let p = d.join(format!("{name}.asc"));
        std::fs::write(&p, asc(&g, corner)).unwrap();
        std::fs::write(p.with_extension("prj"), WKT).unwrap();
        same(&g, &read_grid(&p).unwrap(), name);
    }
    // Without a .prj the reference is unknown, not guessed.
    std::fs::write(d.join("bare.asc"), asc(&g, true)).unwrap();
    assert_eq!(read_grid(&d.join("bare.asc")).unwrap().epsg, None);
    // Gridded XYZ text, nodata nodes left out, reference from a .prj.
    let mut xyz = String::from("x,y,z\n");
    for j in 0..g.ny {
        for i in 0..g.nx {
            if g.get(i, j).is_finite() {
                writeln!(xyz, "{},{},{}", g.x_of(i), g.y_of(j), g.get(i, j)).unwrap();
            }
        }
    }
    std::fs::write(d.join("t.xyz"), xyz).unwrap();
    std::fs::write(d.join("t.prj"), WKT).unwrap();
    same(&g, &read_grid(&d.join("t.xyz")).unwrap(), "XYZ");
    let e = read_grid(&d.join("t.png")).unwrap_err().to_string();
    assert!(e.contains("t.png") && e.contains(".asc"), "{e}");
}
