//! Map figures of a grid: hillshade, contours, stations, polygons, section
//! lines, collars, axes, colour bar, scale bar, north arrow, caption.

use super::axes::{axes, colour_bar, label, Frame};
use super::colour::{ColourMap, Rgb};
use super::section::FIGURE_CAUTION;
use super::surface::{Anchor, Figure, Shape};
use crate::grid::Grid2;
use crate::numeric::round_below;

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
