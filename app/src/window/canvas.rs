//! Drawing: the map (grids as images, points, lines, collars, scale bar,
//! north arrow, colour bar) and the section view, with pan, zoom and the
//! cursor position in map coordinates.

use egui::{
    Color32, ColorImage, Pos2, Rect, Sense, Stroke, TextureHandle, TextureOptions, Ui, Vec2,
};
use fieldstone_core::export::figure::{round_below, ticks, ColourMap};
use fieldstone_core::export::section::SectionSample;
use fieldstone_core::grid::Grid2;
use std::collections::HashMap;

/// How values become colours.
#[derive(Debug, Clone, PartialEq)]
pub struct Colouring {
    pub map: ColourMap,
    pub lo: f64,
    pub hi: f64,
    /// Histogram equalisation: colour by rank among these sorted values.
    pub equalised: Option<Vec<f64>>,
}

impl Colouring {
    pub fn for_values(values: &[f64], equalise: bool) -> Colouring {
        let (map, lo, hi) = ColourMap::choose(values);
        let equalised = equalise.then(|| {
            let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
            v.sort_by(|a, b| a.total_cmp(b));
            v
        });
        Colouring {
            map,
            lo,
            hi,
            equalised,
        }
    }
    pub fn t(&self, v: f64) -> f64 {
        match &self.equalised {
            Some(s) if !s.is_empty() => s.partition_point(|x| *x < v) as f64 / s.len() as f64,
            _ => (v - self.lo) / (self.hi - self.lo),
        }
    }
    pub fn colour(&self, v: f64) -> Color32 {
        let c = self.map.at(self.t(v));
        Color32::from_rgb(c[0], c[1], c[2])
    }
}

/// Pan and zoom of a map.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapFrame {
    pub centre: [f64; 2],
    /// Metres per screen point.
    pub scale: f64,
    pub fitted: bool,
}

impl Default for MapFrame {
    fn default() -> Self {
        MapFrame {
            centre: [0.0, 0.0],
            scale: 1.0,
            fitted: false,
        }
    }
}

impl MapFrame {
    pub fn fit(&mut self, extent: [f64; 4], rect: Rect) {
        let [x0, x1, y0, y1] = extent;
        self.centre = [0.5 * (x0 + x1), 0.5 * (y0 + y1)];
        self.scale = ((x1 - x0) / rect.width().max(1.0) as f64)
            .max((y1 - y0) / rect.height().max(1.0) as f64)
            * 1.08;
        if !(self.scale.is_finite() && self.scale > 0.0) {
            self.scale = 1.0;
        }
        self.fitted = true;
    }
    pub fn to_screen(self, rect: Rect, p: [f64; 2]) -> Pos2 {
        let c = rect.center();
        Pos2::new(
            c.x + ((p[0] - self.centre[0]) / self.scale) as f32,
            c.y - ((p[1] - self.centre[1]) / self.scale) as f32,
        )
    }
    pub fn to_world(self, rect: Rect, p: Pos2) -> [f64; 2] {
        let c = rect.center();
        [
            self.centre[0] + (p.x - c.x) as f64 * self.scale,
            self.centre[1] - (p.y - c.y) as f64 * self.scale,
        ]
    }
}

/// A grid drawn as an image, cached by key.
pub struct GridLayer<'a> {
    pub key: String,
    pub grid: &'a Grid2,
    pub colouring: Colouring,
    pub hillshade: bool,
    /// Contour interval in the grid's units (None: no contours; NaN: about
    /// twelve lines over the range).
    pub contours: Option<f64>,
}

/// What the map shows.
#[derive(Default)]
pub struct MapLayers<'a> {
    pub grid: Option<GridLayer<'a>>,
    /// Points with their values (None: drawn plain).
    pub points: std::borrow::Cow<'a, [([f64; 2], Option<f64>)]>,
    pub point_colouring: Option<std::borrow::Cow<'a, Colouring>>,
    /// A number that changes whenever the points or their colouring do
    /// (the document's derived-data key), so their dots can be kept from
    /// frame to frame; `None` rebuilds them every frame.
    pub points_version: Option<u64>,
    pub highlight: Vec<[f64; 2]>,
    pub lines: Vec<(Vec<[f64; 2]>, Color32, bool)>,
    pub collars: Vec<([f64; 2], String)>,
    pub units: String,
}

