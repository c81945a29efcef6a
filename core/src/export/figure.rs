//! Figures: sections and plan maps drawn once as a list of shapes and
//! written as PNG (rasterised here, lettered with the bundled DejaVu Sans)
//! or SVG (the same shapes as vector elements).

use crate::grid::Grid2;
use ab_glyph::{Font, FontRef, PxScale, ScaleFont};

static FONT: &[u8] = include_bytes!("../../../assets/fonts/DejaVuSans.ttf");

/// The resolution figure layouts are made for: a 1000-pixel-wide figure is
/// 10 inches wide.
pub const BASE_DPI: f64 = 100.0;

/// The resolutions a PNG figure may be asked for, dots per inch.
pub const DPI_RANGE: std::ops::RangeInclusive<f64> = 50.0..=600.0;

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

const VIRIDIS: [Rgb; 33] = [
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

/// Horizontal anchor of a text.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Anchor {
    Start,
    Middle,
    End,
}

/// One shape of a figure, in pixel coordinates (origin top left).
#[derive(Debug, Clone, PartialEq)]
pub enum Shape {
    Rect {
        x: f64,
        y: f64,
        w: f64,
        h: f64,
        fill: Rgb,
    },
    Line {
        points: Vec<[f64; 2]>,
        colour: Rgb,
        width: f64,
    },
    Text {
        x: f64,
        y: f64,
        size: f64,
        anchor: Anchor,
        text: String,
        colour: Rgb,
    },
}

/// A figure: a size and its shapes, in drawing order.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    pub width: u32,
    pub height: u32,
    pub shapes: Vec<Shape>,
}

fn svg_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

fn hex(c: Rgb) -> String {
    format!("#{:02x}{:02x}{:02x}", c[0], c[1], c[2])
}

impl Figure {
    pub fn new(width: u32, height: u32) -> Figure {
        Figure {
            width,
            height,
            shapes: vec![Shape::Rect {
                x: 0.0,
                y: 0.0,
                w: width as f64,
                h: height as f64,
                fill: [255, 255, 255],
            }],
        }
    }

    pub fn text(&mut self, x: f64, y: f64, size: f64, anchor: Anchor, text: impl Into<String>) {
        self.shapes.push(Shape::Text {
            x,
            y,
            size,
            anchor,
            text: text.into(),
            colour: [30, 30, 30],
        });
    }

    pub fn line(&mut self, points: Vec<[f64; 2]>, colour: Rgb, width: f64) {
        self.shapes.push(Shape::Line {
            points,
            colour,
            width,
        });
    }

    pub fn rect(&mut self, x: f64, y: f64, w: f64, h: f64, fill: Rgb) {
        self.shapes.push(Shape::Rect { x, y, w, h, fill });
    }

    /// The figure as SVG text.
    pub fn svg(&self) -> String {
        let mut s = format!("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{}\" height=\"{}\" viewBox=\"0 0 {} {}\" font-family=\"DejaVu Sans, sans-serif\">\n", self.width, self.height, self.width, self.height);
        for sh in &self.shapes {
            match sh {
                Shape::Rect { x, y, w, h, fill } => s.push_str(&format!("<rect x=\"{x:.2}\" y=\"{y:.2}\" width=\"{w:.2}\" height=\"{h:.2}\" fill=\"{}\"/>\n", hex(*fill))),
                Shape::Line { points, colour, width } => {
                    let pts: Vec<String> = points.iter().map(|p| format!("{:.2},{:.2}", p[0], p[1])).collect();
                    s.push_str(&format!("<polyline points=\"{}\" fill=\"none\" stroke=\"{}\" stroke-width=\"{width}\"/>\n", pts.join(" "), hex(*colour)));
                }
                Shape::Text { x, y, size, anchor, text, colour } => {
                    let a = match anchor {
                        Anchor::Start => "start",
                        Anchor::Middle => "middle",
                        Anchor::End => "end",
                    };
                    s.push_str(&format!("<text x=\"{x:.2}\" y=\"{y:.2}\" font-size=\"{size}\" text-anchor=\"{a}\" fill=\"{}\">{}</text>\n", hex(*colour), svg_escape(text)));
                }
            }
        }
        s.push_str("</svg>\n");
        s
    }

    /// The figure rasterised at its own size (RGB, row-major from the top).
    pub fn raster(&self) -> Vec<u8> {
        self.raster_scaled(1.0)
    }

