//! The Regional step: how the regional field is taken out, and the map of
//! the regional and residual grids.

use super::grids::GridName;
use super::widgets::{map_controls, num};
use super::Workspace;
use egui::Ui;
use fieldstone_core::filter::regional::RegionalMethod;
use fieldstone_core::filter::trend::TrendSettings;
use fieldstone_core::project::file::ProjectFile;

/// The Regional step's own choice: the grid shown.
pub struct RegionalPanel {
    pub grid: GridName,
}

impl Default for RegionalPanel {
    fn default() -> Self {
        RegionalPanel {
            grid: GridName::GravityResidual,
        }
    }
}

impl RegionalPanel {
    pub fn form(&mut self, ws: &mut Workspace, ui: &mut Ui, p: &mut ProjectFile) {
        let mut kind = match &p.regional {
            Some(RegionalMethod::Trend(_)) | None => 0,
            Some(RegionalMethod::UpwardContinuation { .. }) => 1,
            Some(RegionalMethod::Plane { .. }) => 2,
        };
        ui.horizontal(|ui| {
            ui.radio_value(&mut kind, 0, "Polynomial trend");
            ui.radio_value(&mut kind, 1, "Upward continuation");
            ui.radio_value(&mut kind, 2, "Known plane");
        });
        let mut m = p
            .regional
            .clone()
            .unwrap_or(RegionalMethod::Trend(TrendSettings {
                order: 1,
                robust: true,
                polygon: None,
            }));
        m = match (kind, m) {
            (0, RegionalMethod::Trend(t)) => RegionalMethod::Trend(t),
            (0, _) => RegionalMethod::Trend(TrendSettings {
                order: 1,
                robust: true,
                polygon: None,
            }),
            (1, RegionalMethod::UpwardContinuation { height_m }) => {
                RegionalMethod::UpwardContinuation { height_m }
            }
            (1, _) => RegionalMethod::UpwardContinuation { height_m: 500.0 },
            (
                _,
                RegionalMethod::Plane {
                    origin_m,
                    value,
                    gradient_per_km,
                },
            ) => RegionalMethod::Plane {
                origin_m,
                value,
                gradient_per_km,
            },
            (_, _) => RegionalMethod::Plane {
                origin_m: [0.0, 0.0],
                value: 0.0,
                gradient_per_km: [0.0, 0.0],
            },
        };
        match &mut m {
            RegionalMethod::Trend(t) => {
                ui.add(egui::Slider::new(&mut t.order, 0..=3).text("order"));
                ui.checkbox(&mut t.robust, "Robust (ignore the anomalies)");
            }
            RegionalMethod::UpwardContinuation { height_m } => {
                num(ui, "Height", height_m, 10.0, "m")
            }
            RegionalMethod::Plane {
                origin_m,
                value,
                gradient_per_km,
            } => {
                num(ui, "Origin east", &mut origin_m[0], 10.0, "m");
                num(ui, "Origin north", &mut origin_m[1], 10.0, "m");
                num(ui, "Value at origin", value, 0.01, "mGal");
                num(
                    ui,
                    "Gradient east",
                    &mut gradient_per_km[0],
                    0.01,
                    "mGal/km",
                );
                num(
                    ui,
                    "Gradient north",
                    &mut gradient_per_km[1],
                    0.01,
                    "mGal/km",
                );
            }
        }
        p.regional = Some(m);
        map_controls(
            ws,
            ui,
            &mut self.grid,
            &[
                GridName::GravityResidual,
                GridName::GravityRegional,
                GridName::GravityGrid,
                GridName::MagneticResidual,
                GridName::MagneticRegional,
                GridName::MagneticGrid,
            ],
        );
    }
}