/// What happened on the map this frame.
#[derive(Default, Debug, Clone, Copy)]
pub struct MapResponse {
    pub hover: Option<[f64; 2]>,
    pub clicked: Option<[f64; 2]>,
    pub double_clicked: bool,
}

/// A white disc with a dark rim and soft edge, tinted per dot by the
/// vertex colour (the rim stays dark).
fn dot_image() -> ColorImage {
    const N: usize = 32;
    let mut img = ColorImage::new([N, N], vec![Color32::TRANSPARENT; N * N]);
    let c = 0.5 * N as f32;
    for j in 0..N {
        for i in 0..N {
            let d = ((i as f32 + 0.5 - c).hypot(j as f32 + 0.5 - c)) / c;
            let alpha = ((1.0 - d) * N as f32 * 0.5).clamp(0.0, 1.0);
            let grey = if d > 0.8 { 40 } else { 255 };
            let a = (alpha * 255.0) as u8;
            img.pixels[i + N * j] = Color32::from_rgba_premultiplied(
                (grey as f32 * alpha) as u8,
                (grey as f32 * alpha) as u8,
                (grey as f32 * alpha) as u8,
                a,
            );
        }
    }
    img
}

/// Dots of radius `r` points as one textured mesh, two triangles a dot.
///
/// Hundreds of stations drawn as separate anti-aliased circles took most of
/// a frame under software rendering (every circle's fill and stroke
/// tessellated, tens of triangles each); a quad per dot is a small fraction.
pub fn dot_mesh(
    texture: egui::TextureId,
    dots: impl Iterator<Item = (Pos2, Color32)>,
    r: f32,
) -> egui::Mesh {
    let mut mesh = egui::Mesh::with_texture(texture);
    let uv = Rect::from_min_max(Pos2::ZERO, Pos2::new(1.0, 1.0));
    for (c, col) in dots {
        mesh.add_rect_with_uv(Rect::from_center_size(c, Vec2::splat(2.0 * r)), uv, col);
    }
    mesh
}

/// The top edge of `r` and, with `left`, its left edge, `w` points wide and
/// inside it, as quads.
fn edge_quads(mesh: &mut egui::Mesh, r: Rect, w: f32, left: bool, col: Color32) {
    let w = w.min(0.5 * r.width()).min(0.5 * r.height());
    mesh.add_colored_rect(
        Rect::from_min_max(r.min, Pos2::new(r.max.x, r.min.y + w)),
        col,
    );
    if left {
        mesh.add_colored_rect(
            Rect::from_min_max(
                Pos2::new(r.min.x, r.min.y + w),
                Pos2::new(r.min.x + w, r.max.y),
            ),
            col,
        );
    }
}

/// Texture cache of grid images.
#[derive(Default)]
pub struct Textures {
    map: HashMap<String, TextureHandle>,
    /// Contour lines by grid key and interval, with the interval used.
    contours: HashMap<String, fieldstone_core::grid::contour::ContourSet>,
    /// The station dot.
    dot: Option<TextureHandle>,
    /// Colourings of the grids and arrays shown, by the same keys.
    colourings: HashMap<String, Colouring>,
    /// The last station-dot mesh or image and what it was made from (see
    /// [`station_dots`]).
    dots: Option<(DotsKey, egui::Mesh)>,
    dots_image: Option<(DotsKey, TextureHandle)>,
}

/// What a station-dot mesh depends on: the points and their colouring (by
/// the version their owner gives), the view.
#[derive(Debug, Clone, Copy, PartialEq)]
struct DotsKey {
    version: u64,
    n: usize,
    centre: [f64; 2],
    scale: f64,
    rect: Rect,
}