    /// Pixel size of the figure rasterised at `scale`.
    pub fn scaled_size(&self, scale: f64) -> (u32, u32) {
        (
            ((self.width as f64 * scale).round() as u32).max(1),
            ((self.height as f64 * scale).round() as u32).max(1),
        )
    }

    /// The figure rasterised with every coordinate, line width and text size
    /// multiplied by `scale` (a higher resolution of the same layout).
    pub fn raster_scaled(&self, scale: f64) -> Vec<u8> {
        let scale = if scale.is_finite() && scale > 0.0 {
            scale
        } else {
            1.0
        };
        let (w, h) = self.scaled_size(scale);
        let (w, h) = (w as usize, h as usize);
        let mut px = vec![255u8; w * h * 3];
        let font = FontRef::try_from_slice(FONT).ok();
        let blend = |px: &mut [u8], x: i64, y: i64, c: Rgb, a: f64| {
            if x < 0 || y < 0 || x as usize >= w || y as usize >= h || a <= 0.0 {
                return;
            }
            let i = (y as usize * w + x as usize) * 3;
            let a = a.min(1.0);
            for q in 0..3 {
                px[i + q] = (px[i + q] as f64 * (1.0 - a) + c[q] as f64 * a).round() as u8;
            }
        };
        for sh in &self.shapes {
            match sh {
                Shape::Rect {
                    x,
                    y,
                    w: rw,
                    h: rh,
                    fill,
                } => {
                    let (x, y, rw, rh) = (x * scale, y * scale, rw * scale, rh * scale);
                    let (x0, y0) = (x.round() as i64, y.round() as i64);
                    let (x1, y1) = ((x + rw).round() as i64, (y + rh).round() as i64);
                    for yy in y0.max(0)..y1.min(h as i64) {
                        for xx in x0.max(0)..x1.min(w as i64) {
                            blend(&mut px, xx, yy, *fill, 1.0);
                        }
                    }
                }
                Shape::Line {
                    points,
                    colour,
                    width,
                } => {
                    let r = (0.5 * width * scale).max(0.5);
                    for seg in points.windows(2) {
                        let ([ax, ay], [bx, by]) = (seg[0], seg[1]);
                        let (ax, ay, bx, by) = (ax * scale, ay * scale, bx * scale, by * scale);
                        let len = (bx - ax).hypot(by - ay).max(1e-9);
                        let n = (len * 2.0).ceil() as usize + 1;
                        for k in 0..=n {
                            let t = k as f64 / n as f64;
                            let (cx, cy) = (ax + t * (bx - ax), ay + t * (by - ay));
                            let ri = r.ceil() as i64;
                            for dy in -ri..=ri {
                                for dx in -ri..=ri {
                                    let (px_, py_) =
                                        (cx.round() as i64 + dx, cy.round() as i64 + dy);
                                    let d = ((px_ as f64 - cx).powi(2) + (py_ as f64 - cy).powi(2))
                                        .sqrt();
                                    if d <= r + 0.5 {
                                        blend(&mut px, px_, py_, *colour, (r + 0.5 - d).min(1.0));
                                    }
                                }
                            }
                        }
                    }
                }
                Shape::Text {
                    x,
                    y,
                    size,
                    anchor,
                    text,
                    colour,
                } => {
                    let Some(font) = &font else { continue };
                    let (x, y) = (&(x * scale), &(y * scale));
                    let scaled = font.as_scaled(PxScale::from((size * scale) as f32 * 1.2));
                    let width: f32 = text
                        .chars()
                        .map(|c| scaled.h_advance(font.glyph_id(c)))
                        .sum();
                    let mut pen = *x as f32
                        - match anchor {
                            Anchor::Start => 0.0,
                            Anchor::Middle => 0.5 * width,
                            Anchor::End => width,
                        };
                    for c in text.chars() {
                        let id = font.glyph_id(c);
                        let g = id.with_scale_and_position(
                            scaled.scale(),
                            ab_glyph::point(pen, *y as f32),
                        );
                        pen += scaled.h_advance(id);
                        if let Some(o) = font.outline_glyph(g) {
                            let b = o.px_bounds();
                            o.draw(|gx, gy, cov| {
                                blend(
                                    &mut px,
                                    b.min.x as i64 + gx as i64,
                                    b.min.y as i64 + gy as i64,
                                    *colour,
                                    cov as f64,
                                );
                            });
                        }
                    }
                }
            }
        }
        px
    }

    /// The figure as PNG bytes at its layout resolution (`BASE_DPI`).
    pub fn png(&self) -> Vec<u8> {
        self.png_at_dpi(BASE_DPI)
    }

