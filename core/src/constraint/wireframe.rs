//! Closed triangulated surfaces (wireframes) from OBJ and STL (ASCII and
//! binary), with a closedness report and two inside tests:
//!
//! * the generalised winding number, Σ Ω_t / 4π over the triangles' solid
//!   angles (van Oosterom & Strackee 1983, tan(Ω/2) = det / (abc + (a·b)c +
//!   (b·c)a + (c·a)b)): about 1 inside a closed surface, 0 outside, and
//!   graceful on small holes;
//! * ray parity along the vertical, evaluated for whole mesh columns at once
//!   ([`Wireframe::column_crossings`]), which is what the constraint builder
//!   uses for speed.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use thiserror::Error;

#[derive(Debug, Clone, PartialEq)]
pub struct Wireframe {
    pub name: String,
    pub vertices: Vec<[f64; 3]>,
    pub triangles: Vec<[u32; 3]>,
}

#[derive(Debug, Error)]
pub enum WireframeError {
    #[error("cannot read {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: line {line}: {message}")]
    Syntax {
        file: PathBuf,
        line: usize,
        message: String,
    },
    #[error("{file}: {message}")]
    Binary { file: PathBuf, message: String },
    #[error("{file}: the surface has no triangles")]
    Empty { file: PathBuf },
    #[error("{file}: the extension is not .obj or .stl")]
    Format { file: PathBuf },
}

/// What is wrong with a surface that should be closed.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Closedness {
    /// Edges used by only one triangle (holes).
    pub open_edges: usize,
    /// Edges used by more than two triangles.
    pub non_manifold_edges: usize,
    /// Edges used twice in the same direction (inconsistent orientation).
    pub misoriented_edges: usize,
}

impl Closedness {
    pub fn is_closed(&self) -> bool {
        self.open_edges == 0 && self.non_manifold_edges == 0
    }

    pub fn report(&self) -> String {
        if self.is_closed() && self.misoriented_edges == 0 {
            "closed and consistently oriented".into()
        } else {
            format!("{} open edges (holes), {} edges shared by more than two triangles, {} edges with inconsistent orientation", self.open_edges, self.non_manifold_edges, self.misoriented_edges)
        }
    }
}

fn parse_f(t: Option<&str>, file: &Path, line: usize) -> Result<f64, WireframeError> {
    let t = t.ok_or_else(|| WireframeError::Syntax {
        file: file.to_path_buf(),
        line,
        message: "missing coordinate".into(),
    })?;
    t.parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .ok_or_else(|| WireframeError::Syntax {
            file: file.to_path_buf(),
            line,
            message: format!("'{t}' is not a number"),
        })
}

impl Wireframe {
    /// Reads an OBJ or STL file by its extension.
    pub fn read(path: &Path) -> Result<Wireframe, WireframeError> {
        let bytes = std::fs::read(path).map_err(|source| WireframeError::Read {
            file: path.to_path_buf(),
            source,
        })?;
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(|e| e.to_ascii_lowercase())
            .unwrap_or_default();
        let name = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default();
        let w = match ext.as_str() {
            "obj" => Self::parse_obj(&String::from_utf8_lossy(&bytes), path)?,
            "stl" => Self::parse_stl(&bytes, path)?,
            _ => {
                return Err(WireframeError::Format {
                    file: path.to_path_buf(),
                })
            }
        };
        if w.triangles.is_empty() {
            return Err(WireframeError::Empty {
                file: path.to_path_buf(),
            });
        }
        Ok(Wireframe { name, ..w })
    }