/// Once a map shows more dots than [`DOTS_IN_FULL`], one coloured cell per
/// this many screen points in each direction: a survey of millions of
/// readings draws as a dense carpet either way, and the image keeps the
/// frame short.
const DOT_BIN: f32 = 2.0;
/// Up to this many visible dots every one is drawn.
const DOTS_IN_FULL: usize = 50_000;

/// How the station dots are drawn this frame.
enum Dots {
    /// Every visible dot as a textured quad.
    Mesh(egui::Mesh),
    /// A dense survey: one pixel per [`DOT_BIN`]-point cell of the map,
    /// drawn as one image over the map's rectangle.
    Image(egui::TextureId),
}

/// The station dots of `layers`: every visible dot as one textured mesh up
/// to [`DOTS_IN_FULL`], else one coloured cell per [`DOT_BIN`]-point square
/// of the screen (the last reading in the list wins), painted into an
/// image, so millions of readings cost one quad to draw. Points with a
/// version (the survey map's) keep their mesh or image from frame to frame
/// until the view or the version changes, so an idle frame builds nothing.
fn station_dots(
    textures: &mut Textures,
    ctx: &egui::Context,
    dot: egui::TextureId,
    layers: &MapLayers,
    frame: &MapFrame,
    rect: Rect,
) -> Dots {
    let stable = layers.points_version.is_some();
    let key = DotsKey {
        version: layers.points_version.unwrap_or(0),
        n: layers.points.len(),
        centre: frame.centre,
        scale: frame.scale,
        rect,
    };
    if stable {
        if let Some((k, mesh)) = &textures.dots {
            if *k == key && mesh.texture_id == dot {
                return Dots::Mesh(mesh.clone());
            }
        }
        if let Some((k, tex)) = &textures.dots_image {
            if *k == key {
                return Dots::Image(tex.id());
            }
        }
    }
    let colour = |v: &Option<f64>| match (v, &layers.point_colouring) {
        (Some(v), Some(c)) if v.is_finite() => c.colour(*v),
        _ => Color32::from_gray(60),
    };
    let visible: Vec<(Pos2, &Option<f64>)> = layers
        .points
        .iter()
        .filter_map(|(p, v)| {
            let q = frame.to_screen(rect, *p);
            rect.contains(q).then_some((q, v))
        })
        .collect();
    if visible.len() <= DOTS_IN_FULL {
        let mesh = dot_mesh(dot, visible.iter().map(|(q, v)| (*q, colour(v))), 3.6);
        textures.dots = stable.then(|| (key, mesh.clone()));
        return Dots::Mesh(mesh);
    }
    let nx = (rect.width() / DOT_BIN).ceil().max(1.0) as usize;
    let ny = (rect.height() / DOT_BIN).ceil().max(1.0) as usize;
    let mut image = ColorImage::new([nx, ny], vec![Color32::TRANSPARENT; nx * ny]);
    for (q, v) in &visible {
        let i = (((q.x - rect.left()) / DOT_BIN) as usize).min(nx - 1);
        let j = (((q.y - rect.top()) / DOT_BIN) as usize).min(ny - 1);
        image.pixels[i + nx * j] = colour(v);
    }
    let tex = ctx.load_texture("station-cells", image, TextureOptions::NEAREST);
    let id = tex.id();
    textures.dots_image = Some((key, tex));
    Dots::Image(id)
}

impl Textures {
    /// The colouring cached under `key`, made by `make` the first time.
    pub fn colouring(&mut self, key: &str, make: impl FnOnce() -> Colouring) -> Colouring {
        self.colourings
            .entry(key.to_string())
            .or_insert_with(make)
            .clone()
    }
}