    /// The figure as PNG bytes at `dpi` dots per inch: the layout (made for
    /// `BASE_DPI`) is scaled by dpi / BASE_DPI and the resolution is written
    /// in the file's pHYs chunk so word processors place it at its size.
    pub fn png_at_dpi(&self, dpi: f64) -> Vec<u8> {
        let scale = dpi / BASE_DPI;
        let (w, h) = self.scaled_size(scale);
        let mut out = Vec::new();
        {
            let mut enc = png::Encoder::new(&mut out, w, h);
            enc.set_color(png::ColorType::Rgb);
            enc.set_depth(png::BitDepth::Eight);
            let ppm = (dpi / 0.0254).round() as u32;
            enc.set_pixel_dims(Some(png::PixelDimensions {
                xppu: ppm,
                yppu: ppm,
                unit: png::Unit::Meter,
            }));
            if let Ok(mut wr) = enc.write_header() {
                let _ = wr.write_image_data(&self.raster_scaled(scale));
            }
        }
        out
    }
}

pub use crate::numeric::{round_below, ticks};

fn label(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if a >= 1000.0 {
        format!("{v:.0}")
    } else if a >= 1.0 {
        format!("{v:.1}").trim_end_matches(".0").to_string()
    } else {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

/// Plot frame: pixel box and data ranges.
pub struct Frame {
    pub px: [f64; 4], // left, top, right, bottom
    pub x: [f64; 2],
    pub y: [f64; 2],
}

impl Frame {
    pub fn to_px(&self, x: f64, y: f64) -> [f64; 2] {
        let [l, t, r, b] = self.px;
        [
            l + (x - self.x[0]) / (self.x[1] - self.x[0]) * (r - l),
            b - (y - self.y[0]) / (self.y[1] - self.y[0]) * (b - t),
        ]
    }
}

fn axes(f: &mut Figure, fr: &Frame, xlabel: &str, ylabel: &str) {
    let [l, t, r, b] = fr.px;
    let dark = [60, 60, 60];
    f.line(vec![[l, t], [r, t], [r, b], [l, b], [l, t]], dark, 1.0);
    for v in ticks(fr.x[0], fr.x[1], 6) {
        let p = fr.to_px(v, fr.y[0]);
        f.line(vec![[p[0], b], [p[0], b + 5.0]], dark, 1.0);
        f.text(p[0], b + 18.0, 11.0, Anchor::Middle, label(v));
    }
    for v in ticks(fr.y[0], fr.y[1], 5) {
        let p = fr.to_px(fr.x[0], v);
        f.line(vec![[l - 5.0, p[1]], [l, p[1]]], dark, 1.0);
        f.text(l - 8.0, p[1] + 4.0, 11.0, Anchor::End, label(v));
    }
    f.text(0.5 * (l + r), b + 36.0, 12.0, Anchor::Middle, xlabel);
    f.text(12.0, t - 10.0, 12.0, Anchor::Start, ylabel);
}

#[allow(clippy::too_many_arguments)]
fn colour_bar(
    f: &mut Figure,
    x: f64,
    top: f64,
    bottom: f64,
    map: ColourMap,
    lo: f64,
    hi: f64,
    units: &str,
) {
    let n = 64;
    let h = (bottom - top) / n as f64;
    for k in 0..n {
        let t = (k as f64 + 0.5) / n as f64;
        f.rect(x, bottom - (k + 1) as f64 * h, 16.0, h + 0.6, map.at(t));
    }
    f.line(
        vec![
            [x, top],
            [x + 16.0, top],
            [x + 16.0, bottom],
            [x, bottom],
            [x, top],
        ],
        [60, 60, 60],
        1.0,
    );
    for v in ticks(lo, hi, 5) {
        let y = bottom - (v - lo) / (hi - lo) * (bottom - top);
        f.line(vec![[x + 16.0, y], [x + 20.0, y]], [60, 60, 60], 1.0);
        f.text(x + 23.0, y + 4.0, 11.0, Anchor::Start, label(v));
    }
    f.text(
        x,
        top - 10.0,
        11.0,
        Anchor::Start,
        units.split(" (").next().unwrap_or(units),
    );
}

/// The caution every model figure carries.
pub const FIGURE_CAUTION: &str = "Models are non-unique: one of many that fit the data. Reporting follows local codes and a qualified person.";

/// A section figure: cells as coloured rectangles (distance along the line ×
/// elevation), the terrain line, axes, colour bar and caution.
pub fn section_figure(
    samples: &[crate::export::section::SectionSample],
    layer_tops: &[f64],
    terrain: &[[f64; 2]],
    title: &str,
    units: &str,
) -> Figure {
    section_figure_with(
        samples,
        layer_tops,
        terrain,
        title,
        units,
        &SectionExtras::default(),
    )
}

/// A drill hole projected onto a section, with its logged values.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ProjectedHole {
    pub id: String,
    /// The trace as (distance along the section, elevation) points.
    pub trace: Vec<[f64; 2]>,
    /// Logged intervals: top and bottom as (distance, elevation) and the value
    /// in the model's units (a contrast when the model is one).
    pub logs: Vec<([f64; 2], [f64; 2], f64)>,
}

/// What a section figure can carry besides the model.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SectionExtras {
    /// Drill holes projected onto the section.
    pub holes: Vec<ProjectedHole>,
    /// What the logged values beside the holes are, e.g. "logged density − 2.67 g/cm³".
    pub log_label: String,
    /// Observed and predicted data along the section: (distance, value).
    pub observed: Vec<[f64; 2]>,
    pub predicted: Vec<[f64; 2]>,
    pub data_units: String,
    /// A caption line (project, run, date).
    pub caption: String,
    /// None: chosen from the values.
    pub colour_map: Option<ColourMap>,
}

