//! Figure building blocks against matplotlib 3.11.2 and scikit-image 0.26.0
//! (`fixtures/figures_matplotlib.py`, versions recorded in its output):
//! colour maps, hillshade and contour lengths.

use fieldstone_core::export::figure::ColourMap;
use fieldstone_core::grid::contour::contour;
use fieldstone_core::grid::shade::hillshade;
use fieldstone_core::grid::Grid2;

fn fixture() -> serde_json::Value {
    let p = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/figures_matplotlib.json"
    );
    serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
}

fn f64s(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn viridis_and_cividis_match_matplotlib_within_five_levels() {
    let fx = fixture();
    assert_eq!(fx["matplotlib"], "3.11.2");
    for (name, map) in [
        ("viridis", ColourMap::Viridis),
        ("cividis", ColourMap::Cividis),
    ] {
        let t = f64s(&fx[name]["check_t"]);
        let rgb = fx[name]["check_rgb"].as_array().unwrap();
        let mut worst: f64 = 0.0;
        for (t, want) in t.iter().zip(rgb) {
            let got = map.at(*t);
            for c in 0..3 {
                worst = worst.max((got[c] as f64 - want[c].as_f64().unwrap()).abs());
            }
        }
        // 33 stops and linear interpolation between them: within 5 of 255
        // (measured 2.93 for viridis, 4.07 for cividis), below a visible step.
        assert!(worst <= 5.0, "{name}: worst channel difference {worst}");
    }
}

fn hill() -> (Grid2, serde_json::Value) {
    let fx = fixture();
    let h = fx["hill"].clone();
    let (nx, ny) = (
        h["nx"].as_u64().unwrap() as usize,
        h["ny"].as_u64().unwrap() as usize,
    );
    let mut g = Grid2::new_empty(
        0.0,
        0.0,
        h["dx"].as_f64().unwrap(),
        h["dy"].as_f64().unwrap(),
        nx,
        ny,
    )
    .unwrap();
    g.values = f64s(&h["values"]);
    (g, h)
}

#[test]
fn hillshade_matches_matplotlib_light_source() {
    // matplotlib stretches the illumination to [0, 1] by its minimum and
    // maximum; the same stretch of ours must give the same numbers.
    let (g, h) = hill();
    let raw = hillshade(&g, 315.0, 45.0, 2.0);
    let (lo, hi) = raw
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(*v), b.max(*v))
        });
    let want = f64s(&h["hillshade_stretched"]);
    let worst = raw
        .iter()
        .zip(&want)
        .map(|(r, w)| ((r - lo) / (hi - lo) - w).abs())
        .fold(0.0, f64::max);
    assert!(worst < 1e-9, "worst difference {worst}");
}

#[test]
fn contour_lengths_match_scikit_image_find_contours() {
    let (g, h) = hill();
    for (level, c) in h["contours"].as_object().unwrap() {
        let level: f64 = level.parse().unwrap();
        let lines = contour(&g, level);
        assert_eq!(
            lines.len() as u64,
            c["lines"].as_u64().unwrap(),
            "level {level}"
        );
        let len: f64 = lines
            .iter()
            .flat_map(|l| l.windows(2))
            .map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]))
            .sum();
        let want = c["length_m"].as_f64().unwrap();
        assert!(
            (len - want).abs() < 1e-6 * want,
            "level {level}: {len} vs {want} m"
        );
    }
}