fn grid_image(g: &Grid2, c: &Colouring, hillshade: bool) -> ColorImage {
    use fieldstone_core::grid::shade;
    let mut img = ColorImage::new([g.nx, g.ny], vec![Color32::TRANSPARENT; g.nx * g.ny]);
    let light = hillshade.then(|| shade::hillshade(g, 315.0, 45.0, shade::auto_exaggeration(g)));
    for j in 0..g.ny {
        for i in 0..g.nx {
            let k = i + g.nx * j;
            let z = g.values[k];
            if !z.is_finite() {
                continue;
            }
            let mut col = c.map.at(c.t(z));
            if let Some(l) = &light {
                // Sun from the north-west, 45° up (common practice).
                col = shade::shade_colour(col, l[k]);
            }
            // Image row 0 is the north edge.
            img.pixels[i + g.nx * (g.ny - 1 - j)] = Color32::from_rgb(col[0], col[1], col[2]);
        }
    }
    img
}

/// Draws a vertical colour bar with ticks at the right of `rect`.
pub fn colour_bar(ui: &Ui, rect: Rect, c: &Colouring, units: &str) {
    let p = ui.painter();
    let bar = Rect::from_min_size(
        Pos2::new(rect.right() - 84.0, rect.top() + 34.0),
        Vec2::new(14.0, (rect.height() - 80.0).clamp(60.0, 260.0)),
    );
    p.rect_filled(
        bar.expand2(Vec2::new(4.0, 22.0))
            .translate(Vec2::new(22.0, 4.0)),
        3.0,
        Color32::from_white_alpha(210),
    );
    let n = 48;
    for k in 0..n {
        let t = (k as f64 + 0.5) / n as f64;
        let col = c.map.at(t);
        let y0 = bar.bottom() - (k + 1) as f32 * bar.height() / n as f32;
        p.rect_filled(
            Rect::from_min_size(
                Pos2::new(bar.left(), y0),
                Vec2::new(bar.width(), bar.height() / n as f32 + 0.5),
            ),
            0.0,
            Color32::from_rgb(col[0], col[1], col[2]),
        );
    }
    let font = egui::FontId::proportional(11.0);
    if c.equalised.is_some() {
        p.text(
            Pos2::new(bar.right() + 4.0, bar.top()),
            egui::Align2::LEFT_CENTER,
            "high",
            font.clone(),
            Color32::BLACK,
        );
        p.text(
            Pos2::new(bar.right() + 4.0, bar.bottom()),
            egui::Align2::LEFT_CENTER,
            "low",
            font.clone(),
            Color32::BLACK,
        );
        p.text(
            Pos2::new(bar.left(), bar.bottom() + 12.0),
            egui::Align2::LEFT_CENTER,
            "equalised",
            font.clone(),
            Color32::DARK_GRAY,
        );
    } else {
        for v in ticks(c.lo, c.hi, 5) {
            let y = bar.bottom() - ((v - c.lo) / (c.hi - c.lo)) as f32 * bar.height();
            p.text(
                Pos2::new(bar.right() + 4.0, y),
                egui::Align2::LEFT_CENTER,
                format!("{}", (v * 1e6).round() / 1e6),
                font.clone(),
                Color32::BLACK,
            );
        }
    }
    // Long unit names lose their explanation in brackets to fit the bar.
    let short = units.split(" (").next().unwrap_or(units);
    p.text(
        Pos2::new(bar.left(), bar.top() - 10.0),
        egui::Align2::LEFT_CENTER,
        short,
        font,
        Color32::BLACK,
    );
}