/// A section figure with drill holes, the data profile above it and a caption.
pub fn section_figure_with(
    samples: &[crate::export::section::SectionSample],
    layer_tops: &[f64],
    terrain: &[[f64; 2]],
    title: &str,
    units: &str,
    extras: &SectionExtras,
) -> Figure {
    let profile = !extras.observed.is_empty();
    let top = if profile { 230.0 } else { 50.0 };
    let height = if profile { 740 } else { 580 };
    let mut f = Figure::new(1000, height);
    let vals: Vec<f64> = samples.iter().map(|s| s.value).collect();
    let (map, lo, hi) = match extras.colour_map {
        Some(m) => {
            let (lo, hi) = m.range_for(&vals);
            (m, lo, hi)
        }
        None => ColourMap::choose(&vals),
    };
    let dmax = samples.iter().map(|s| s.distance_m).fold(0.0, f64::max);
    let zmin = layer_tops.first().copied().unwrap_or(0.0);
    let zmax = terrain
        .iter()
        .map(|t| t[1])
        .fold(f64::NEG_INFINITY, f64::max)
        .max(layer_tops.last().copied().unwrap_or(1.0));
    let bottom = top + 430.0;
    let fr = Frame {
        px: [80.0, top, 880.0, bottom],
        x: [0.0, dmax.max(1.0)],
        y: [zmin, zmax + 0.02 * (zmax - zmin)],
    };
    f.text(80.0, 28.0, 15.0, Anchor::Start, title);
    if profile {
        let all: Vec<f64> = extras
            .observed
            .iter()
            .chain(&extras.predicted)
            .map(|p| p[1])
            .collect();
        let (lo, hi) = all
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(*v), b.max(*v))
            });
        let pad = 0.05 * (hi - lo).max(1e-9);
        let pf = Frame {
            px: [80.0, 60.0, 880.0, 180.0],
            x: fr.x,
            y: [lo - pad, hi + pad],
        };
        axes(&mut f, &pf, "", &extras.data_units);
        for p in &extras.observed {
            let q = pf.to_px(p[0], p[1]);
            f.rect(q[0] - 2.0, q[1] - 2.0, 4.0, 4.0, [30, 30, 30]);
        }
        if extras.predicted.len() > 1 {
            f.line(
                extras
                    .predicted
                    .iter()
                    .map(|p| pf.to_px(p[0], p[1]))
                    .collect(),
                [200, 40, 40],
                1.5,
            );
        }
        let n = extras.observed.len().min(extras.predicted.len());
        let rms = (extras
            .observed
            .iter()
            .zip(&extras.predicted)
            .map(|(o, p)| (o[1] - p[1]).powi(2))
            .sum::<f64>()
            / n.max(1) as f64)
            .sqrt();
        f.text(
            880.0,
            52.0,
            11.0,
            Anchor::End,
            format!(
                "observed (squares), predicted (line); RMS misfit {} {}",
                label(rms),
                extras.data_units
            ),
        );
    }
    // Samples sit at cell centres; each is drawn as the cell column between
    // half-way points along the line and its layer bounds.
    let (dists, spans) = crate::export::section::distance_spans(samples);
    let half = |i: usize| spans[i];
    for s in samples {
        if !s.value.is_finite() {
            continue;
        }
        let i = dists.partition_point(|d| *d < s.distance_m);
        let (a, b) = half(i.min(dists.len() - 1));
        let k = layer_tops.partition_point(|z| *z < s.elevation_m);
        if k == 0 || k >= layer_tops.len() {
            continue;
        }
        let (z0, z1) = (layer_tops[k - 1], layer_tops[k]);
        let p0 = fr.to_px(a, z1);
        let p1 = fr.to_px(b, z0);
        f.rect(
            p0[0],
            p0[1],
            (p1[0] - p0[0]).max(1.0),
            (p1[1] - p0[1]).max(1.0),
            map.at((s.value - lo) / (hi - lo)),
        );
    }
    if terrain.len() > 1 {
        let pts = terrain.iter().map(|t| fr.to_px(t[0], t[1])).collect();
        f.line(pts, [20, 20, 20], 2.0);
    }
    for hole in &extras.holes {
        let pts = &hole.trace;
        if pts.len() > 1 {
            f.line(
                pts.iter().map(|p| fr.to_px(p[0], p[1])).collect(),
                [0, 0, 0],
                2.5,
            );
            let q = fr.to_px(pts[0][0], pts[0][1]);
            f.text(q[0] + 4.0, q[1] - 4.0, 11.0, Anchor::Start, hole.id.clone());
        }
        // Logged values: a strip beside the trace on the model's colour
        // scale, and the value written every 60 pixels down the hole.
        let mut last_label_y = f64::NEG_INFINITY;
        for (a, b, v) in &hole.logs {
            if !v.is_finite() {
                continue;
            }
            let (pa, pb) = (fr.to_px(a[0], a[1]), fr.to_px(b[0], b[1]));
            let x = 0.5 * (pa[0] + pb[0]) + 3.0;
            let (y0, y1) = (pa[1].min(pb[1]), pa[1].max(pb[1]));
            f.rect(x, y0, 7.0, (y1 - y0).max(1.0), map.at((v - lo) / (hi - lo)));
            if y0 - last_label_y >= 60.0 {
                f.text(
                    x + 10.0,
                    0.5 * (y0 + y1) + 4.0,
                    9.0,
                    Anchor::Start,
                    label(*v),
                );
                last_label_y = y0;
            }
        }
    }
    axes(
        &mut f,
        &fr,
        "distance along the section (m)",
        "elevation (m)",
    );
    f.text(
        880.0,
        top - 10.0,
        11.0,
        Anchor::End,
        "vertical exaggeration 1×",
    );
    colour_bar(&mut f, 900.0, top + 20.0, bottom - 20.0, map, lo, hi, units);
    let mut line2 = extras.caption.clone();
    if extras.holes.iter().any(|h| !h.logs.is_empty()) && !extras.log_label.is_empty() {
        if !line2.is_empty() {
            line2.push_str("; ");
        }
        line2.push_str(&format!(
            "beside holes: {} on the model scale",
            extras.log_label
        ));
    }
    if !line2.is_empty() {
        f.text(80.0, bottom + 56.0, 11.0, Anchor::Start, line2);
    }
    f.text(80.0, bottom + 74.0, 11.0, Anchor::Start, FIGURE_CAUTION);
    f
}