    /// Wavefront OBJ: `v x y z` and `f a b c ...` (1-based or negative
    /// indices, `a/b/c` forms); polygons are fanned into triangles.
    pub fn parse_obj(text: &str, file: &Path) -> Result<Wireframe, WireframeError> {
        let (mut v, mut t) = (Vec::new(), Vec::new());
        for (ln, line) in text.lines().enumerate() {
            let mut it = line.split_whitespace();
            match it.next() {
                Some("v") => v.push([
                    parse_f(it.next(), file, ln + 1)?,
                    parse_f(it.next(), file, ln + 1)?,
                    parse_f(it.next(), file, ln + 1)?,
                ]),
                Some("f") => {
                    let idx: Vec<u32> = it
                        .map(|tok| {
                            let first = tok.split('/').next().unwrap_or("");
                            let i: i64 = first.parse().map_err(|_| WireframeError::Syntax {
                                file: file.to_path_buf(),
                                line: ln + 1,
                                message: format!("bad face index '{tok}'"),
                            })?;
                            let k = if i < 0 { v.len() as i64 + i } else { i - 1 };
                            if k < 0 || k >= v.len() as i64 {
                                return Err(WireframeError::Syntax {
                                    file: file.to_path_buf(),
                                    line: ln + 1,
                                    message: format!(
                                        "face index {i} refers to no vertex (there are {} so far)",
                                        v.len()
                                    ),
                                });
                            }
                            Ok(k as u32)
                        })
                        .collect::<Result<_, _>>()?;
                    if idx.len() < 3 {
                        return Err(WireframeError::Syntax {
                            file: file.to_path_buf(),
                            line: ln + 1,
                            message: "a face needs at least three vertices".into(),
                        });
                    }
                    for k in 1..idx.len() - 1 {
                        t.push([idx[0], idx[k], idx[k + 1]]);
                    }
                }
                _ => {}
            }
        }
        Ok(Wireframe {
            name: String::new(),
            vertices: v,
            triangles: t,
        })
    }

    /// STL, binary or ASCII (vertices welded by exact coordinates).
    pub fn parse_stl(bytes: &[u8], file: &Path) -> Result<Wireframe, WireframeError> {
        let is_ascii =
            bytes.starts_with(b"solid") && bytes.windows(5).take(2000).any(|w| w == b"facet");
        let mut tris: Vec<[[f64; 3]; 3]> = Vec::new();
        if is_ascii {
            let text = String::from_utf8_lossy(bytes);
            let mut cur = Vec::new();
            for (ln, line) in text.lines().enumerate() {
                let mut it = line.split_whitespace();
                if it.next() == Some("vertex") {
                    cur.push([
                        parse_f(it.next(), file, ln + 1)?,
                        parse_f(it.next(), file, ln + 1)?,
                        parse_f(it.next(), file, ln + 1)?,
                    ]);
                    if cur.len() == 3 {
                        tris.push([cur[0], cur[1], cur[2]]);
                        cur.clear();
                    }
                }
            }
        } else {
            if bytes.len() < 84 {
                return Err(WireframeError::Binary {
                    file: file.to_path_buf(),
                    message: format!("{} bytes is shorter than a binary STL header", bytes.len()),
                });
            }
            let n = u32::from_le_bytes([bytes[80], bytes[81], bytes[82], bytes[83]]) as usize;
            let need = 84 + n.saturating_mul(50);
            if bytes.len() < need {
                return Err(WireframeError::Binary { file: file.to_path_buf(), message: format!("the header promises {n} triangles ({need} bytes) but the file has {} bytes (truncated?)", bytes.len()) });
            }
            for k in 0..n {
                let base = 84 + 50 * k + 12;
                let f = |o: usize| {
                    f32::from_le_bytes([
                        bytes[base + o],
                        bytes[base + o + 1],
                        bytes[base + o + 2],
                        bytes[base + o + 3],
                    ]) as f64
                };
                let tri = [
                    [f(0), f(4), f(8)],
                    [f(12), f(16), f(20)],
                    [f(24), f(28), f(32)],
                ];
                if tri.iter().flatten().any(|v| !v.is_finite()) {
                    return Err(WireframeError::Binary {
                        file: file.to_path_buf(),
                        message: format!("triangle {} has a non-finite coordinate", k + 1),
                    });
                }
                tris.push(tri);
            }
        }
        // Weld identical vertices so edges can be matched.
        let mut index: HashMap<[u64; 3], u32> = HashMap::new();
        let mut vertices = Vec::new();
        let mut triangles = Vec::with_capacity(tris.len());
        for t in tris {
            let mut ids = [0u32; 3];
            for (a, p) in t.iter().enumerate() {
                let key = [p[0].to_bits(), p[1].to_bits(), p[2].to_bits()];
                ids[a] = *index.entry(key).or_insert_with(|| {
                    vertices.push(*p);
                    (vertices.len() - 1) as u32
                });
            }
            triangles.push(ids);
        }
        Ok(Wireframe {
            name: String::new(),
            vertices,
            triangles,
        })
    }