/// Shows the map in the remaining space.
pub fn map(
    ui: &mut Ui,
    frame: &mut MapFrame,
    textures: &mut Textures,
    layers: &MapLayers,
    extent: Option<[f64; 4]>,
) -> MapResponse {
    let (rect, resp) = ui.allocate_exact_size(ui.available_size(), Sense::click_and_drag());
    if !frame.fitted {
        if let Some(e) = extent {
            frame.fit(e, rect);
        }
    }
    if resp.dragged() {
        let d = resp.drag_delta();
        frame.centre[0] -= d.x as f64 * frame.scale;
        frame.centre[1] += d.y as f64 * frame.scale;
    }
    let mut out = MapResponse::default();
    if let Some(h) = resp.hover_pos() {
        let zoom = ui.input(|i| i.zoom_delta()) as f64
            * (1.0 + 0.0015 * ui.input(|i| i.smooth_scroll_delta.y) as f64);
        if (zoom - 1.0).abs() > 1e-6 {
            let before = frame.to_world(rect, h);
            frame.scale /= zoom;
            let after = frame.to_world(rect, h);
            frame.centre[0] += before[0] - after[0];
            frame.centre[1] += before[1] - after[1];
        }
        out.hover = Some(frame.to_world(rect, h));
    }
    if resp.clicked() {
        out.clicked = resp.interact_pointer_pos().map(|p| frame.to_world(rect, p));
    }
    out.double_clicked = resp.double_clicked();
    let painter = ui.painter_at(rect);
    painter.rect_filled(rect, 0.0, Color32::from_rgb(246, 245, 241));
    if let Some(gl) = &layers.grid {
        let key = format!(
            "{}|{:?}|{}|{}|{}",
            gl.key,
            gl.colouring.map,
            gl.colouring.lo,
            gl.colouring.equalised.is_some(),
            gl.hillshade
        );
        let tex = textures.map.entry(key).or_insert_with(|| {
            ui.ctx().load_texture(
                "grid",
                grid_image(gl.grid, &gl.colouring, gl.hillshade),
                TextureOptions::NEAREST,
            )
        });
        let g = gl.grid;
        let (x0, x1, y0, y1) = g.extent();
        let a = frame.to_screen(rect, [x0 - 0.5 * g.dx, y1 + 0.5 * g.dy]);
        let b = frame.to_screen(rect, [x1 + 0.5 * g.dx, y0 - 0.5 * g.dy]);
        painter.image(
            tex.id(),
            Rect::from_two_pos(a, b),
            Rect::from_min_max(Pos2::ZERO, Pos2::new(1.0, 1.0)),
            Color32::WHITE,
        );
        if let Some(iv) = gl.contours {
            let ckey = format!("{}|{iv}", gl.key);
            let (used, lines) = textures
                .contours
                .entry(ckey)
                .or_insert_with(|| fieldstone_core::grid::contour::contour_set(g, iv));
            let stroke = Stroke::new(0.8, Color32::from_rgba_unmultiplied(20, 20, 20, 170));
            for (level, line) in lines.iter() {
                let pts: Vec<Pos2> = line.iter().map(|p| frame.to_screen(rect, *p)).collect();
                let len: f32 = pts.windows(2).map(|w| w[0].distance(w[1])).sum();
                if len > 160.0 {
                    let mid = pts[pts.len() / 2];
                    painter.text(
                        mid,
                        egui::Align2::CENTER_BOTTOM,
                        format!("{}", (level * 1e6).round() / 1e6),
                        egui::FontId::proportional(10.0),
                        Color32::from_gray(20),
                    );
                }
                painter.add(egui::Shape::line(pts, stroke));
            }
            painter.text(
                Pos2::new(rect.left() + 44.0, rect.top() + 8.0),
                egui::Align2::LEFT_TOP,
                format!(
                    "contours every {} {}",
                    (*used * 1e6).round() / 1e6,
                    layers.units.split(" (").next().unwrap_or("")
                ),
                egui::FontId::proportional(11.0),
                Color32::from_gray(40),
            );
        }
    }
    for (pts, col, closed) in &layers.lines {
        let mut s: Vec<Pos2> = pts.iter().map(|p| frame.to_screen(rect, *p)).collect();
        if *closed && s.len() > 2 {
            s.push(s[0]);
        }
        painter.add(egui::Shape::line(s, Stroke::new(2.0, *col)));
    }
    let dot = textures
        .dot
        .get_or_insert_with(|| {
            ui.ctx()
                .load_texture("dot", dot_image(), TextureOptions::LINEAR)
        })
        .id();
    match station_dots(textures, ui.ctx(), dot, layers, frame, rect) {
        Dots::Mesh(mesh) => {
            painter.add(egui::Shape::mesh(mesh));
        }
        Dots::Image(id) => {
            painter.image(
                id,
                rect,
                Rect::from_min_max(Pos2::ZERO, Pos2::new(1.0, 1.0)),
                Color32::WHITE,
            );
        }
    }
    for p in &layers.highlight {
        painter.circle_stroke(
            frame.to_screen(rect, *p),
            6.0,
            Stroke::new(2.0, Color32::from_rgb(220, 30, 30)),
        );
    }
    for (p, label) in &layers.collars {
        let q = frame.to_screen(rect, *p);
        painter.circle(q, 4.5, Color32::WHITE, Stroke::new(2.0, Color32::BLACK));
        painter.text(
            q + Vec2::new(7.0, -7.0),
            egui::Align2::LEFT_BOTTOM,
            label,
            egui::FontId::proportional(11.0),
            Color32::BLACK,
        );
    }
    // Scale bar and north arrow.
    let width_m = rect.width() as f64 * frame.scale;
    let len = round_below(0.25 * width_m);
    let px = (len / frame.scale) as f32;
    let base = Pos2::new(rect.left() + 16.0, rect.bottom() - 18.0);
    painter.rect_filled(
        Rect::from_min_size(base - Vec2::new(6.0, 20.0), Vec2::new(px + 12.0, 28.0)),
        3.0,
        Color32::from_white_alpha(200),
    );
    painter.line_segment(
        [base, base + Vec2::new(px, 0.0)],
        Stroke::new(3.0, Color32::BLACK),
    );
    painter.text(
        base + Vec2::new(px / 2.0, -5.0),
        egui::Align2::CENTER_BOTTOM,
        format!("{len} m"),
        egui::FontId::proportional(11.0),
        Color32::BLACK,
    );
    let n = Pos2::new(rect.left() + 24.0, rect.top() + 44.0);
    painter.arrow(n, Vec2::new(0.0, -28.0), Stroke::new(2.0, Color32::BLACK));
    painter.text(
        n + Vec2::new(0.0, 4.0),
        egui::Align2::CENTER_TOP,
        "N",
        egui::FontId::proportional(13.0),
        Color32::BLACK,
    );
    if let Some(c) = layers
        .point_colouring
        .as_deref()
        .or(layers.grid.as_ref().map(|g| &g.colouring))
    {
        colour_bar(ui, rect, c, &layers.units);
    }
    out
}

