//! Reference checks of the prism kernels against sources outside the closed
//! forms: independent cubature, the point-mass and dipole limits, the Bouguer
//! slab, superposition, symmetry, and a uniformly magnetized sphere.

use fieldstone_core::physics::gravity::{prism_gravity_mgal, prism_gz_mgal};
use fieldstone_core::physics::magnetic::{prism_field_nt, tmi_nt, InducingField};
use fieldstone_core::physics::Prism;
use fieldstone_tests::{b_by_cubature, gz_by_cubature, G};

fn block() -> Prism {
    Prism::new([100.0, 300.0], [-50.0, 50.0], [-400.0, -100.0]).unwrap()
}

fn bounds(p: &Prism) -> [[f64; 2]; 3] {
    [p.x, p.y, p.z]
}

fn norm(v: [f64; 3]) -> f64 {
    (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()
}

/// Stations outside the block at several distances, including the positions
/// that exercise the singular branches of the closed form: directly above a
/// vertex, on the extension of an edge, in the plane of a face, level with the
/// body, below it.
fn outside_stations() -> Vec<[f64; 3]> {
    vec![
        [200.0, 0.0, 0.0],      // above the centre
        [100.0, -50.0, -20.0],  // directly above a vertex
        [300.0, 50.0, 50.0],    // above the opposite vertex
        [100.0, -80.0, -250.0], // in the plane x = 100 (a face plane), beside the body
        [100.0, 50.0, 10.0],    // on the extension of a vertical edge, above
        [100.0, 50.0, -600.0],  // on the extension of a vertical edge, below
        [50.0, 0.0, -250.0],    // level with the body, west
        [200.0, 0.0, -450.0],   // below the body
        [320.0, 60.0, -90.0],   // near a corner, 20 m off
        [200.0, 55.0, -250.0],  // 5 m off the north face
        [-900.0, 700.0, 300.0], // a few body sizes away
    ]
}

#[test]
fn gravity_matches_independent_cubature_to_1e_8() {
    // Composite 8-point Gauss–Legendre written in the test crate
    // (Abramowitz & Stegun Table 25.4 nodes), no code shared with core.
    let p = block();
    for st in outside_stations() {
        let closed = prism_gravity_mgal(&p, st, 0.3);
        let cub = gz_by_cubature(bounds(&p), st, 0.3);
        let scale = norm(cub);
        for a in 0..3 {
            assert!(
                (closed[a] - cub[a]).abs() <= 1e-8 * scale,
                "station {st:?} component {a}: closed {closed:?} cubature {cub:?}"
            );
        }
        // The g_z-only path gives the same value as the three-component path.
        assert!((prism_gz_mgal(&p, st, 0.3) - closed[2]).abs() <= 1e-13 * scale);
    }
}

#[test]
fn magnetic_field_matches_independent_cubature_to_1e_8() {
    let p = block();
    let m = [0.7, -0.4, 1.1]; // A/m, an arbitrary direction (remanence-like)
    for st in outside_stations() {
        let closed = prism_field_nt(&p, st, m).expect("no station is on an edge");
        let cub = b_by_cubature(bounds(&p), st, m);
        let scale = norm(cub);
        for a in 0..3 {
            assert!(
                (closed[a] - cub[a]).abs() <= 1e-8 * scale,
                "station {st:?} component {a}: closed {closed:?} cubature {cub:?}"
            );
        }
    }
}

#[test]
fn far_field_equals_point_mass_and_dipole_at_ten_thousand_sizes() {
    // Blakely (1995), §3.2 and §4.2: outside a compact body the field tends to
    // that of a point mass / dipole at its centre, with a relative correction
    // of order (size/distance)², here 10⁻⁸.
    let p = Prism::new([-10.0, 10.0], [-15.0, 15.0], [-50.0, -30.0]).unwrap();
    let c = p.centre();
    let size = p.diagonal_m();
    let rho = 0.5;
    let mass_kg = p.volume_m3() * rho * 1000.0;
    let m_a_m = [0.3, 0.8, -0.5];
    for dir in [
        [0.0, 0.0, 1.0],
        [0.6, 0.0, 0.8],
        [0.48, -0.6, 0.64],
        [1.0, 0.0, 0.0],
        [0.0, -0.6, -0.8],
    ] {
        let d = 1.0e4 * size;
        let st = [c[0] + d * dir[0], c[1] + d * dir[1], c[2] + d * dir[2]];
        let r = [c[0] - st[0], c[1] - st[1], c[2] - st[2]]; // station → mass
        let r3 = norm(r).powi(3);
        let g_point = [
            G * mass_kg * r[0] / r3 * 1e5,
            G * mass_kg * r[1] / r3 * 1e5,
            -G * mass_kg * r[2] / r3 * 1e5,
        ];
        let g = prism_gravity_mgal(&p, st, rho);
        for a in 0..3 {
            assert!(
                (g[a] - g_point[a]).abs() <= 1e-6 * norm(g_point),
                "{dir:?} {a}: {g:?} vs {g_point:?}"
            );
        }
        // Dipole of moment M·V at the centre; R from source to station.
        let rr = [-r[0], -r[1], -r[2]];
        let rn = norm(rr);
        let mom = [
            m_a_m[0] * p.volume_m3(),
            m_a_m[1] * p.volume_m3(),
            m_a_m[2] * p.volume_m3(),
        ];
        let mdotr = (mom[0] * rr[0] + mom[1] * rr[1] + mom[2] * rr[2]) / rn;
        let b_dip: Vec<f64> = (0..3)
            .map(|a| 100.0 * (3.0 * mdotr * rr[a] / rn - mom[a]) / rn.powi(3))
            .collect();
        let b = prism_field_nt(&p, st, m_a_m).unwrap();
        let bn = (b_dip[0].powi(2) + b_dip[1].powi(2) + b_dip[2].powi(2)).sqrt();
        for a in 0..3 {
            assert!(
                (b[a] - b_dip[a]).abs() <= 1e-6 * bn,
                "{dir:?} {a}: {b:?} vs {b_dip:?}"
            );
        }
        assert!(g.iter().chain(b.iter()).all(|v| v.is_finite()));
    }
}

#[test]
fn a_wide_flat_prism_is_the_bouguer_slab() {
    // Infinite slab: g = 2πGΔρt, 0.041 93 mGal per metre per g/cm³ (common
    // practice constant). A 200 km wide, 10 m thick slab seen from 1 m above
    // its top differs from the infinite slab by about h/a ≈ 6·10⁻⁵ (disk
    // formula, Blakely 1995 eq. 3.25 in the limit).
    let t = 10.0;
    let rho = 2.67;
    let p = Prism::new([-1.0e5, 1.0e5], [-1.0e5, 1.0e5], [-t, 0.0]).unwrap();
    let gz = prism_gz_mgal(&p, [0.0, 0.0, 1.0], rho);
    let per_m_per_gcc = gz / (t * rho);
    assert!((per_m_per_gcc - 0.04193).abs() < 1e-5, "{per_m_per_gcc}");
    let exact = 2.0 * std::f64::consts::PI * G * 1000.0 * 1e5;
    assert!(
        ((per_m_per_gcc - exact) / exact).abs() < 1e-4,
        "{per_m_per_gcc} vs {exact}"
    );
    assert!(
        per_m_per_gcc < exact,
        "a finite slab attracts less than an infinite one"
    );
}

/// Splits a prism at the given interior planes on each axis.
fn split(p: &Prism, cuts: [&[f64]; 3]) -> Vec<Prism> {
    let edges = |b: [f64; 2], c: &[f64]| {
        let mut v = vec![b[0]];
        v.extend_from_slice(c);
        v.push(b[1]);
        v
    };
    let (xs, ys, zs) = (
        edges(p.x, cuts[0]),
        edges(p.y, cuts[1]),
        edges(p.z, cuts[2]),
    );
    let mut out = Vec::new();
    for x in xs.windows(2) {
        for y in ys.windows(2) {
            for z in zs.windows(2) {
                out.push(Prism::new([x[0], x[1]], [y[0], y[1]], [z[0], z[1]]).unwrap());
            }
        }
    }
    out
}

#[test]
fn superposition_of_eight_and_twenty_seven_sub_prisms() {
    let p = block();
    let eight = split(&p, [&[170.0], &[10.0], &[-220.0]]);
    let twenty_seven = split(&p, [&[140.0, 260.0], &[-20.0, 25.0], &[-300.0, -130.0]]);
    assert_eq!(eight.len(), 8);
    assert_eq!(twenty_seven.len(), 27);
    // Stations close to the shared faces, including on the top face right over
    // a shared plane (where sub-prisms meet), and on the extension of a shared
    // face just outside the body.
    let stations = [
        [170.0, 10.0, 0.0],
        [170.0 + 1e-3, 10.0 - 1e-3, -100.0 + 1e-3],
        [170.0, 49.0, -99.0],
        [170.0, 60.0, -220.0],
        [99.999, 10.0, -220.0],
        [140.0, -20.0, -100.0],
        [260.0, 25.0, -90.0],
        [2000.0, -1500.0, 100.0],
    ];
    for parts in [&eight, &twenty_seven] {
        for st in stations {
            let whole = prism_gravity_mgal(&p, st, 1.0);
            let mut sum = [0.0; 3];
            for q in parts.iter() {
                let g = prism_gravity_mgal(q, st, 1.0);
                for a in 0..3 {
                    sum[a] += g[a];
                }
            }
            for a in 0..3 {
                assert!(
                    (whole[a] - sum[a]).abs() <= 1e-10 * norm(whole),
                    "{} parts, {st:?}, {a}: {whole:?} vs {sum:?}",
                    parts.len()
                );
            }
        }
    }
    // Magnetic superposition at stations off every sub-prism edge.
    let m = [0.2, 0.5, -1.0];
    for parts in [&eight, &twenty_seven] {
        for st in [
            [171.0, 11.0, -99.0],
            [170.5, 60.0, -219.5],
            [2000.0, -1500.0, 100.0],
            [99.0, 10.5, -221.0],
        ] {
            let whole = prism_field_nt(&p, st, m).unwrap();
            let mut sum = [0.0; 3];
            for q in parts.iter() {
                let b = prism_field_nt(q, st, m).unwrap();
                for a in 0..3 {
                    sum[a] += b[a];
                }
            }
            for a in 0..3 {
                assert!(
                    (whole[a] - sum[a]).abs() <= 1e-10 * norm(whole),
                    "{} parts, {st:?}, {a}: {whole:?} vs {sum:?}",
                    parts.len()
                );
            }
        }
    }
}

#[test]
fn values_on_faces_edges_and_vertices_are_finite_and_continuous() {
    // Gravity is continuous across the surface: the value on a face, edge or
    // vertex equals the limit from just outside.
    let p = block();
    let cases = [
        ([200.0, 0.0, -100.0], [0.0, 0.0, 1.0]),  // on the top face
        ([100.0, 0.0, -250.0], [-1.0, 0.0, 0.0]), // on the west face
        ([100.0, -50.0, -250.0], [-1.0, -1.0, 0.0]), // on a vertical edge
        ([100.0, -50.0, -100.0], [-1.0, -1.0, 1.0]), // on a vertex
        ([200.0, 0.0, -400.0], [0.0, 0.0, -1.0]), // on the bottom face
    ];
    for (st, out) in cases {
        let on = prism_gravity_mgal(&p, st, 1.0);
        let eps = 1e-6;
        let near = [
            st[0] + eps * out[0],
            st[1] + eps * out[1],
            st[2] + eps * out[2],
        ];
        let off = prism_gravity_mgal(&p, near, 1.0);
        assert!(on.iter().all(|v| v.is_finite()), "{st:?}: {on:?}");
        for a in 0..3 {
            assert!(
                (on[a] - off[a]).abs() <= 1e-5 * norm(on),
                "{st:?} {a}: {on:?} vs {off:?}"
            );
        }
    }
    // Very near (a micrometre off the top face) and very far are finite.
    assert!(prism_gz_mgal(&p, [200.0, 0.0, -100.0 + 1e-6], 1.0).is_finite());
    assert!(prism_gz_mgal(&p, [1e9, -1e9, 1e9], 1.0).is_finite());
    // On an edge the magnetic field is singular and reported as such.
    assert!(prism_field_nt(&p, [100.0, -50.0, -250.0], [0.0, 0.0, 1.0]).is_none());
    // A face is fine for magnetics: the mean of the inside and outside limits.
    let on = prism_field_nt(&p, [200.0, 0.0, -100.0], [0.0, 0.0, 1.0]).unwrap();
    let above = prism_field_nt(&p, [200.0, 0.0, -100.0 + 1e-7], [0.0, 0.0, 1.0]).unwrap();
    assert!(on[0].abs() < 1e-9 && above[0].abs() < 1e-9);
    // B_z jumps by μ₀M_z = 4π·100 nT per A/m across the face; on it we get the
    // mean, so the value just above minus the value on it is half the jump.
    assert!(
        ((above[2] - on[2]) - 0.5 * 4.0 * std::f64::consts::PI * 100.0).abs() < 1e-3,
        "{on:?} {above:?}"
    );
}

#[test]
fn signs_and_symmetry() {
    let p = Prism::new([-20.0, 20.0], [-20.0, 20.0], [-80.0, -40.0]).unwrap();
    // Positive contrast below: positive g_z; negative contrast: negative.
    assert!(prism_gz_mgal(&p, [0.0, 0.0, 0.0], 0.2) > 0.0);
    assert!(prism_gz_mgal(&p, [0.0, 0.0, 0.0], -0.2) < 0.0);
    // Mirror symmetry of g_z.
    let a = prism_gz_mgal(&p, [37.0, 11.0, 5.0], 1.0);
    for st in [
        [-37.0, 11.0, 5.0],
        [37.0, -11.0, 5.0],
        [11.0, 37.0, 5.0],
        [-11.0, -37.0, 5.0],
    ] {
        assert!((prism_gz_mgal(&p, st, 1.0) - a).abs() < 1e-13 * a.abs());
    }
    // At the pole (I = 90°) an induced, vertically magnetized square prism has
    // a TMI symmetric about its vertical axis (fourfold and mirror), positive
    // over the centre (Blakely 1995, Fig. 4.x pattern at the pole).
    let field = InducingField {
        intensity_nt: 60_000.0,
        inclination_deg: 90.0,
        declination_deg: 0.0,
    };
    let m = field.induced_magnetization(0.05);
    let f = field.unit();
    let tmi = |st: [f64; 3]| tmi_nt(prism_field_nt(&p, st, m).unwrap(), f);
    let t0 = tmi([0.0, 0.0, 0.0]);
    assert!(t0 > 0.0);
    let t = tmi([30.0, 12.0, 0.0]);
    for st in [
        [-30.0, 12.0, 0.0],
        [30.0, -12.0, 0.0],
        [12.0, 30.0, 0.0],
        [-12.0, -30.0, 0.0],
    ] {
        assert!((tmi(st) - t).abs() < 1e-10 * t0.abs(), "{st:?}");
    }
}

#[test]
fn a_sphere_of_small_prisms_approaches_the_dipole_and_the_point_mass() {
    // Outside a uniform sphere the gravity is that of a point mass and the
    // field of a uniformly magnetized sphere is exactly a dipole of moment
    // M·(4/3)πR³ (Blakely 1995, §3.2 and eq. 4.17). Cubes whose centres fall
    // inside the sphere approximate it better as they shrink.
    let radius: f64 = 60.0;
    let c = [0.0, 0.0, -90.0];
    let m = [0.0, 0.7, -1.2]; // A/m
    let rho = 0.4;
    let volume = 4.0 / 3.0 * std::f64::consts::PI * radius.powi(3);
    let stations: Vec<[f64; 3]> = (-10..=10)
        .map(|i| [i as f64 * 30.0, 0.5 * i as f64 * 30.0, 0.0])
        .collect();
    let exact: Vec<([f64; 3], f64)> = stations
        .iter()
        .map(|st| {
            let rr = [st[0] - c[0], st[1] - c[1], st[2] - c[2]];
            let rn = norm(rr);
            let mom = [m[0] * volume, m[1] * volume, m[2] * volume];
            let mdotr = (mom[0] * rr[0] + mom[1] * rr[1] + mom[2] * rr[2]) / rn;
            let b = [0, 1, 2].map(|a| 100.0 * (3.0 * mdotr * rr[a] / rn - mom[a]) / rn.powi(3));
            let gz = G * volume * rho * 1000.0 * (st[2] - c[2]) / rn.powi(3) * 1e5;
            (b, gz)
        })
        .collect();
    let bmax = exact.iter().map(|(b, _)| norm(*b)).fold(0.0, f64::max);
    let gmax = exact.iter().map(|(_, g)| g.abs()).fold(0.0, f64::max);
    let mut errors = Vec::new();
    for n in [3usize, 6, 12, 24] {
        let h = radius / n as f64;
        let mut cubes = Vec::new();
        for i in -(n as i64)..(n as i64) {
            for j in -(n as i64)..(n as i64) {
                for k in -(n as i64)..(n as i64) {
                    let cc = [
                        (i as f64 + 0.5) * h,
                        (j as f64 + 0.5) * h,
                        (k as f64 + 0.5) * h,
                    ];
                    if norm(cc) <= radius {
                        cubes.push(
                            Prism::new(
                                [c[0] + cc[0] - h / 2.0, c[0] + cc[0] + h / 2.0],
                                [c[1] + cc[1] - h / 2.0, c[1] + cc[1] + h / 2.0],
                                [c[2] + cc[2] - h / 2.0, c[2] + cc[2] + h / 2.0],
                            )
                            .unwrap(),
                        );
                    }
                }
            }
        }
        let mut eb: f64 = 0.0;
        let mut eg: f64 = 0.0;
        for (st, (b_ex, g_ex)) in stations.iter().zip(&exact) {
            let mut b = [0.0; 3];
            let mut g = 0.0;
            for q in &cubes {
                let bb = prism_field_nt(q, *st, m).unwrap();
                for a in 0..3 {
                    b[a] += bb[a];
                }
                g += prism_gz_mgal(q, *st, rho);
            }
            eb = eb.max(norm([b[0] - b_ex[0], b[1] - b_ex[1], b[2] - b_ex[2]]) / bmax);
            eg = eg.max((g - g_ex).abs() / gmax);
        }
        errors.push((n, eb, eg));
    }
    for w in errors.windows(2) {
        assert!(
            w[1].1 < w[0].1 && w[1].2 < w[0].2,
            "errors do not fall with refinement: {errors:?}"
        );
    }
    let (_, eb, eg) = *errors.last().unwrap();
    assert!(
        eb < 0.01 && eg < 0.01,
        "finest discretisation still {eb} (B), {eg} (g_z) off: {errors:?}"
    );
}