    /// Edge use counts: open, non-manifold and misoriented edges.
    pub fn closedness(&self) -> Closedness {
        let mut uses: HashMap<(u32, u32), (u32, u32)> = HashMap::new();
        for t in &self.triangles {
            for (a, b) in [(t[0], t[1]), (t[1], t[2]), (t[2], t[0])] {
                let key = (a.min(b), a.max(b));
                let e = uses.entry(key).or_insert((0, 0));
                if a < b {
                    e.0 += 1;
                } else {
                    e.1 += 1;
                }
            }
        }
        let mut c = Closedness::default();
        for (f, r) in uses.values() {
            match f + r {
                1 => c.open_edges += 1,
                2 if *f != 1 => c.misoriented_edges += 1,
                2 => {}
                _ => c.non_manifold_edges += 1,
            }
        }
        c
    }

    /// Generalised winding number at `p`.
    pub fn winding_number(&self, p: [f64; 3]) -> f64 {
        let mut sum = 0.0;
        for t in &self.triangles {
            let v = |k: usize| {
                let q = self.vertices[t[k] as usize];
                [q[0] - p[0], q[1] - p[1], q[2] - p[2]]
            };
            let (a, b, c) = (v(0), v(1), v(2));
            let n = |u: [f64; 3]| (u[0] * u[0] + u[1] * u[1] + u[2] * u[2]).sqrt();
            let dot = |u: [f64; 3], w: [f64; 3]| u[0] * w[0] + u[1] * w[1] + u[2] * w[2];
            let det = a[0] * (b[1] * c[2] - b[2] * c[1]) - a[1] * (b[0] * c[2] - b[2] * c[0])
                + a[2] * (b[0] * c[1] - b[1] * c[0]);
            let (la, lb, lc) = (n(a), n(b), n(c));
            let den = la * lb * lc + dot(a, b) * lc + dot(b, c) * la + dot(c, a) * lb;
            sum += 2.0 * det.atan2(den);
        }
        sum / (4.0 * std::f64::consts::PI)
    }

    /// Inside by the winding number (> 0.5).
    pub fn contains(&self, p: [f64; 3]) -> bool {
        self.winding_number(p).abs() > 0.5
    }

    /// Bounding box (min, max).
    pub fn bounds(&self) -> ([f64; 3], [f64; 3]) {
        let mut lo = [f64::INFINITY; 3];
        let mut hi = [f64::NEG_INFINITY; 3];
        for v in &self.vertices {
            for a in 0..3 {
                lo[a] = lo[a].min(v[a]);
                hi[a] = hi[a].max(v[a]);
            }
        }
        (lo, hi)
    }

