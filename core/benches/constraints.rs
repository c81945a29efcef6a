//! Constraint-builder benchmark: all arrays for a 1-million-cell mesh with 20
//! layers, one of them a 100,000-triangle wireframe.
//!
//! `cargo bench -p fieldstone-core --bench constraints`

use fieldstone_core::constraint::build::{
    build, Assignments, Contact, ContactAlong, Defaults, Layer,
};
use fieldstone_core::constraint::region::{Inputs, Level, Region};
use fieldstone_core::constraint::wireframe::Wireframe;
use fieldstone_core::grid::Grid2;
use fieldstone_core::mesh::recipe::MeshRecipe;
use fieldstone_core::mesh::topo::active_cells;
use std::time::Instant;

/// A closed UV sphere with `n` latitude bands and `n` longitudes.
fn sphere(c: [f64; 3], r: f64, n: usize) -> Wireframe {
    let mut v = vec![[c[0], c[1], c[2] + r]];
    for a in 1..n {
        let th = std::f64::consts::PI * a as f64 / n as f64;
        for b in 0..n {
            let ph = 2.0 * std::f64::consts::PI * b as f64 / n as f64;
            v.push([
                c[0] + r * th.sin() * ph.cos(),
                c[1] + r * th.sin() * ph.sin(),
                c[2] + r * th.cos(),
            ]);
        }
    }
    v.push([c[0], c[1], c[2] - r]);
    let south = (v.len() - 1) as u32;
    let ring = |a: usize, b: usize| (1 + (a - 1) * n + b % n) as u32;
    let mut t = Vec::new();
    for b in 0..n {
        t.push([0, ring(1, b), ring(1, b + 1)]);
        t.push([south, ring(n - 1, b + 1), ring(n - 1, b)]);
    }
    for a in 1..n - 1 {
        for b in 0..n {
            t.push([ring(a, b), ring(a + 1, b), ring(a + 1, b + 1)]);
            t.push([ring(a, b), ring(a + 1, b + 1), ring(a, b + 1)]);
        }
    }
    Wireframe {
        name: "body".into(),
        vertices: v,
        triangles: t,
    }
}

fn main() {
    let recipe = MeshRecipe::uniform(10.0, 10.0, [0.0, 1000.0], [0.0, 1000.0], 300.0, 1000.0);
    let mesh = recipe.build().unwrap();
    let mut dem = Grid2::new_empty(-50.0, -50.0, 25.0, 25.0, 45, 45).unwrap();
    for (k, v) in dem.values.iter_mut().enumerate() {
        *v = 250.0 + 20.0 * ((k % 45) as f64 / 7.0).sin();
    }
    let mut base = dem.clone();
    base.values.iter_mut().for_each(|v| *v -= 30.0);
    let wf = sphere([500.0, 500.0, -200.0], 180.0, 224);
    println!(
        "mesh {} cells, wireframe {} triangles",
        mesh.n_cells(),
        wf.triangles.len()
    );
    let mut inputs = Inputs::default();
    inputs.surfaces.insert("base of cover".into(), base);
    inputs.wireframes.insert("body".into(), wf);
    let t0 = Instant::now();
    let act = active_cells(&mesh, Some(&dem), true, true).unwrap();
    let mut layers = vec![
        Layer {
            name: "positive".into(),
            enabled: true,
            region: Region::Whole,
            assign: Assignments {
                lower: Some(0.0),
                upper: Some(0.2),
                ..Default::default()
            },
        },
        Layer {
            name: "cover".into(),
            enabled: true,
            region: Region::AboveSurface {
                surface: "base of cover".into(),
            },
            assign: Assignments {
                upper: Some(0.001),
                reference: Some(0.0),
                reference_weight: Some(10.0),
                ..Default::default()
            },
        },
        Layer {
            name: "contact".into(),
            enabled: true,
            region: Region::Whole,
            assign: Assignments {
                sharp_contact: Some(Contact {
                    factor: 0.05,
                    along: ContactAlong::Surface {
                        name: "base of cover".into(),
                    },
                }),
                ..Default::default()
            },
        },
        Layer {
            name: "intrusive".into(),
            enabled: true,
            region: Region::Wireframe {
                name: "body".into(),
            },
            assign: Assignments {
                reference: Some(0.05),
                reference_weight: Some(5.0),
                ..Default::default()
            },
        },
    ];
    for k in 0..16 {
        let x0 = 50.0 * k as f64;
        layers.push(Layer {
            name: format!("block {k}"),
            enabled: true,
            region: if k % 2 == 0 {
                Region::Box {
                    x: [x0, x0 + 100.0],
                    y: [100.0, 900.0],
                    z: [-500.0, 0.0],
                }
            } else {
                Region::Polygon {
                    vertices: vec![[x0, 0.0], [x0 + 80.0, 0.0], [x0 + 40.0, 800.0]],
                    top: Level::Elevation { z_m: 100.0 },
                    bottom: Level::Surface {
                        name: "base of cover".into(),
                        offset_m: -400.0,
                    },
                }
            },
            assign: Assignments {
                smoothness: Some([1.0, 2.0, 0.5]),
                reference: Some(0.01 * k as f64),
                ..Default::default()
            },
        });
    }
    let (a, warnings) = build(&mesh, &act, &layers, Defaults::susceptibility(), &inputs).unwrap();
    let secs = t0.elapsed().as_secs_f64();
    println!(
        "{:<60} {:>8.2} s",
        format!("active cells + {} layers -> all arrays", layers.len()),
        secs
    );
    println!(
        "  active {} of {}, {} warnings, {} cells referenced inside the wireframe",
        act.count(),
        mesh.n_cells(),
        warnings.len(),
        a.reference.iter().filter(|v| **v == 0.05).count()
    );
}