/// What a map figure shows over its grid.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct MapOptions {
    pub title: String,
    /// Units of the grid values, for the colour bar.
    pub units: String,
    /// None: chosen from the values (diverging when they straddle zero).
    pub colour_map: Option<ColourMap>,
    /// Shade the colours by the grid's own relief (light from the north-west).
    pub hillshade: bool,
    /// Contour interval in the grid's units; None draws no contours, NaN
    /// an automatic interval of about twelve lines.
    pub contour_interval: Option<f64>,
    /// Station positions (map metres).
    pub stations: Vec<[f64; 2]>,
    /// Named polygons (drawn closed) and section lines.
    pub polygons: Vec<(String, Vec<[f64; 2]>)>,
    pub lines: Vec<(String, Vec<[f64; 2]>)>,
    /// Drill-hole collars.
    pub collars: Vec<(String, [f64; 2])>,
    /// A caption line (project, run, date).
    pub caption: String,
}

/// Cuts a pixel polyline to a box (Liang–Barsky per segment); the pieces
/// inside are returned in order.
pub fn clip_polyline(points: &[[f64; 2]], bx: [f64; 4]) -> Vec<Vec<[f64; 2]>> {
    let [l, t, r, b] = bx;
    let mut out: Vec<Vec<[f64; 2]>> = Vec::new();
    let mut cur: Vec<[f64; 2]> = Vec::new();
    for seg in points.windows(2) {
        let ([x0, y0], [x1, y1]) = (seg[0], seg[1]);
        let (dx, dy) = (x1 - x0, y1 - y0);
        let (mut u0, mut u1) = (0.0f64, 1.0f64);
        let mut inside = true;
        for (p, q) in [(-dx, x0 - l), (dx, r - x0), (-dy, y0 - t), (dy, b - y0)] {
            if p == 0.0 {
                if q < 0.0 {
                    inside = false;
                }
            } else {
                let u = q / p;
                if p < 0.0 {
                    u0 = u0.max(u);
                } else {
                    u1 = u1.min(u);
                }
            }
        }
        if !inside || u0 > u1 {
            if cur.len() > 1 {
                out.push(std::mem::take(&mut cur));
            }
            cur.clear();
            continue;
        }
        let a = [x0 + u0 * dx, y0 + u0 * dy];
        let e = [x0 + u1 * dx, y0 + u1 * dy];
        if cur.last() != Some(&a) {
            if cur.len() > 1 {
                out.push(std::mem::take(&mut cur));
            }
            cur = vec![a];
        }
        cur.push(e);
        if u1 < 1.0 {
            out.push(std::mem::take(&mut cur));
        }
    }
    if cur.len() > 1 {
        out.push(cur);
    }
    out
}

