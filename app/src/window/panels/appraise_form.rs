//! The part of the Runs form that sets where the FFT operator puts the data
//! and what to appraise after a run: the depth-of-investigation index and
//! "is this feature required?" tests.

use egui::{RichText, Ui};
use fieldstone_core::constraint::region::Region;
use fieldstone_core::invert::appraise::{AppraisalSettings, DoiPattern, FeatureTestSpec, Hold};
use fieldstone_core::project::file::{DataKind, FftHeights, Scenario};

/// A box in the middle third of the core: the starting region of a new test.
pub type DefaultBox = [[f64; 2]; 3];

/// Short description of a region for the list of tests.
fn describe(r: &Region) -> String {
    match r {
        Region::Box { x, y, z } => format!(
            "box x {:.0}–{:.0}, y {:.0}–{:.0}, z {:.0}–{:.0} m",
            x[0], x[1], y[0], y[1], z[0], z[1]
        ),
        Region::Polygon { vertices, .. } => format!("polygon of {} vertices", vertices.len()),
        Region::Outline { source, parts, .. } => {
            format!("outline {source} ({} polygon(s))", parts.len())
        }
        Region::Wireframe { name } => format!("inside wireframe '{name}'"),
        other => format!("{other:?}")
            .split([' ', '{'])
            .next()
            .unwrap_or("region")
            .to_lowercase(),
    }
}

