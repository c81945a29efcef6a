//! Snapshot comparison of small reference figures. The reference PNGs in
//! `tests/snapshots/` were drawn by this code and looked at by a person;
//! a change in drawing that moves more than a few pixels fails here. After
//! an intended change, regenerate them with
//! `FIELDSTONE_BLESS=1 cargo test -p fieldstone-core --test figure_snapshots`
//! and look at the new files before committing them.

use fieldstone_core::export::figure::{
    map_figure, section_figure_with, ColourMap, Figure, MapOptions, ProjectedHole, SectionExtras,
};
use fieldstone_core::export::section::SectionSample;
use fieldstone_core::grid::Grid2;
use std::path::PathBuf;

fn snapshot_path(name: &str) -> PathBuf {
    PathBuf::from(concat!(env!("CARGO_MANIFEST_DIR"), "/tests/snapshots")).join(name)
}

fn decode(bytes: &[u8]) -> (u32, u32, Vec<u8>) {
    let dec = png::Decoder::new(std::io::Cursor::new(bytes));
    let mut rd = dec.read_info().unwrap();
    let mut buf = vec![0; rd.output_buffer_size().expect("a PNG of known size")];
    let info = rd.next_frame(&mut buf).unwrap();
    buf.truncate(info.buffer_size());
    (info.width, info.height, buf)
}

/// Compares a figure rasterised at half size with its reference: same size,
/// mean channel difference ≤ 1 level and at most 0.5 % of pixels off by more
/// than 32 levels.
fn check(fig: &Figure, name: &str) {
    let scale = 0.5;
    let (w, h) = fig.scaled_size(scale);
    let got = fig.raster_scaled(scale);
    let path = snapshot_path(name);
    if std::env::var_os("FIELDSTONE_BLESS").is_some() {
        let mut out = Vec::new();
        {
            let mut enc = png::Encoder::new(&mut out, w, h);
            enc.set_color(png::ColorType::Rgb);
            enc.set_depth(png::BitDepth::Eight);
            enc.write_header().unwrap().write_image_data(&got).unwrap();
        }
        std::fs::write(&path, out).unwrap();
        return;
    }
    let bytes = std::fs::read(&path).unwrap_or_else(|e| {
        panic!(
            "{}: {e}; regenerate with FIELDSTONE_BLESS=1",
            path.display()
        )
    });
    let (rw, rh, want) = decode(&bytes);
    assert_eq!((rw, rh), (w, h), "{name}: size");
    let n = (w * h) as usize;
    let mut sum = 0u64;
    let mut off = 0usize;
    for p in 0..n {
        let mut worst = 0u8;
        for c in 0..3 {
            let d = got[3 * p + c].abs_diff(want[3 * p + c]);
            sum += d as u64;
            worst = worst.max(d);
        }
        if worst > 32 {
            off += 1;
        }
    }
    let mean = sum as f64 / (3 * n) as f64;
    assert!(
        mean <= 1.0 && off as f64 <= 0.005 * n as f64,
        "{name}: mean difference {mean:.3}, {off} of {n} pixels off"
    );
}

/// A small well-formedness check of SVG text: every element is closed in
/// order, attribute values are quoted, and no bare `&` or `<` is in text.
fn assert_well_formed(svg: &str) {
    let body = svg.split_once("?>").map(|(_, b)| b).unwrap_or(svg);
    let mut stack: Vec<String> = Vec::new();
    let mut rest = body;
    while let Some(start) = rest.find('<') {
        let text = &rest[..start];
        assert!(!text.contains('<'), "bare < in text");
        for (k, _) in text.match_indices('&') {
            let ent = &text[k..];
            assert!(
                ["&amp;", "&lt;", "&gt;", "&quot;"]
                    .iter()
                    .any(|e| ent.starts_with(e)),
                "bare & in text: {}",
                &ent[..ent.len().min(20)]
            );
        }
        let end = rest[start..].find('>').expect("unclosed tag") + start;
        let tag = &rest[start + 1..end];
        assert_eq!(
            tag.matches('"').count() % 2,
            0,
            "unbalanced quotes in <{tag}>"
        );
        if let Some(name) = tag.strip_prefix('/') {
            assert_eq!(
                stack.pop().as_deref(),
                Some(name.trim()),
                "mismatched </{name}>"
            );
        } else if !tag.ends_with('/') {
            stack.push(tag.split_whitespace().next().unwrap_or("").to_string());
        }
        rest = &rest[end + 1..];
    }
    assert!(stack.is_empty(), "unclosed elements: {stack:?}");
}

fn hill_grid() -> Grid2 {
    let (nx, ny) = (41, 31);
    let mut g = Grid2::new_empty(500_000.0, 4_000_000.0, 25.0, 25.0, nx, ny).unwrap();
    for j in 0..ny {
        for i in 0..nx {
            let (x, y) = (i as f64 * 25.0, j as f64 * 25.0);
            g.values[i + nx * j] = 3.0
                * (-((x - 450.0).powi(2) + (y - 380.0).powi(2)) / 40_000.0).exp()
                - 1.5 * (-((x - 800.0).powi(2) + (y - 250.0).powi(2)) / 20_000.0).exp();
        }
    }
    // A blanked corner.
    for j in 25..ny {
        for i in 0..6 {
            g.values[i + nx * j] = f64::NAN;
        }
    }
    g.epsg = Some(32617);
    g
}