/// A plan map of a grid: nodes as coloured cells, axes in map coordinates,
/// colour bar, scale bar, north arrow and caution.
pub fn grid_figure(g: &Grid2, title: &str, units: &str) -> Figure {
    map_figure(
        g,
        &MapOptions {
            title: title.into(),
            units: units.into(),
            ..Default::default()
        },
    )
}

/// A plan map of a grid with optional hillshade, contours, stations,
/// polygons, section lines and collars.
pub fn map_figure(g: &Grid2, o: &MapOptions) -> Figure {
    let mut f = Figure::new(900, 760);
    let (map, lo, hi) = match o.colour_map {
        Some(m) => {
            let (lo, hi) = m.range_for(&g.values);
            (m, lo, hi)
        }
        None => ColourMap::choose(&g.values),
    };
    let (x0, x1, y0, y1) = g.extent();
    let (w, h) = ((x1 - x0).max(g.dx), (y1 - y0).max(g.dy));
    // Equal scale on both axes inside a 680 × 620 box.
    let s = (680.0 / w).min(620.0 / h);
    let (pw, ph) = (w * s, h * s);
    let fr = Frame {
        px: [90.0, 60.0, 90.0 + pw, 60.0 + ph],
        x: [x0, x0 + w],
        y: [y0, y0 + h],
    };
    f.text(90.0, 30.0, 15.0, Anchor::Start, o.title.clone());
    let shade = o.hillshade.then(|| {
        crate::grid::shade::hillshade(g, 315.0, 45.0, crate::grid::shade::auto_exaggeration(g))
    });
    for j in 0..g.ny {
        for i in 0..g.nx {
            let k = i + g.nx * j;
            let v = g.values[k];
            if !v.is_finite() {
                continue;
            }
            let p = fr.to_px(g.x_of(i) - 0.5 * g.dx, g.y_of(j) + 0.5 * g.dy);
            let mut c = map.at((v - lo) / (hi - lo));
            if let Some(sh) = &shade {
                c = crate::grid::shade::shade_colour(c, sh[k]);
            }
            f.rect(p[0], p[1], g.dx * s + 0.6, g.dy * s + 0.6, c);
        }
    }
    let bx = fr.px;
    let mut contour_step = None;
    if let Some(interval) = o.contour_interval {
        let (used, lines) = crate::grid::contour::contour_set(g, interval);
        contour_step = Some(used);
        for (level, line) in lines {
            let px: Vec<[f64; 2]> = line.iter().map(|p| fr.to_px(p[0], p[1])).collect();
            let len: f64 = px
                .windows(2)
                .map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]))
                .sum();
            let mid = px[px.len() / 2];
            f.line(px, [40, 40, 40], 0.8);
            if len > 150.0 {
                f.text(mid[0], mid[1] - 3.0, 9.0, Anchor::Middle, label(level));
            }
        }
    }
    for st in &o.stations {
        let p = fr.to_px(st[0], st[1]);
        if p[0] >= bx[0] && p[0] <= bx[2] && p[1] >= bx[1] && p[1] <= bx[3] {
            f.rect(p[0] - 1.0, p[1] - 1.0, 2.0, 2.0, [20, 20, 20]);
        }
    }
    let draw_named = |f: &mut Figure, name: &str, pts: Vec<[f64; 2]>, colour: Rgb| {
        let px: Vec<[f64; 2]> = pts.iter().map(|p| fr.to_px(p[0], p[1])).collect();
        let mut first = true;
        for piece in clip_polyline(&px, bx) {
            if first && !name.is_empty() {
                f.text(
                    piece[0][0] + 4.0,
                    piece[0][1] - 4.0,
                    11.0,
                    Anchor::Start,
                    name,
                );
                first = false;
            }
            f.line(piece, colour, 2.0);
        }
    };
    for (name, poly) in &o.polygons {
        let mut pts = poly.clone();
        if let Some(p0) = poly.first() {
            pts.push(*p0);
        }
        draw_named(&mut f, name, pts, [230, 120, 20]);
    }
    for (name, line) in &o.lines {
        draw_named(&mut f, name, line.clone(), [10, 10, 10]);
    }
    for (id, c) in &o.collars {
        let p = fr.to_px(c[0], c[1]);
        if p[0] >= bx[0] && p[0] <= bx[2] && p[1] >= bx[1] && p[1] <= bx[3] {
            f.line(vec![[p[0] - 4.0, p[1]], [p[0] + 4.0, p[1]]], [0, 0, 0], 2.0);
            f.line(vec![[p[0], p[1] - 4.0], [p[0], p[1] + 4.0]], [0, 0, 0], 2.0);
            f.text(p[0] + 6.0, p[1] - 5.0, 10.0, Anchor::Start, id.clone());
        }
    }
    axes(&mut f, &fr, "easting (m)", "northing (m)");
    colour_bar(
        &mut f,
        fr.px[2] + 30.0,
        80.0,
        60.0 + ph.min(400.0),
        map,
        lo,
        hi,
        &o.units,
    );
    // Scale bar: a round length near a fifth of the width.
    let len = round_below(0.25 * w);
    let (sx, sy) = (fr.px[0] + 10.0, fr.px[3] - 14.0);
    f.rect(sx - 4.0, sy - 16.0, len * s + 8.0, 24.0, [255, 255, 255]);
    f.line(vec![[sx, sy], [sx + len * s, sy]], [0, 0, 0], 3.0);
    f.text(
        sx + 0.5 * len * s,
        sy - 4.0,
        11.0,
        Anchor::Middle,
        format!("{} m", label(len)),
    );
    // North arrow (grid north: the figure's axes are map coordinates).
    let (nx, ny) = (fr.px[2] - 24.0, fr.px[1] + 50.0);
    f.line(vec![[nx, ny], [nx, ny - 32.0]], [0, 0, 0], 2.0);
    f.line(
        vec![
            [nx - 7.0, ny - 22.0],
            [nx, ny - 34.0],
            [nx + 7.0, ny - 22.0],
        ],
        [0, 0, 0],
        2.0,
    );
    f.text(nx, ny + 14.0, 12.0, Anchor::Middle, "N");
    let epsg = g
        .epsg
        .map(|c| format!("EPSG:{c}"))
        .unwrap_or_else(|| "coordinate reference unknown".into());
    let mut notes = vec![epsg];
    if let Some(iv) = contour_step {
        notes.push(format!(
            "contours every {} {}",
            label(iv),
            o.units.split(" (").next().unwrap_or("")
        ));
    }
    if o.hillshade {
        notes.push("shaded from the north-west".into());
    }
    if !g.note.is_empty() {
        notes.push(g.note.clone());
    }
    f.text(90.0, fr.px[3] + 56.0, 11.0, Anchor::Start, notes.join("; "));
    let mut y = fr.px[3] + 74.0;
    if !o.caption.is_empty() {
        f.text(90.0, y, 11.0, Anchor::Start, o.caption.clone());
        y += 18.0;
    }
    f.text(90.0, y, 11.0, Anchor::Start, FIGURE_CAUTION);
    f.height = (y + 16.0) as u32;
    if let Some(Shape::Rect { h, .. }) = f.shapes.first_mut() {
        *h = f.height as f64;
    }
    f
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_and_cover_the_range() {
        assert_eq!(
            ticks(0.0, 1000.0, 5),
            vec![0.0, 200.0, 400.0, 600.0, 800.0, 1000.0]
        );
        assert_eq!(
            ticks(-0.3, 0.3, 6),
            vec![-0.3, -0.2, -0.1, 0.0, 0.1, 0.2, 0.3]
        );
        assert_eq!(label(0.05), "0.05");
        assert_eq!(label(250.0), "250");
        assert_eq!(round_below(437.4), 200.0);
        assert_eq!(round_below(0.6), 0.5);
    }

    #[test]
    fn colour_maps_run_from_end_to_end_and_diverge_around_zero() {
        assert_eq!(ColourMap::Viridis.at(0.0), VIRIDIS[0]);
        assert_eq!(ColourMap::Viridis.at(1.0), VIRIDIS[32]);
        assert_eq!(ColourMap::Diverging.at(0.5), [0xf7, 0xf7, 0xf7]);
        let (m, lo, hi) = ColourMap::choose(&[-1.0, 0.5, 2.0]);
        assert_eq!(m, ColourMap::Diverging);
        assert_eq!(lo, -hi);
        // Viridis lightness rises monotonically (Rec. 709 luma as a proxy).
        let luma = |c: Rgb| 0.2126 * c[0] as f64 + 0.7152 * c[1] as f64 + 0.0722 * c[2] as f64;
        for k in 0..20 {
            assert!(
                luma(ColourMap::Viridis.at(k as f64 / 20.0))
                    < luma(ColourMap::Viridis.at((k + 1) as f64 / 20.0))
            );
        }
    }

    #[test]
    fn section_figures_carry_holes_the_data_profile_and_the_caption() {
        use crate::export::section::SectionSample;
        let samples: Vec<SectionSample> = (0..10)
            .flat_map(|i| {
                (0..5).map(move |k| SectionSample {
                    distance_m: 10.0 * i as f64 + 5.0,
                    x: 0.0,
                    y: 0.0,
                    elevation_m: 10.0 * k as f64 + 5.0,
                    value: (i as f64 - k as f64) * 0.01,
                })
            })
            .collect();
        let tops: Vec<f64> = (0..=5).map(|k| 10.0 * k as f64).collect();
        let plain = section_figure(&samples, &tops, &[[0.0, 50.0], [100.0, 50.0]], "t", "g/cm³");
        assert_eq!((plain.width, plain.height), (1000, 580));
        let extras = SectionExtras {
            holes: vec![ProjectedHole {
                id: "DH-7".into(),
                trace: vec![[40.0, 50.0], [45.0, 10.0]],
                logs: vec![
                    ([40.0, 50.0], [42.5, 30.0], 0.125),
                    ([42.5, 30.0], [45.0, 10.0], -0.05),
                ],
            }],
            log_label: "logged density − 2.67 g/cm³".into(),
            observed: vec![[5.0, 1.0], [50.0, 2.0], [95.0, 1.5]],
            predicted: vec![[5.0, 1.1], [50.0, 1.9], [95.0, 1.5]],
            data_units: "mGal".into(),
            caption: "Example — scenario a — 2026-12-02".into(),
            colour_map: None,
        };
        let f = section_figure_with(&samples, &tops, &[], "t", "g/cm³", &extras);
        assert_eq!(f.height, 740);
        let svg = f.svg();
        assert!(
            svg.contains("DH-7")
                && svg.contains("RMS misfit 0.082 mGal")
                && svg.contains("Example — scenario a")
                && svg.contains(">0.125<")
                && svg.contains("beside holes: logged density − 2.67 g/cm³"),
            "{svg}"
        );
        assert!(svg.contains("vertical exaggeration"));
    }

    #[test]
    fn png_and_svg_hold_the_drawn_shapes() {
        let mut f = Figure::new(40, 20);
        f.rect(10.0, 5.0, 10.0, 10.0, [255, 0, 0]);
        f.text(2.0, 18.0, 10.0, Anchor::Start, "A&B");
        let r = f.raster();
        let at = |x: usize, y: usize| {
            [
                r[(y * 40 + x) * 3],
                r[(y * 40 + x) * 3 + 1],
                r[(y * 40 + x) * 3 + 2],
            ]
        };
        assert_eq!(at(15, 10), [255, 0, 0]);
        assert_eq!(at(35, 2), [255, 255, 255]);
        // Text left ink in its box.
        assert!((0..40).any(|x| (12..18).any(|y| at(x, y)[0] < 200)));
        let png = f.png();
        assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
        let dec = png::Decoder::new(std::io::Cursor::new(png));
        let mut rd = dec.read_info().unwrap();
        let mut buf = vec![0; rd.output_buffer_size()];
        rd.next_frame(&mut buf).unwrap();
        assert_eq!(buf, r);
        let svg = f.svg();
        assert!(svg.contains("fill=\"#ff0000\"") && svg.contains("A&amp;B"));
    }
}
