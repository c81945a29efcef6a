//! The constraint builder on small meshes whose answers can be counted by hand.

use fieldstone_core::constraint::build::{
    build, Assignments, Contact, ContactAlong, Defaults, HoleValues, Layer,
};
use fieldstone_core::constraint::region::{Inputs, Level, Region};
use fieldstone_core::constraint::wireframe::Wireframe;
use fieldstone_core::constraint::ConstraintError;
use fieldstone_core::drillhole::{Hole, HoleSet, Interval, SurveyStation};
use fieldstone_core::grid::Grid2;
use fieldstone_core::mesh::recipe::MeshRecipe;
use fieldstone_core::mesh::topo::active_cells;
use fieldstone_core::mesh::TensorMesh;
use std::path::Path;

/// 10 × 8 × 10 cells of 10 m; top at 100 m, bottom at 0 m.
fn mesh() -> TensorMesh {
    MeshRecipe::uniform(10.0, 10.0, [0.0, 100.0], [0.0, 80.0], 100.0, 100.0)
        .build()
        .unwrap()
}

fn layer(name: &str, region: Region, assign: Assignments) -> Layer {
    Layer {
        name: name.into(),
        enabled: true,
        region,
        assign,
    }
}

fn flat_surface(z: f64) -> Grid2 {
    let mut g = Grid2::new_empty(-50.0, -50.0, 25.0, 25.0, 10, 10).unwrap();
    g.values.iter_mut().for_each(|v| *v = z);
    g.note = format!("flat at {z}");
    g
}

#[test]
fn a_planar_contact_reduces_exactly_the_vertical_faces_that_cross_it() {
    // Contact at 63 m: between cell centres 55 (k = 5) and 65 (k = 6), so
    // only the z-faces between layers 5 and 6 (80 of them) are crossed.
    let m = mesh();
    let act = active_cells(&m, None, false, false).unwrap();
    let mut inputs = Inputs::default();
    inputs
        .surfaces
        .insert("base of cover".into(), flat_surface(63.0));
    let l = layer(
        "contact",
        Region::Whole,
        Assignments {
            sharp_contact: Some(Contact {
                factor: 0.01,
                along: ContactAlong::Surface {
                    name: "base of cover".into(),
                },
            }),
            ..Default::default()
        },
    );
    let (a, _) = build(&m, &act, &[l], Defaults::density(), &inputs).unwrap();
    let reduced: Vec<usize> = (0..a.smooth_z.len())
        .filter(|&f| a.smooth_z[f] != 1.0)
        .collect();
    assert_eq!(reduced.len(), 80);
    assert!(
        reduced.iter().all(|&f| f / 80 == 5),
        "faces between layers 5 and 6 only"
    );
    assert!(a.smooth_x.iter().chain(&a.smooth_y).all(|&v| v == 1.0));
    assert!(reduced
        .iter()
        .all(|&f| (a.smooth_z[f] - 0.01).abs() < 1e-15));
}

