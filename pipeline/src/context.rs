//! What later steps need and earlier steps made, loaded once per run: the
//! mesh, its active cells, the terrain and the named inputs of constraint
//! regions (surfaces, wireframes, drill holes).

use crate::error::Result;
use crate::paths::at;
use fieldstone_core::constraint::region::Inputs;
use fieldstone_core::constraint::wireframe::Wireframe;
use fieldstone_core::drillhole::tables::{load_holes, DrillholeSpec};
use fieldstone_core::drillhole::DipConvention;
use fieldstone_core::grid::read::read_grid;
use fieldstone_core::grid::Grid2;
use fieldstone_core::mesh::topo::{active_cells, ActiveCells};
use fieldstone_core::mesh::TensorMesh;
use fieldstone_core::project::file::ProjectFile;
use fieldstone_core::table::TextOptions;
use std::path::{Path, PathBuf};

/// What later steps need and earlier steps made, loaded once per run.
pub struct Context {
    pub(crate) dir: PathBuf,
    model: Option<ModelContext>,
}

impl Context {
    pub fn new(dir: &Path) -> Context {
        Context {
            dir: dir.to_path_buf(),
            model: None,
        }
    }
    /// The project folder.
    pub fn dir(&self) -> &Path {
        &self.dir
    }
    /// Drops the loaded mesh and inputs (after a failed step).
    pub fn forget_model(&mut self) {
        self.model = None;
    }
    /// The mesh and inputs, loaded on first use.
    pub fn model(&mut self, p: &ProjectFile) -> Result<&ModelContext> {
        if self.model.is_none() {
            self.model = Some(load_model_context(&self.dir, p)?);
        }
        Ok(self.model.as_ref().expect("just set"))
    }
}

/// The mesh, its active cells and the named inputs constraint regions use.
pub struct ModelContext {
    pub mesh: TensorMesh,
    pub active: ActiveCells,
    pub dem: Option<Grid2>,
    pub inputs: Inputs,
}

pub(crate) fn hole_spec(dir: &Path, p: &ProjectFile) -> Result<Option<DrillholeSpec>> {
    let Some(h) = &p.drill_holes else {
        return Ok(None);
    };
    Ok(Some(DrillholeSpec {
        collars: at(dir, &h.collars)?,
        surveys: h.surveys.as_deref().map(|s| at(dir, s)).transpose()?,
        intervals: h.intervals.as_deref().map(|s| at(dir, s)).transpose()?,
        dip_convention: DipConvention::NegativeDown,
        text: TextOptions::default(),
    }))
}

/// Builds the mesh from the recipe, its active cells under the DEM, and
/// loads the surfaces, wireframes and drill holes.
pub fn load_model_context(dir: &Path, p: &ProjectFile) -> Result<ModelContext> {
    let recipe = p
        .mesh
        .as_ref()
        .ok_or("the project has no mesh recipe (set one in Model space)")?;
    let mesh = recipe.build()?;
    let dem = p
        .dem
        .as_deref()
        .map(|f| -> Result<Grid2> { Ok(read_grid(&at(dir, f)?).map_err(|e| e.to_string())?) })
        .transpose()?;
    let active = active_cells(&mesh, dem.as_ref(), false, true).map_err(|e| e.to_string())?;
    let mut inputs = Inputs::default();
    for s in &p.surfaces {
        inputs.surfaces.insert(
            s.name.clone(),
            read_grid(&at(dir, &s.file)?).map_err(|e| e.to_string())?,
        );
    }
    for w in &p.wireframes {
        inputs.wireframes.insert(
            w.name.clone(),
            Wireframe::read(&at(dir, &w.file)?).map_err(|e| e.to_string())?,
        );
    }
    if let Some(spec) = hole_spec(dir, p)? {
        inputs.holes = Some(load_holes(&spec).map_err(|e| e.to_string())?.0);
    }
    Ok(ModelContext {
        mesh,
        active,
        dem,
        inputs,
    })
}