    /// For every column (x_c[i], y_c[j]), the sorted elevations where the
    /// vertical line through it crosses the surface (ray parity: a point is
    /// inside where an odd number of crossings lie above it). Each triangle is
    /// visited once and only for the columns under its footprint. Column
    /// positions exactly on a triangle edge are nudged by 10⁻⁹ of the cell so
    /// that no crossing is counted twice.
    pub fn column_crossings(&self, xc: &[f64], yc: &[f64]) -> Vec<Vec<f64>> {
        let (nx, ny) = (xc.len(), yc.len());
        let mut out: Vec<Vec<f64>> = vec![Vec::new(); nx * ny];
        let nudge_x = if nx > 1 {
            (xc[1] - xc[0]) * 1.0e-9 * std::f64::consts::SQRT_2
        } else {
            1e-9
        };
        let nudge_y = if ny > 1 {
            (yc[1] - yc[0]) * 1.0e-9 * std::f64::consts::E
        } else {
            1e-9
        };
        for t in &self.triangles {
            let (a, b, c) = (
                self.vertices[t[0] as usize],
                self.vertices[t[1] as usize],
                self.vertices[t[2] as usize],
            );
            let (xmin, xmax) = (a[0].min(b[0]).min(c[0]), a[0].max(b[0]).max(c[0]));
            let (ymin, ymax) = (a[1].min(b[1]).min(c[1]), a[1].max(b[1]).max(c[1]));
            let i0 = xc.partition_point(|&x| x + nudge_x < xmin);
            let i1 = xc.partition_point(|&x| x + nudge_x <= xmax);
            let j0 = yc.partition_point(|&y| y + nudge_y < ymin);
            let j1 = yc.partition_point(|&y| y + nudge_y <= ymax);
            let d = (b[1] - c[1]) * (a[0] - c[0]) + (c[0] - b[0]) * (a[1] - c[1]);
            if d == 0.0 {
                continue; // vertical triangle: no crossing of a vertical line
            }
            for j in j0..j1 {
                let y = yc[j] + nudge_y;
                for i in i0..i1 {
                    let x = xc[i] + nudge_x;
                    let l1 = ((b[1] - c[1]) * (x - c[0]) + (c[0] - b[0]) * (y - c[1])) / d;
                    let l2 = ((c[1] - a[1]) * (x - c[0]) + (a[0] - c[0]) * (y - c[1])) / d;
                    let l3 = 1.0 - l1 - l2;
                    if l1 >= 0.0 && l2 >= 0.0 && l3 >= 0.0 {
                        out[i + nx * j].push(l1 * a[2] + l2 * b[2] + l3 * c[2]);
                    }
                }
            }
        }
        for v in &mut out {
            v.sort_by(|p, q| p.total_cmp(q));
        }
        out
    }
}