#[test]
fn a_drill_hole_cylinder_covers_the_cells_counted_by_hand() {
    // Vertical hole at the centre of column (0, 0), collar at 100 m; interval
    // 10–40 m depth, i.e. z 90 to 60. Radius 12 m reaches the column and its
    // four edge neighbours (10 m), not the diagonals (14.1 m); cell centres
    // 85, 75, 65 lie along the interval (95 and 55 lie beyond its ends).
    // Column (0,0) has two in-mesh edge neighbours, so 3 columns × 3 layers.
    let m = mesh();
    let hole = Hole {
        id: "DH1".into(),
        collar: [5.0, 5.0, 100.0],
        total_depth_m: Some(50.0),
        surveys: vec![SurveyStation {
            depth_m: 0.0,
            azimuth_deg: 0.0,
            dip_deg: -90.0,
        }],
        intervals: vec![Interval {
            from_m: 10.0,
            to_m: 40.0,
            values: vec![2.95],
            text: vec![],
            line: 2,
        }],
    };
    let inputs = Inputs {
        holes: Some(HoleSet {
            holes: vec![hole.clone()],
            value_names: vec!["density".into()],
            text_names: vec![],
        }),
        ..Default::default()
    };
    let w = fieldstone_core::constraint::region::membership(
        &Region::DrillHoles {
            radius_m: 12.0,
            decay: false,
        },
        &m,
        &inputs,
    )
    .unwrap();
    let cells: Vec<(usize, usize, usize)> = (0..w.len())
        .filter(|&c| w[c] > 0.0)
        .map(|c| (c % 10, (c / 10) % 8, c / 80))
        .collect();
    assert_eq!(cells.len(), 9, "{cells:?}");
    for (i, j, k) in &cells {
        assert!((*i, *j) == (0, 0) || (*i, *j) == (1, 0) || (*i, *j) == (0, 1));
        assert!((6..=8).contains(k));
    }
    // The same hole as a reference: contrast against 2.67 g/cm³, weight 100.
    let act = active_cells(&m, None, false, false).unwrap();
    let l = layer(
        "logged density",
        Region::Whole,
        Assignments {
            reference_weight: Some(100.0),
            from_holes: Some(HoleValues {
                column: "density".into(),
                background: 2.67,
                radius_m: 12.0,
                decay: true,
            }),
            ..Default::default()
        },
    );
    let (a, _) = build(&m, &act, &[l], Defaults::density(), &inputs).unwrap();
    let c = m.index(0, 0, 7);
    assert!((a.reference[c] - 0.28).abs() < 1e-12);
    assert!(
        (a.reference_weight[c] - 100.0).abs() < 1e-9,
        "on the trace the decay weight is 1"
    );
    let side = m.index(1, 0, 7);
    assert!((a.reference_weight[side] - 100.0 * (1.0 - 10.0 / 12.0)).abs() < 1e-9);
    assert_eq!(a.reference[m.index(5, 5, 7)], 0.0);
}

#[test]
fn later_layers_win_and_switching_them_off_restores_the_earlier() {
    let m = mesh();
    let act = active_cells(&m, None, false, false).unwrap();
    let inputs = Inputs::default();
    let first = layer(
        "cover",
        Region::Box {
            x: [0.0, 100.0],
            y: [0.0, 80.0],
            z: [60.0, 100.0],
        },
        Assignments {
            upper: Some(0.0),
            lower: Some(-0.8),
            reference: Some(-0.6),
            ..Default::default()
        },
    );
    let mut second = layer(
        "gravel lens",
        Region::Polygon {
            vertices: vec![[0.0, 0.0], [50.0, 0.0], [50.0, 40.0], [0.0, 40.0]],
            top: Level::Elevation { z_m: 100.0 },
            bottom: Level::Elevation { z_m: 80.0 },
        },
        Assignments {
            reference: Some(-0.3),
            ..Default::default()
        },
    );
    let c_lens = m.index(2, 2, 9);
    let c_cover = m.index(8, 6, 9);
    let (a, _) = build(
        &m,
        &act,
        &[first.clone(), second.clone()],
        Defaults::density(),
        &inputs,
    )
    .unwrap();
    assert_eq!((a.reference[c_lens], a.reference[c_cover]), (-0.3, -0.6));
    assert_eq!(
        a.upper[c_lens], 0.0,
        "the later layer left the bounds as they were"
    );
    second.enabled = false;
    let (b, _) = build(&m, &act, &[first, second], Defaults::density(), &inputs).unwrap();
    assert_eq!(b.reference[c_lens], -0.6);
}