pub fn show(ui: &mut Ui, s: &mut Scenario, default_box: Option<DefaultBox>) {
    ui.separator();
    ui.label("FFT operator: where the gridded data sit");
    let mut draped = matches!(s.fft_heights, FftHeights::Draped { .. });
    ui.radio_value(&mut draped, false, "level, at the highest station");
    ui.radio_value(&mut draped, true, "draped on the terrain");
    s.fft_heights = match (draped, s.fft_heights) {
        (false, _) => FftHeights::Level,
        (true, FftHeights::Draped { order }) => {
            let mut o = order;
            ui.add(egui::Slider::new(&mut o, 0..=6).text("height order"));
            FftHeights::Draped { order: o }
        }
        (true, FftHeights::Level) => FftHeights::Draped { order: 3 },
    };
    ui.label(
        RichText::new("Used only when the run takes the FFT operator; the run log reports how far its rows are from exact ones.")
            .small()
            .weak(),
    );
    ui.separator();
    ui.label("Appraisal after the run");
    let units = match s.data {
        DataKind::Gravity => "g/cm³",
        DataKind::Magnetic => "SI",
    };
    let mut on = s.appraisal.is_some();
    ui.checkbox(&mut on, "appraise this scenario");
    if !on {
        s.appraisal = None;
        return;
    }
    let a = s.appraisal.get_or_insert_with(AppraisalSettings::default);
    let mut doi = a.doi_reference_shift.is_some();
    ui.checkbox(&mut doi, "Depth-of-investigation index (a second run)");
    if doi {
        let mut shift = a.doi_reference_shift.unwrap_or(match s.data {
            DataKind::Gravity => 0.1,
            DataKind::Magnetic => 0.01,
        });
        ui.horizontal(|ui| {
            ui.label("reference shifted by");
            ui.add(
                egui::DragValue::new(&mut shift)
                    .speed(0.005)
                    .suffix(format!(" {units}")),
            );
            ui.label("cut-off");
            ui.add(
                egui::DragValue::new(&mut a.doi_cutoff)
                    .speed(0.01)
                    .range(0.05..=0.95),
            );
        });
        let mut checker = matches!(a.doi_pattern, DoiPattern::Checkerboard { .. });
        ui.horizontal(|ui| {
            ui.radio_value(&mut checker, true, "± in blocks");
            ui.radio_value(&mut checker, false, "uniform");
        });
        a.doi_pattern = match (checker, a.doi_pattern) {
            (false, _) => DoiPattern::Uniform,
            (true, DoiPattern::Checkerboard { block_m }) => {
                let mut auto = block_m.is_none();
                let mut b = block_m.unwrap_or(200.0);
                ui.horizontal(|ui| {
                    ui.checkbox(&mut auto, "block side automatic");
                    if !auto {
                        ui.add(
                            egui::DragValue::new(&mut b)
                                .speed(10.0)
                                .range(1.0..=1e6)
                                .suffix(" m"),
                        );
                    }
                });
                DoiPattern::Checkerboard {
                    block_m: if auto { None } else { Some(b) },
                }
            }
            (true, DoiPattern::Uniform) => DoiPattern::Checkerboard { block_m: None },
        };
        ui.label(
            RichText::new("Blocks probe structure of their own size and have no mean field; a uniform shift acts as a slab that residual data hardly see.")
                .small()
                .weak(),
        );
        if shift == 0.0 {
            ui.label(
                RichText::new("the shift must not be zero")
                    .color(egui::Color32::from_rgb(170, 60, 0)),
            );
        }
        a.doi_reference_shift = Some(shift);
    } else {
        a.doi_reference_shift = None;
    }
    ui.label("Is this feature required? (each test is one more run)");
    let mut remove = None;
    for (k, t) in a.feature_tests.iter_mut().enumerate() {
        ui.group(|ui| {
            ui.horizontal(|ui| {
                ui.add(egui::TextEdit::singleline(&mut t.name).desired_width(110.0));
                if ui.small_button("Remove").clicked() {
                    remove = Some(k);
                }
            });
            ui.label(RichText::new(describe(&t.region)).small());
            if let Region::Box { x, y, z } = &mut t.region {
                for (label, r) in [("x", x), ("y", y), ("z", z)] {
                    ui.horizontal(|ui| {
                        ui.label(label);
                        ui.add(egui::DragValue::new(&mut r[0]).speed(5.0).suffix(" m"));
                        ui.label("to");
                        ui.add(egui::DragValue::new(&mut r[1]).speed(5.0).suffix(" m"));
                    });
                }
            }
            ui.horizontal(|ui| {
                ui.label("held at");
                ui.add(
                    egui::DragValue::new(&mut t.background)
                        .speed(0.01)
                        .suffix(format!(" {units}")),
                );
            });
            let mut fixed = matches!(t.hold, Hold::Fixed);
            ui.horizontal(|ui| {
                ui.radio_value(&mut fixed, true, "fixed");
                ui.radio_value(&mut fixed, false, "as a weighted reference");
            });
            t.hold = match (fixed, t.hold) {
                (true, _) => Hold::Fixed,
                (false, Hold::Referenced { weight }) => {
                    let mut w = weight;
                    ui.add(
                        egui::DragValue::new(&mut w)
                            .speed(10.0)
                            .range(1e-3..=1e8)
                            .prefix("weight "),
                    );
                    Hold::Referenced { weight: w }
                }
                (false, Hold::Fixed) => Hold::Referenced { weight: 1e4 },
            };
        });
    }
    if let Some(k) = remove {
        a.feature_tests.remove(k);
    }
    let fresh = |a: &AppraisalSettings| {
        (1..)
            .map(|i| format!("test {i}"))
            .find(|n| a.feature_tests.iter().all(|t| &t.name != n))
            .unwrap_or_default()
    };
    ui.horizontal(|ui| {
        if let Some([x, y, z]) = default_box {
            if ui.button("Add a box test").clicked() {
                let name = fresh(a);
                a.feature_tests.push(FeatureTestSpec {
                    name,
                    region: Region::Box { x, y, z },
                    background: 0.0,
                    hold: Hold::Fixed,
                });
            }
        }
        let layers: Vec<(String, Region)> = s
            .layers
            .iter()
            .filter(|l| !matches!(l.region, Region::Whole))
            .map(|l| (l.name.clone(), l.region.clone()))
            .collect();
        if !layers.is_empty() {
            egui::ComboBox::from_id_salt("test from layer")
                .selected_text("Add a test on a layer's region")
                .show_ui(ui, |ui| {
                    for (n, r) in layers {
                        if ui.selectable_label(false, &n).clicked() {
                            let name = fresh(a);
                            a.feature_tests.push(FeatureTestSpec {
                                name,
                                region: r,
                                background: 0.0,
                                hold: Hold::Fixed,
                            });
                        }
                    }
                });
        }
    });
    let mut seen = std::collections::HashSet::new();
    if a.feature_tests.iter().any(|t| !seen.insert(t.name.clone())) {
        ui.label(
            RichText::new("two tests share a name; names must differ")
                .color(egui::Color32::from_rgb(170, 60, 0)),
        );
    }
}
