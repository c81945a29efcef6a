//! The drawing surface: a figure as a list of shapes, rasterised to PNG
//! (lettered with the bundled DejaVu Sans) or written as SVG.

use super::colour::Rgb;
use super::BASE_DPI;
use ab_glyph::{Font, FontRef, PxScale, ScaleFont};

static FONT: &[u8] = include_bytes!("../../../../assets/fonts/DejaVuSans.ttf");

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
