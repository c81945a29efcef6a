//! Figures: sections and plan maps drawn once as a list of shapes and
//! written as PNG (rasterised here, lettered with the bundled DejaVu Sans)
//! or SVG (the same shapes as vector elements).
//!
//! `colour` (colour maps), `surface` (the shape list and its PNG and SVG
//! writers), `axes` (frames, axes, ticks, colour bars), `section` (section
//! figures with holes, logs and data) and `map` (map figures with hillshade,
//! contours, stations, polygons, lines and collars).

mod axes;
mod colour;
mod map;
mod section;
mod surface;

pub use crate::numeric::{round_below, ticks};
pub use axes::Frame;
pub use colour::{ColourMap, Rgb};
pub use map::{clip_polyline, grid_figure, map_figure, MapOptions};
pub use section::{
    section_figure, section_figure_with, ProjectedHole, SectionExtras, FIGURE_CAUTION,
};
pub use surface::{Anchor, Figure, Shape};

/// The resolution figure layouts are made for: a 1000-pixel-wide figure is
/// 10 inches wide.
pub const BASE_DPI: f64 = 100.0;

/// The resolutions a PNG figure may be asked for, dots per inch.
pub const DPI_RANGE: std::ops::RangeInclusive<f64> = 50.0..=600.0;

#[cfg(test)]
mod tests {
    use super::axes::label;
    use super::colour::VIRIDIS;
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
        let mut buf = vec![
            0;
            rd.output_buffer_size()
                .expect("an 8-bit RGB image of known size")
        ];
        rd.next_frame(&mut buf).unwrap();
        assert_eq!(buf, r);
        let svg = f.svg();
        assert!(svg.contains("fill=\"#ff0000\"") && svg.contains("A&amp;B"));
    }
}