/// True when `z` is inside given the sorted crossings of its column.
pub fn inside_by_crossings(crossings: &[f64], z: f64) -> bool {
    crossings.iter().filter(|&&c| c > z).count() % 2 == 1
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cube() -> Wireframe {
        let obj = "v 0 0 0\nv 10 0 0\nv 10 10 0\nv 0 10 0\nv 0 0 10\nv 10 0 10\nv 10 10 10\nv 0 10 10\n\
                   f 1 3 2\nf 1 4 3\nf 5 6 7\nf 5 7 8\nf 1 2 6\nf 1 6 5\nf 2 3 7\nf 2 7 6\nf 3 4 8\nf 3 8 7\nf 4 1 5\nf 4 5 8\n";
        Wireframe::parse_obj(obj, Path::new("cube.obj")).unwrap()
    }

    fn tetra() -> Wireframe {
        let obj = "v 0 0 0\nv 10 0 0\nv 0 10 0\nv 0 0 10\nf 1 3 2\nf 1 2 4\nf 2 3 4\nf 3 1 4\n";
        Wireframe::parse_obj(obj, Path::new("t.obj")).unwrap()
    }

    /// A torus-like closed surface: a square ring (outer 0–30, hole 10–20)
    /// extruded from z = 0 to 5, as quads fanned into triangles.
    fn ring() -> Wireframe {
        let mut v = Vec::new();
        let outer = [(0.0, 0.0), (30.0, 0.0), (30.0, 30.0), (0.0, 30.0)];
        let inner = [(10.0, 10.0), (20.0, 10.0), (20.0, 20.0), (10.0, 20.0)];
        for z in [0.0, 5.0] {
            for p in outer.iter().chain(inner.iter()) {
                v.push([p.0, p.1, z]);
            }
        }
        // indices: bottom outer 0-3, bottom inner 4-7, top outer 8-11, top inner 12-15
        let mut t = Vec::new();
        let mut quad = |a: u32, b: u32, c: u32, d: u32| {
            t.push([a, b, c]);
            t.push([a, c, d]);
        };
        for k in 0..4u32 {
            let n = (k + 1) % 4;
            quad(k, n, 8 + n, 8 + k); // outer walls, facing out
            quad(4 + n, 4 + k, 12 + k, 12 + n); // inner walls, facing the hole
            quad(8 + k, 8 + n, 12 + n, 12 + k); // top
            quad(k, 4 + k, 4 + n, n); // bottom
        }
        Wireframe {
            name: "ring".into(),
            vertices: v,
            triangles: t,
        }
    }

    #[test]
    fn closed_surfaces_are_recognised_and_holes_reported() {
        for w in [cube(), tetra(), ring()] {
            let c = w.closedness();
            assert!(c.is_closed() && c.misoriented_edges == 0, "{}", c.report());
        }
        let mut open = cube();
        open.triangles.pop();
        let c = open.closedness();
        assert!(!c.is_closed() && c.open_edges == 3, "{}", c.report());
    }

    #[test]
    fn winding_number_and_ray_parity_agree_inside_outside_and_near_faces() {
        for w in [cube(), tetra(), ring()] {
            let (lo, hi) = w.bounds();
            let mut seed = 7u64;
            let mut rnd = || {
                seed = seed
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                (seed >> 11) as f64 / (1u64 << 53) as f64
            };
            let n = 12;
            let xc: Vec<f64> = (0..n)
                .map(|i| lo[0] - 1.0 + (hi[0] - lo[0] + 2.0) * (i as f64 + 0.37) / n as f64)
                .collect();
            let yc: Vec<f64> = (0..n)
                .map(|j| lo[1] - 1.0 + (hi[1] - lo[1] + 2.0) * (j as f64 + 0.61) / n as f64)
                .collect();
            let cross = w.column_crossings(&xc, &yc);
            for j in 0..n {
                for i in 0..n {
                    for _ in 0..5 {
                        let z = lo[2] - 1.0 + (hi[2] - lo[2] + 2.0) * rnd();
                        let p = [xc[i], yc[j], z];
                        assert_eq!(
                            w.contains(p),
                            inside_by_crossings(&cross[i + n * j], z),
                            "{} at {p:?}",
                            w.name
                        );
                    }
                }
            }
        }
        let c = cube();
        assert!(c.contains([5.0, 5.0, 5.0]) && !c.contains([15.0, 5.0, 5.0]));
        assert!(
            c.contains([5.0, 5.0, 9.999]) && !c.contains([5.0, 5.0, 10.001]),
            "just inside and outside a face"
        );
        assert!((c.winding_number([5.0, 5.0, 5.0]) - 1.0).abs() < 1e-12);
        let r = ring();
        assert!(
            !r.contains([15.0, 15.0, 2.5]),
            "the hole of the ring is outside"
        );
        assert!(r.contains([5.0, 15.0, 2.5]));
        let t = tetra();
        assert!(t.contains([1.0, 1.0, 1.0]) && !t.contains([6.0, 6.0, 6.0]));
    }

    #[test]
    fn stl_binary_and_ascii_read_and_bad_files_are_reported() {
        let c = cube();
        let mut bin = vec![0u8; 80];
        bin.extend_from_slice(&(c.triangles.len() as u32).to_le_bytes());
        let mut ascii = String::from("solid cube\n");
        for t in &c.triangles {
            bin.extend_from_slice(&[0u8; 12]);
            ascii.push_str(" facet normal 0 0 0\n  outer loop\n");
            for &k in t {
                for a in 0..3 {
                    bin.extend_from_slice(&(c.vertices[k as usize][a] as f32).to_le_bytes());
                }
                let v = c.vertices[k as usize];
                ascii.push_str(&format!("   vertex {} {} {}\n", v[0], v[1], v[2]));
            }
            bin.extend_from_slice(&[0u8; 2]);
            ascii.push_str("  endloop\n endfacet\n");
        }
        for w in [
            Wireframe::parse_stl(&bin, Path::new("c.stl")).unwrap(),
            Wireframe::parse_stl(ascii.as_bytes(), Path::new("c.stl")).unwrap(),
        ] {
            assert_eq!(w.vertices.len(), 8);
            assert!(w.closedness().is_closed());
            assert!(w.contains([5.0, 5.0, 5.0]));
        }
        let e = Wireframe::parse_stl(&bin[..200], Path::new("c.stl"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("truncated"), "{e}");
        let e = Wireframe::parse_obj("v 0 0 0\nf 1 2 3\n", Path::new("bad.obj"))
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("line 2") && e.contains("refers to no vertex"),
            "{e}"
        );
    }
}