#[test]
fn inconsistent_layers_are_refused_and_starting_values_clipped() {
    let m = mesh();
    let act = active_cells(&m, None, false, false).unwrap();
    let inputs = Inputs::default();
    let l1 = layer(
        "positive",
        Region::Whole,
        Assignments {
            lower: Some(0.0),
            starting: Some(-0.2),
            ..Default::default()
        },
    );
    let (_, warn) = build(
        &m,
        &act,
        std::slice::from_ref(&l1),
        Defaults::density(),
        &inputs,
    )
    .unwrap();
    assert!(warn[0].contains("800 starting values"), "{warn:?}");
    let l2 = layer(
        "contradiction",
        Region::Box {
            x: [0.0, 30.0],
            y: [0.0, 30.0],
            z: [0.0, 30.0],
        },
        Assignments {
            upper: Some(-0.1),
            ..Default::default()
        },
    );
    let e = build(&m, &act, &[l1.clone(), l2], Defaults::density(), &inputs).unwrap_err();
    assert!(
        matches!(&e, ConstraintError::Bounds { cells: 27, layer, .. } if layer == "contradiction"),
        "{e}"
    );
    let l3 = layer(
        "held",
        Region::Whole,
        Assignments {
            fixed: true,
            ..Default::default()
        },
    );
    assert!(matches!(
        build(&m, &act, &[l1.clone(), l3], Defaults::density(), &inputs),
        Err(ConstraintError::FixedOutside { .. })
    ));
    let l4 = layer(
        "bad weight",
        Region::Whole,
        Assignments {
            reference_weight: Some(-1.0),
            ..Default::default()
        },
    );
    assert!(build(&m, &act, &[l4], Defaults::density(), &inputs)
        .unwrap_err()
        .to_string()
        .contains("bad weight"));
    let l5 = layer(
        "no such",
        Region::AboveSurface {
            surface: "unconformity".into(),
        },
        Assignments::default(),
    );
    let e = build(&m, &act, &[l5], Defaults::density(), &inputs)
        .unwrap_err()
        .to_string();
    assert!(e.contains("no such") && e.contains("unconformity"), "{e}");
}

#[test]
fn wireframe_tabular_and_surface_regions_select_the_right_cells() {
    let m = mesh();
    let act = active_cells(&m, None, false, false).unwrap();
    let cube = "v 20 20 20\nv 60 20 20\nv 60 60 20\nv 20 60 20\nv 20 20 60\nv 60 20 60\nv 60 60 60\nv 20 60 60\n\
                f 1 3 2\nf 1 4 3\nf 5 6 7\nf 5 7 8\nf 1 2 6\nf 1 6 5\nf 2 3 7\nf 2 7 6\nf 3 4 8\nf 3 8 7\nf 4 1 5\nf 4 5 8\n";
    let mut inputs = Inputs::default();
    inputs.wireframes.insert(
        "intrusive top".into(),
        Wireframe::parse_obj(cube, Path::new("c.obj")).unwrap(),
    );
    inputs.surfaces.insert("s".into(), flat_surface(43.0));
    let count = |r: Region| {
        fieldstone_core::constraint::region::membership(&r, &m, &inputs)
            .unwrap()
            .iter()
            .filter(|w| **w > 0.0)
            .count()
    };
    assert_eq!(
        count(Region::Wireframe {
            name: "intrusive top".into()
        }),
        4 * 4 * 4
    );
    assert_eq!(
        count(Region::BelowSurface {
            surface: "s".into()
        }),
        80 * 4
    );
    assert_eq!(
        count(Region::SurfaceBand {
            surface: "s".into(),
            half_thickness_m: 10.0
        }),
        80 * 2
    );
    // A vertical tabular body striking north, 20 m thick, centred on x = 50.
    assert_eq!(
        count(Region::Tabular {
            centre: [50.0, 40.0, 50.0],
            strike_deg: 0.0,
            dip_deg: 90.0,
            length_m: 80.0,
            depth_extent_m: 100.0,
            thickness_m: 20.0
        }),
        2 * 8 * 10
    );
    // Reference gradient from relative values: +1 below the surface.
    let l = layer(
        "relative",
        Region::BelowSurface {
            surface: "s".into(),
        },
        Assignments {
            relative_value: Some(1.0),
            ..Default::default()
        },
    );
    let (a, _) = build(&m, &act, &[l], Defaults::density(), &inputs).unwrap();
    let nonzero: Vec<usize> = (0..a.ref_grad_z.len())
        .filter(|&f| a.ref_grad_z[f] != 0.0)
        .collect();
    assert_eq!(nonzero.len(), 80);
    assert!(
        nonzero
            .iter()
            .all(|&f| (a.ref_grad_z[f] + 0.1).abs() < 1e-12),
        "going up from 1 to 0 over 10 m"
    );
}