/// What a section view shows besides the cell values.
#[derive(Debug, Clone, Default)]
pub struct SectionDecor {
    /// Outline every cell.
    pub cell_edges: bool,
    /// The core's distance range along the line and its bottom elevation:
    /// cells outside are padding and drawn paler.
    pub core: Option<([f64; 2], f64)>,
    /// Drill holes projected onto the section with their logged values.
    pub holes: Vec<fieldstone_core::export::figure::ProjectedHole>,
    pub log_label: String,
    /// The mesh's x and y node positions: vertical cell edges are drawn only
    /// where the line enters another mesh column (samples are closer than
    /// the wide padding cells).
    pub columns: Option<(Vec<f64>, Vec<f64>)>,
}

/// Shows a section (distance × elevation) in the remaining space; returns the
/// hovered (distance, elevation, value).
#[allow(clippy::too_many_arguments)]
pub fn section(
    ui: &mut Ui,
    samples: &[SectionSample],
    layer_tops: &[f64],
    terrain: &[[f64; 2]],
    c: &Colouring,
    units: &str,
    exaggeration: f64,
    decor: &SectionDecor,
) -> Option<(f64, f64, f64)> {
    let (rect, resp) = ui.allocate_exact_size(ui.available_size(), Sense::hover());
    let painter = ui.painter_at(rect);
    painter.rect_filled(rect, 0.0, Color32::from_rgb(246, 245, 241));
    if samples.is_empty() || layer_tops.len() < 2 {
        painter.text(
            rect.center(),
            egui::Align2::CENTER_CENTER,
            "no section: run a scenario first",
            egui::FontId::proportional(14.0),
            Color32::DARK_GRAY,
        );
        return None;
    }
    let dmax = samples
        .iter()
        .map(|s| s.distance_m)
        .fold(0.0, f64::max)
        .max(1.0);
    let zmax = terrain
        .iter()
        .map(|t| t[1])
        .fold(f64::NEG_INFINITY, f64::max)
        .max(layer_tops[layer_tops.len() - 1]);
    let zmin = layer_tops[0];
    let inner = rect
        .shrink2(Vec2::new(60.0, 24.0))
        .translate(Vec2::new(-20.0, 0.0));
    let sx = inner.width() as f64 / dmax;
    let sz = (sx * exaggeration).min(inner.height() as f64 / (zmax - zmin).max(1.0));
    let to = |d: f64, z: f64| {
        Pos2::new(
            inner.left() + (d * sx) as f32,
            inner.top() + ((zmax - z) * sz) as f32,
        )
    };
    let (dists, spans) = fieldstone_core::export::section::distance_spans(samples);
    let half = |i: usize| spans[i];
    let mut hovered = None;
    let hp = resp.hover_pos();
    let (mut cells, mut edges) = (egui::Mesh::default(), egui::Mesh::default());
    // Whether the samples at each distance start a new mesh column.
    let mut new_column = vec![true; dists.len()];
    if let Some((xs, ys)) = &decor.columns {
        let column = |x: f64, y: f64| {
            (
                xs.partition_point(|v| *v <= x),
                ys.partition_point(|v| *v <= y),
            )
        };
        let mut at: Vec<Option<(usize, usize)>> = vec![None; dists.len()];
        for s in samples {
            let i = dists
                .partition_point(|d| *d < s.distance_m)
                .min(dists.len() - 1);
            at[i].get_or_insert(column(s.x, s.y));
        }
        for i in 1..dists.len() {
            new_column[i] = at[i] != at[i - 1];
        }
    }
    for s in samples {
        if !s.value.is_finite() {
            continue;
        }
        let i = dists
            .partition_point(|d| *d < s.distance_m)
            .min(dists.len() - 1);
        let (a, b) = half(i);
        let k = layer_tops.partition_point(|z| *z < s.elevation_m);
        if k == 0 || k >= layer_tops.len() {
            continue;
        }
        let r = Rect::from_two_pos(to(a, layer_tops[k]), to(b, layer_tops[k - 1]));
        // One mesh of plain quads for all cells: per-cell anti-aliased
        // rectangles and strokes cost most of a frame under software rendering.
        let mut col = c.colour(s.value);
        if let Some(([c0, c1], zb)) = decor.core {
            if s.distance_m < c0 || s.distance_m > c1 || s.elevation_m < zb {
                // Padding: the colour mixed 43 % toward white, in one quad.
                let pale = |v: u8| v + ((255 - v) as u16 * 110 / 255) as u8;
                col = Color32::from_rgb(pale(col.r()), pale(col.g()), pale(col.b()));
            }
        }
        cells.add_colored_rect(r, col);
        if decor.cell_edges {
            // Top and left edges of every cell draw each shared edge once;
            // the bottom and right of the whole section come after the loop.
            edge_quads(
                &mut edges,
                r,
                1.0,
                new_column[i],
                Color32::from_black_alpha(55),
            );
        }
        if hp.is_some_and(|h| r.contains(h)) {
            hovered = Some((s.distance_m, s.elevation_m, s.value));
        }
    }
    if decor.cell_edges && !cells.is_empty() {
        let b = cells
            .vertices
            .iter()
            .fold(Rect::NOTHING, |r, v| r.union(Rect::from_pos(v.pos)));
        let col = Color32::from_black_alpha(55);
        edges.add_colored_rect(
            Rect::from_min_max(Pos2::new(b.min.x, b.max.y - 1.0), b.max),
            col,
        );
        edges.add_colored_rect(
            Rect::from_min_max(Pos2::new(b.max.x - 1.0, b.min.y), b.max),
            col,
        );
    }
    painter.add(egui::Shape::mesh(cells));
    painter.add(egui::Shape::mesh(edges));
    if decor.cell_edges {
        if let Some(([c0, c1], zb)) = decor.core {
            let r = Rect::from_two_pos(to(c0, zmax), to(c1, zb));
            painter.rect_stroke(
                r,
                0.0,
                Stroke::new(1.5, Color32::from_rgb(20, 20, 160)),
                egui::StrokeKind::Middle,
            );
            painter.text(
                r.left_bottom() + Vec2::new(4.0, -4.0),
                egui::Align2::LEFT_BOTTOM,
                "core (paler: padding; blank: air)",
                egui::FontId::proportional(11.0),
                Color32::from_rgb(20, 20, 160),
            );
        }
    }
    for h in &decor.holes {
        if h.trace.len() > 1 {
            painter.add(egui::Shape::line(
                h.trace.iter().map(|p| to(p[0], p[1])).collect(),
                Stroke::new(2.5, Color32::BLACK),
            ));
            painter.text(
                to(h.trace[0][0], h.trace[0][1]) + Vec2::new(4.0, -4.0),
                egui::Align2::LEFT_BOTTOM,
                &h.id,
                egui::FontId::proportional(11.0),
                Color32::BLACK,
            );
        }
        let mut last_label = f32::NEG_INFINITY;
        for (a, b, v) in &h.logs {
            let (pa, pb) = (to(a[0], a[1]), to(b[0], b[1]));
            let x = 0.5 * (pa.x + pb.x) + 3.0;
            let r = Rect::from_min_max(
                Pos2::new(x, pa.y.min(pb.y)),
                Pos2::new(x + 7.0, pa.y.max(pb.y).max(pa.y.min(pb.y) + 1.0)),
            );
            painter.rect_filled(r, 0.0, c.colour(*v));
            if r.top() - last_label >= 50.0 {
                painter.text(
                    Pos2::new(r.right() + 3.0, r.center().y),
                    egui::Align2::LEFT_CENTER,
                    format!("{}", (v * 1000.0).round() / 1000.0),
                    egui::FontId::proportional(10.0),
                    Color32::BLACK,
                );
                last_label = r.top();
            }
        }
    }
    if decor.holes.iter().any(|h| !h.logs.is_empty()) {
        painter.text(
            Pos2::new(inner.left(), rect.bottom() - 4.0),
            egui::Align2::LEFT_BOTTOM,
            format!("beside holes: {} on the model scale", decor.log_label),
            egui::FontId::proportional(11.0),
            Color32::DARK_GRAY,
        );
    }
    if terrain.len() > 1 {
        painter.add(egui::Shape::line(
            terrain.iter().map(|t| to(t[0], t[1])).collect(),
            Stroke::new(2.0, Color32::BLACK),
        ));
    }
    let font = egui::FontId::proportional(11.0);
    for d in ticks(0.0, dmax, 6) {
        let p = to(d, zmin);
        painter.text(
            p + Vec2::new(0.0, 4.0),
            egui::Align2::CENTER_TOP,
            format!("{d}"),
            font.clone(),
            Color32::BLACK,
        );
    }
    for z in ticks(zmin, zmax, 5) {
        let p = to(0.0, z);
        painter.text(
            p - Vec2::new(4.0, 0.0),
            egui::Align2::RIGHT_CENTER,
            format!("{z}"),
            font.clone(),
            Color32::BLACK,
        );
    }
    painter.text(
        Pos2::new(inner.left(), rect.top() + 4.0),
        egui::Align2::LEFT_TOP,
        format!(
            "elevation (m), distance along the section (m); vertical exaggeration {exaggeration}×"
        ),
        font,
        Color32::DARK_GRAY,
    );
    colour_bar(ui, rect, c, units);
    hovered
}
