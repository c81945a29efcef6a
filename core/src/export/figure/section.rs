//! Section figures: the model along a polyline with terrain, projected
//! drill holes and their logged values, the data profile and a caption.

use super::axes::{axes, colour_bar, label, Frame};
use super::colour::ColourMap;
use super::surface::{Anchor, Figure};

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