#[test]
fn map_figure_with_hillshade_contours_and_overlays_matches_its_snapshot() {
    let g = hill_grid();
    let o = MapOptions {
        title: "Example anomaly".into(),
        units: "mGal".into(),
        colour_map: None,
        hillshade: true,
        contour_interval: Some(0.5),
        stations: (0..20)
            .map(|k| [500_100.0 + 40.0 * k as f64, 4_000_400.0])
            .collect(),
        polygons: vec![(
            "target".into(),
            vec![
                [500_350.0, 4_000_300.0],
                [500_550.0, 4_000_300.0],
                [500_550.0, 4_000_460.0],
            ],
        )],
        lines: vec![(
            "A–B".into(),
            vec![[499_900.0, 4_000_600.0], [501_100.0, 4_000_600.0]],
        )],
        collars: vec![("EX-1".into(), [500_450.0, 4_000_380.0])],
        caption: "Invented example — 2026-12-02".into(),
    };
    let f = map_figure(&g, &o);
    // The range straddles zero: the diverging map, and the legend says how
    // contours and shading were drawn.
    let svg = f.svg();
    assert_well_formed(&svg);
    assert!(svg.contains("contours every 0.5 mGal") && svg.contains("shaded from the north-west"));
    assert!(svg.contains(">A–B<") && svg.contains(">EX-1<") && svg.contains(">target<"));
    // The section line runs past the grid on both sides: clipped to the frame.
    check(&f, "map_hill.png");
    // Cividis on request.
    let f2 = map_figure(
        &g,
        &MapOptions {
            colour_map: Some(ColourMap::Cividis),
            hillshade: false,
            contour_interval: None,
            ..o
        },
    );
    assert!(
        f2.svg()
            .contains(&format!("fill=\"#{:02x}{:02x}{:02x}\"", 0, 34, 78)),
        "cividis's first colour in the bar"
    );
}

#[test]
fn section_figure_with_a_logged_hole_matches_its_snapshot() {
    let samples: Vec<SectionSample> = (0..40)
        .flat_map(|i| {
            (0..20).map(move |k| {
                let (d, z) = (10.0 * i as f64 + 5.0, 10.0 * k as f64 + 5.0);
                SectionSample {
                    distance_m: d,
                    x: d,
                    y: 0.0,
                    elevation_m: z,
                    value: if z < 190.0 - 0.3 * d {
                        0.3 * (-((d - 200.0).powi(2) + (z - 100.0).powi(2)) / 3000.0).exp()
                    } else {
                        f64::NAN
                    },
                }
            })
        })
        .collect();
    let tops: Vec<f64> = (0..=20).map(|k| 10.0 * k as f64).collect();
    let terrain: Vec<[f64; 2]> = (0..=40)
        .map(|i| [10.0 * i as f64, 190.0 - 3.0 * i as f64])
        .collect();
    let logs = (0..10)
        .map(|k| {
            let (a, b) = (130.0 - 10.0 * k as f64, 120.0 - 10.0 * k as f64);
            (
                [200.0, a],
                [200.0, b],
                if k > 2 && k < 7 { 0.28 } else { 0.02 },
            )
        })
        .collect();
    let e = SectionExtras {
        holes: vec![ProjectedHole {
            id: "EX-1".into(),
            trace: vec![[200.0, 130.0], [200.0, 30.0]],
            logs,
        }],
        log_label: "logged density − 2.67 g/cm³".into(),
        observed: (0..40)
            .map(|i| {
                [
                    10.0 * i as f64 + 5.0,
                    (-((10.0 * i as f64 - 200.0).powi(2)) / 8000.0).exp(),
                ]
            })
            .collect(),
        predicted: (0..40)
            .map(|i| {
                [
                    10.0 * i as f64 + 5.0,
                    0.95 * (-((10.0 * i as f64 - 200.0).powi(2)) / 8000.0).exp(),
                ]
            })
            .collect(),
        data_units: "mGal".into(),
        caption: "Invented example — 2026-12-02".into(),
        colour_map: None,
    };
    let f = section_figure_with(&samples, &tops, &terrain, "Example section", "g/cm³", &e);
    assert_well_formed(&f.svg());
    check(&f, "section_hole.png");
}

#[test]
fn png_resolution_follows_the_requested_dpi() {
    let f = map_figure(
        &hill_grid(),
        &MapOptions {
            title: "t".into(),
            units: "mGal".into(),
            ..Default::default()
        },
    );
    let (w, h, px) = decode(&f.png_at_dpi(300.0));
    assert_eq!((w, h), (3 * f.width, 3 * f.height));
    // The pHYs chunk says 300 dpi (11 811 pixels per metre).
    let bytes = f.png_at_dpi(300.0);
    let k = bytes
        .windows(4)
        .position(|w| w == b"pHYs")
        .expect("pHYs chunk");
    let ppm = u32::from_be_bytes([bytes[k + 4], bytes[k + 5], bytes[k + 6], bytes[k + 7]]);
    assert_eq!(ppm, (300.0f64 / 0.0254).round() as u32);
    // Not blank: many colours.
    let mut colours: Vec<[u8; 3]> = px.chunks(3).map(|c| [c[0], c[1], c[2]]).collect();
    colours.sort_unstable();
    colours.dedup();
    assert!(colours.len() > 200, "{} colours", colours.len());
}
