//! The Grids step: gridding settings, and the map of a grid with the
//! stations over it (shared with the Regional step).

use super::maps::grid_map;
use super::widgets::{map_controls, num, warn};
use super::Workspace;
use egui::{RichText, Ui};
use fieldstone_core::project::file::ProjectFile;

/// A grid the maps can show: a product of the gridding or regional steps,
/// the terrain, or one of the project's surfaces (by its name).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum GridName {
    GravityGrid,
    GravityRegional,
    GravityResidual,
    MagneticGrid,
    MagneticRegional,
    MagneticResidual,
    Terrain,
    Surface(String),
    /// The grid of a further survey, by its key (`gravity_<name>_grid`).
    Further(String),
}

impl GridName {
    /// The name the views' grids are kept under.
    pub fn key(&self) -> &str {
        match self {
            GridName::GravityGrid => "gravity_grid",
            GridName::GravityRegional => "gravity_regional",
            GridName::GravityResidual => "gravity_residual",
            GridName::MagneticGrid => "magnetic_grid",
            GridName::MagneticRegional => "magnetic_regional",
            GridName::MagneticResidual => "magnetic_residual",
            GridName::Terrain => "terrain",
            GridName::Surface(s) => s,
            GridName::Further(k) => k,
        }
    }
}

/// The Grids step's own choice: the grid shown.
pub struct GridsPanel {
    pub grid: GridName,
}

impl Default for GridsPanel {
    fn default() -> Self {
        GridsPanel {
            grid: GridName::GravityGrid,
        }
    }
}

impl GridsPanel {
    pub fn form(&mut self, ws: &mut Workspace, ui: &mut Ui, p: &mut ProjectFile) {
        let mut g = p
            .gridding
            .clone()
            .unwrap_or(fieldstone_core::project::file::GridSettings {
                cell_m: 25.0,
                tension: 0.25,
            });
        ui.label("Minimum curvature with tension");
        num(ui, "Cell size", &mut g.cell_m, 0.5, "m");
        if p.gravity.is_some() {
            ui.label(
                RichText::new(
                    "suggested: a quarter to a fifth of the line spacing (common practice)",
                )
                .small()
                .weak(),
            );
        }
        ui.add(egui::Slider::new(&mut g.tension, 0.0..=1.0).text("tension"));
        if g.cell_m <= 0.0 {
            warn(ui, "the cell size must be positive");
        }
        p.gridding = Some(g);
        let mut choices = vec![
            GridName::GravityGrid,
            GridName::MagneticGrid,
            GridName::Terrain,
        ];
        choices.extend(p.surfaces.iter().map(|s| GridName::Surface(s.name.clone())));
        choices.extend(further_grid_keys(p).into_iter().map(GridName::Further));
        map_controls(ws, ui, &mut self.grid, &choices);
    }
}

/// The map of `grid` with the gravity stations over it.
pub fn grid_view(ws: &mut Workspace, ui: &mut Ui, grid: &GridName) {
    let Some(doc) = ws.doc.as_ref() else { return };
    // The station list is made once per change of the project.
    let pts = doc.derived("grid view stations".into(), || {
        doc.views
            .gravity_raw
            .as_ref()
            .map(|r| {
                r.x.iter()
                    .zip(&r.y)
                    .map(|(x, y)| ([*x, *y], None))
                    .collect::<Vec<_>>()
            })
            .unwrap_or_default()
    });
    // The dots stay drawn while the project stays as it is.
    let version = {
        use std::hash::{Hash, Hasher};
        let mut h = std::collections::hash_map::DefaultHasher::new();
        ("grid view stations", doc.generation).hash(&mut h);
        h.finish()
    };
    ui.label(RichText::new(format!("{} — drag to pan, scroll to zoom", grid.key())).weak());
    grid_map(ws, ui, grid.key(), &pts, Some(version), vec![]);
}

/// The grid keys of the project's further surveys.
pub fn further_grid_keys(p: &ProjectFile) -> Vec<String> {
    use fieldstone_pipeline::steps::reduce::further_prefix;
    p.more_gravity
        .iter()
        .map(|f| further_prefix("gravity", &f.name))
        .chain(
            p.more_magnetic
                .iter()
                .map(|f| further_prefix("magnetic", &f.name)),
        )
        .map(|k| format!("{k}_grid"))
        .collect()
}
