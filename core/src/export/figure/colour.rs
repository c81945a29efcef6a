//! Colour maps and the colour range of a set of values.

/// An RGB colour.
pub type Rgb = [u8; 3];

/// Colour maps: perceptually uniform sequential and a diverging map for
/// anomalies centred on zero.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ColourMap {
    /// Viridis (van der Walt & Smith 2015, CC0): 33 stops sampled from
    /// matplotlib (tests/fixtures/figures_matplotlib.py).
    Viridis,
    /// Cividis (Nuñez, Anderton & Renslow 2018), readable with colour-vision
    /// deficiency: 33 stops sampled from matplotlib.
    Cividis,
    /// Blue–white–red (ColorBrewer RdBu, Brewer 2002), negative blue; values
    /// from memory of the 11-class scheme.
    Diverging,
    /// Black to white (for shaded terrain under other layers).
    Grey,
}

pub(super) const VIRIDIS: [Rgb; 33] = [
    [68, 1, 84],
    [71, 13, 96],
    [72, 24, 106],
    [72, 35, 116],
    [71, 45, 123],
    [69, 55, 129],
    [66, 64, 134],
    [62, 73, 137],
    [59, 82, 139],
    [55, 91, 141],
    [51, 99, 141],
    [47, 107, 142],
    [44, 114, 142],
    [41, 122, 142],
    [38, 130, 142],
    [35, 137, 142],
    [33, 145, 140],
    [31, 152, 139],
    [31, 160, 136],
    [34, 167, 133],
    [40, 174, 128],
    [50, 182, 122],
    [63, 188, 115],
    [78, 195, 107],
    [94, 201, 98],
    [112, 207, 87],
    [132, 212, 75],
    [152, 216, 62],
    [173, 220, 48],
    [194, 223, 35],
    [216, 226, 25],
    [236, 229, 27],
    [253, 231, 37],
];
const CIVIDIS: [Rgb; 33] = [
    [0, 34, 78],
    [0, 40, 91],
    [0, 46, 106],
    [5, 51, 113],
    [26, 56, 111],
    [39, 62, 110],
    [50, 67, 109],
    [59, 73, 108],
    [67, 78, 108],
    [75, 84, 108],
    [83, 90, 109],
    [90, 95, 110],
    [97, 101, 111],
    [104, 106, 113],
    [111, 112, 115],
    [118, 118, 118],
    [125, 124, 120],
    [132, 130, 121],
    [140, 136, 120],
    [147, 142, 120],
    [155, 148, 118],
    [163, 154, 116],
    [171, 160, 114],
    [180, 167, 111],
    [188, 174, 108],
    [196, 180, 104],
    [205, 187, 99],
    [213, 194, 94],
    [222, 201, 88],
    [231, 209, 80],
    [240, 216, 70],
    [249, 224, 58],
    [254, 232, 56],
];
const RDBU: [Rgb; 11] = [
    [0x05, 0x30, 0x61],
    [0x21, 0x66, 0xac],
    [0x43, 0x93, 0xc3],
    [0x92, 0xc5, 0xde],
    [0xd1, 0xe5, 0xf0],
    [0xf7, 0xf7, 0xf7],
    [0xfd, 0xdb, 0xc7],
    [0xf4, 0xa5, 0x82],
    [0xd6, 0x60, 0x4d],
    [0xb2, 0x18, 0x2b],
    [0x67, 0x00, 0x1f],
];

impl ColourMap {
    /// Colour at t in [0, 1].
    pub fn at(self, t: f64) -> Rgb {
        let stops: &[Rgb] = match self {
            ColourMap::Viridis => &VIRIDIS,
            ColourMap::Cividis => &CIVIDIS,
            ColourMap::Diverging => &RDBU,
            ColourMap::Grey => &[[40, 40, 40], [235, 235, 235]],
        };
        let t = if t.is_finite() {
            t.clamp(0.0, 1.0)
        } else {
            0.0
        };
        let f = t * (stops.len() - 1) as f64;
        let i = (f.floor() as usize).min(stops.len() - 2);
        let w = f - i as f64;
        let mix = |a: u8, b: u8| (a as f64 + w * (b as f64 - a as f64)).round() as u8;
        [
            mix(stops[i][0], stops[i + 1][0]),
            mix(stops[i][1], stops[i + 1][1]),
            mix(stops[i][2], stops[i + 1][2]),
        ]
    }

    /// The names accepted on the command line and in project files.
    pub const NAMES: [&'static str; 4] = ["viridis", "cividis", "diverging", "grey"];

    /// The map of a name (case-insensitive), or None.
    pub fn named(name: &str) -> Option<ColourMap> {
        match name.to_ascii_lowercase().as_str() {
            "viridis" => Some(ColourMap::Viridis),
            "cividis" => Some(ColourMap::Cividis),
            "diverging" => Some(ColourMap::Diverging),
            "grey" | "gray" => Some(ColourMap::Grey),
            _ => None,
        }
    }

    /// The range a map is used over for a set of values: symmetric about
    /// zero for the diverging map, 2nd–98th percentiles otherwise.
    pub fn range_for(self, values: &[f64]) -> (f64, f64) {
        let (auto, lo, hi) = ColourMap::choose(values);
        match (self, auto) {
            (ColourMap::Diverging, ColourMap::Diverging) => (lo, hi),
            (ColourMap::Diverging, _) => {
                let m = lo.abs().max(hi.abs()).max(1e-12);
                (-m, m)
            }
            (_, ColourMap::Diverging) => percentile_range(values).unwrap_or((lo, hi)),
            _ => (lo, hi),
        }
    }

    /// The usual map and range for a set of values: diverging and symmetric
    /// when they straddle zero, sequential otherwise (2nd–98th percentiles).
    pub fn choose(values: &[f64]) -> (ColourMap, f64, f64) {
        let Some((lo, hi)) = percentile_range(values) else {
            return (ColourMap::Viridis, 0.0, 1.0);
        };
        if lo < 0.0 && hi > 0.0 {
            let m = lo.abs().max(hi.abs());
            (ColourMap::Diverging, -m, m)
        } else if hi > lo {
            (ColourMap::Viridis, lo, hi)
        } else {
            (ColourMap::Viridis, lo - 0.5, lo + 0.5)
        }
    }
}

/// The 2nd and 98th percentiles of the finite values, None when there are none.
fn percentile_range(values: &[f64]) -> Option<(f64, f64)> {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(|a, b| a.total_cmp(b));
    let q = |p: f64| v[((v.len() - 1) as f64 * p).round() as usize];
    Some((q(0.02), q(0.98)))
}
