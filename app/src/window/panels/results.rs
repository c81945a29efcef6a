//! The Results step: the runs side by side with the cautions, plan
//! slices, sections, data fit, differences between runs, the depth of
//! investigation, and figure exports (written by a background job).

use super::maps::{current_section, extent, section_decor, slice_map};
use super::Workspace;
use crate::window::canvas::{self, Colouring, MapLayers};
use crate::window::state::RunView;
use egui::{Color32, RichText, Ui};
use egui_plot::{Bar, BarChart, Legend, Line, Plot, Points};
use fieldstone_core::export::figure::BASE_DPI;
use fieldstone_core::export::section::{plan_slice, section, SliceLevel};
use std::sync::Arc;

/// What the Results step shows of the selected run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ResultView {
    PlanSlice,
    SectionEastWest,
    SectionNorthSouth,
    DataFit,
    Difference,
    DepthOfInvestigation,
}

impl ResultView {
    pub const ALL: [ResultView; 6] = [
        ResultView::PlanSlice,
        ResultView::SectionEastWest,
        ResultView::SectionNorthSouth,
        ResultView::DataFit,
        ResultView::Difference,
        ResultView::DepthOfInvestigation,
    ];
    pub fn label(self) -> &'static str {
        match self {
            ResultView::PlanSlice => "Plan slice",
            ResultView::SectionEastWest => "Section east-west",
            ResultView::SectionNorthSouth => "Section north-south",
            ResultView::DataFit => "Data fit",
            ResultView::Difference => "Difference from another run",
            ResultView::DepthOfInvestigation => "Depth of investigation",
        }
    }
}

/// The Results step's own state: the view, the run subtracted in the
/// difference view, and the last export's message.
pub struct ResultsPanel {
    pub view: ResultView,
    pub compare_with: String,
    pub export_message: Option<String>,
}

impl Default for ResultsPanel {
    fn default() -> Self {
        ResultsPanel {
            view: ResultView::PlanSlice,
            compare_with: String::new(),
            export_message: None,
        }
    }
}

/// The selected scenario's run, when it has one.
fn selected_run(ws: &Workspace) -> Option<Arc<RunView>> {
    let name = ws.scenario_name();
    ws.doc.as_ref()?.views.runs.get(&name).cloned()
}

impl ResultsPanel {
    pub fn form(&mut self, ws: &mut Workspace, ui: &mut Ui) {
        let Some(doc) = ws.doc.as_ref() else { return };
        ui.label(
            RichText::new(crate::commands::CAUTIONS)
                .small()
                .color(Color32::from_rgb(120, 70, 0)),
        );
        ui.separator();
        let names: Vec<String> = doc
            .project
            .scenarios
            .iter()
            .map(|s| s.name.clone())
            .collect();
        egui::Grid::new("runs").striped(true).show(ui, |ui| {
            ui.strong("scenario");
            ui.strong("chi");
            ui.strong("iterations");
            ui.strong("vs truth (invented)");
            ui.end_row();
            for (i, n) in names.iter().enumerate() {
                if ui.selectable_label(ws.scenario == i, n).clicked() {
                    ws.scenario = i;
                }
                match doc.views.runs.get(n) {
                    Some(r) => {
                        ui.label(format!("{:.3}", r.file.summary.chi_factor));
                        ui.label(format!("{}", r.file.summary.iterations));
                        ui.label(
                            r.file
                                .truth_comparison
                                .as_ref()
                                .map(|t| format!("RMS {:.3}", t.rms_difference_core))
                                .unwrap_or_default(),
                        );
                    }
                    None => {
                        ui.label("not run");
                        ui.label("");
                        ui.label("");
                    }
                }
                ui.end_row();
            }
        });
        ui.separator();
        ui.label("View");
        for v in ResultView::ALL {
            ui.radio_value(&mut self.view, v, v.label());
        }
        if let Some(a) = doc
            .views
            .runs
            .get(&names.get(ws.scenario).cloned().unwrap_or_default())
            .and_then(|r| r.appraisal.as_ref())
        {
            if !a.feature_tests.is_empty() {
                ui.separator();
                ui.label("Is this feature required?");
                for t in &a.feature_tests {
                    ui.label(RichText::new(format!("{}: {}", t.name, t.report.verdict)).strong());
                    ui.label(RichText::new(&t.report.explanation).small());
                }
            }
        }
        if self.view == ResultView::Difference {
            egui::ComboBox::from_label("minus")
                .selected_text(self.compare_with.clone())
                .show_ui(ui, |ui| {
                    for n in &names {
                        ui.selectable_value(&mut self.compare_with, n.clone(), n);
                    }
                });
        }
        ui.checkbox(&mut ws.display.equalise, "Histogram equalisation");
        ui.separator();
        ui.label("Export");
        ui.add_enabled_ui(!ws.busy(), |ui| {
            ui.horizontal(|ui| {
                for ext in ["png", "svg"] {
                    let label = format!("Export section {}", ext.to_uppercase());
                    if ui.button(label).clicked() {
                        self.export_message = export_section(ws, ui.ctx(), self.view, ext).err();
                    }
                }
            });
            if ui.button("Export plan slice GeoTIFF").clicked() {
                self.export_message = export_slice(ws, ui.ctx()).err();
            }
        });
        if let Some(m) = &self.export_message {
            ui.label(RichText::new(m).small());
        }
    }

    /// The view of the selected run.
    pub fn view(&mut self, ws: &mut Workspace, ui: &mut Ui) {
        let name = ws.scenario_name();
        let Some(run) = selected_run(ws) else {
            ui.label(format!(
                "Scenario '{name}' has not been run: choose Runs and press Run."
            ));
            return;
        };
        let units = run.file.model_units.clone();
        ui.label(
            RichText::new(format!(
                "{} · {} · chi-factor {:.3} · {}",
                name, units, run.file.summary.chi_factor, run.file.background
            ))
            .weak(),
        );
        match self.view {
            ResultView::SectionEastWest | ResultView::SectionNorthSouth => {
                let ns = self.view == ResultView::SectionNorthSouth;
                section_view(ws, ui, &run, ns);
            }
            ResultView::DataFit => data_fit(ws, ui, &run),
            ResultView::DepthOfInvestigation => depth_of_investigation(ws, ui, &run),
            ResultView::Difference => {
                let other = self.compare_with.clone();
                let Some(o) = ws
                    .doc
                    .as_ref()
                    .and_then(|d| d.views.runs.get(&other).cloned())
                else {
                    ui.label("Choose another run to subtract in the form.");
                    return;
                };
                let Some(doc) = ws.doc.as_ref() else { return };
                let diff = doc.derived(format!("difference|{name}|{other}"), || {
                    run.model
                        .iter()
                        .zip(&o.model)
                        .map(|(a, b)| a - b)
                        .collect::<Vec<f64>>()
                });
                ui.label(RichText::new(format!("'{name}' minus '{other}'")).strong());
                slice_map(
                    ws,
                    ui,
                    &format!("diff-{name}-{other}"),
                    &diff,
                    &units,
                    vec![],
                );
            }
            ResultView::PlanSlice => {
                ui.label(RichText::new("click the map to place the sections").weak());
                let r = slice_map(
                    ws,
                    ui,
                    &format!("model-{name}-{}", run.file.summary.elapsed_s),
                    &run.model,
                    &units,
                    vec![],
                );
                if let Some(c) = r.clicked {
                    ws.display.section_at = Some(c);
                }
            }
        }
    }
}

/// A section of the run through the chosen point, made once per change of
/// the project, the point or the colour stretch.
fn section_view(ws: &mut Workspace, ui: &mut Ui, run: &RunView, ns: bool) {
    let Some(doc) = ws.doc.as_ref() else { return };
    let key = format!(
        "section|{}|{ns}|{:?}|{}",
        ws.scenario_name(),
        ws.display.section_at,
        ws.display.equalise
    );
    let made = doc.derived(key, || {
        current_section(ws, ns).map(|v| {
            let c = Colouring::for_values(
                &v.0.iter().map(|q| q.value).collect::<Vec<_>>(),
                ws.display.equalise,
            );
            (v, c)
        })
    });
    let Some(((s, terrain, z, title, line), c)) = made.as_ref() else {
        return;
    };
    ui.horizontal(|ui| {
        ui.label(RichText::new(title).strong());
        ui.checkbox(&mut ws.display.cell_edges, "Cell edges");
        ui.checkbox(&mut ws.display.hole_logs, "Drill holes");
    });
    let decor = section_decor(ws, line, ws.display.cell_edges, ws.display.hole_logs);
    let units = &run.file.model_units;
    if let Some((d, e, v)) = canvas::section(ui, s, z, terrain, c, units, 1.0, &decor) {
        ws.hover = Some(([d, e], Some(v)));
    }
}

/// The depth-of-investigation index of the current scenario as a plan
/// slice, with the median of each layer against depth.
fn depth_of_investigation(ws: &mut Workspace, ui: &mut Ui, run: &RunView) {
    let name = ws.scenario_name();
    let (Some(doi), Some(summary)) = (
        run.doi.as_ref(),
        run.appraisal.as_ref().and_then(|a| a.doi.clone()),
    ) else {
        ui.label("This scenario has no depth-of-investigation index: set a reference shift under Runs → Appraisal, then run it.");
        return;
    };
    let cut = summary.profile.cutoff;
    ui.label(
        RichText::new(match summary.profile.depth_m {
            Some(z) if Some(z) == summary.profile.layers.first().map(|l| l.0) => format!("The layer medians of the index are above {cut} from the top down: the data do not decide the value of single layers here (potential-field data see sums down each column). Compare scenarios rather than reading depths off one model."),
            Some(z) => format!("Below about {z:.0} m the layer medians of the index stay above {cut}: there the model follows its reference more than the data. Read deeper structure with care."),
            None => format!("The layer medians stay below {cut}: the data, not the reference, decided the model at every depth of the mesh."),
        })
        .strong(),
    );
    ui.label(
        RichText::new(format!(
            "0 where the data decided a cell's value, 1 where it followed the reference (second run: reference shifted by {}{}, chi-factor {:.3}; {} of {} free cells above {cut}).",
            summary.reference_shift,
            summary
                .block_m
                .map(|b| format!(" up and down in blocks of {b:.0} m"))
                .unwrap_or_default(),
            summary.chi_factor_shifted,
            summary.cells_above_cutoff,
            summary.free_cells
        ))
        .weak(),
    );
    ui.label(
        RichText::new("Shown clipped to 0–1: below 0 the second run moved a cell against the shift to keep the data fitted (the data decided it); cells carry the imprint of the shift's blocks, so read depth from the layer profile below.")
            .small()
            .weak(),
    );
    let key = format!("doi-{name}-{}", run.file.summary.elapsed_s);
    let Some(doc) = ws.doc.as_ref() else { return };
    let clipped = doc.derived(key.clone(), || {
        doi.iter()
            .map(|v| if v.is_finite() { v.clamp(0.0, 1.0) } else { *v })
            .collect::<Vec<f64>>()
    });
    let map_h = (ui.available_height() - 170.0).max(200.0);
    let w = ui.available_width();
    let r = ui
        .allocate_ui(egui::vec2(w, map_h), |ui| {
            slice_map(
                ws,
                ui,
                &key,
                &clipped,
                "index (0 data, 1 reference)",
                vec![],
            )
        })
        .inner;
    if let Some(c) = r.clicked {
        ws.display.section_at = Some(c);
    }
    let pts: Vec<[f64; 2]> = summary
        .profile
        .layers
        .iter()
        .map(|(depth, median, _)| [*median, -depth])
        .collect();
    Plot::new("doi profile")
        .height(150.0)
        .legend(Legend::default())
        .x_axis_label("median of the index in the layer")
        .y_axis_label("elevation below the highest station, m")
        .show(ui, |p| {
            p.line(Line::new("layer median", pts.clone()));
            p.points(Points::new("layers", pts).radius(2.5));
            p.vline(egui_plot::VLine::new("cut-off", cut));
        });
}

fn data_fit(ws: &mut Workspace, ui: &mut Ui, run: &RunView) {
    let obs = &run.observed;
    let pred = &run.predicted;
    let res: Vec<f64> = obs.value.iter().zip(pred).map(|(o, p)| o - p).collect();
    let norm: Vec<f64> = res
        .iter()
        .zip(&obs.uncertainty)
        .map(|(r, u)| r / u)
        .collect();
    let pts = |v: &[f64]| -> Vec<([f64; 2], Option<f64>)> {
        obs.xyz
            .iter()
            .zip(v)
            .map(|(p, v)| ([p[0], p[1]], Some(*v)))
            .collect()
    };
    let both = Colouring::for_values(&obs.value, false);
    let sets = [
        ("observed", pts(&obs.value), both.clone()),
        ("predicted", pts(pred), both),
        ("residual", pts(&res), Colouring::for_values(&res, false)),
    ];
    let ext = extent(ws);
    let w = ui.available_width() / 3.0 - 6.0;
    let h = ui.available_height() * 0.6;
    let units = run.file.data_units.clone();
    let mut hover = None;
    ui.horizontal(|ui| {
        for (k, (label, p, c)) in sets.into_iter().enumerate() {
            ui.allocate_ui(egui::vec2(w, h), |ui| {
                ui.vertical(|ui| {
                    ui.label(RichText::new(label).strong());
                    let layers = MapLayers {
                        grid: None,
                        points: p.into(),
                        point_colouring: Some(std::borrow::Cow::Owned(c)),
                        points_version: None,
                        highlight: vec![],
                        lines: vec![],
                        collars: vec![],
                        units: units.clone(),
                    };
                    // Each small map fits its own panel.
                    let mut frame = canvas::MapFrame::default();
                    let r = canvas::map(ui, &mut frame, &mut ws.textures, &layers, ext);
                    let _ = k;
                    if r.hover.is_some() {
                        hover = r.hover;
                    }
                });
            });
        }
    });
    ws.hover = hover.map(|p| (p, None));
    // Histogram of normalised residuals with the unit normal for comparison.
    let bins = 24;
    let (lo, hi) = (-4.0, 4.0);
    let mut counts = vec![0usize; bins];
    for v in &norm {
        let b = (((v - lo) / (hi - lo)) * bins as f64).floor();
        if (0.0..bins as f64).contains(&b) {
            counts[b as usize] += 1;
        }
    }
    let bw = (hi - lo) / bins as f64;
    let bars: Vec<Bar> = counts
        .iter()
        .enumerate()
        .map(|(i, c)| Bar::new(lo + (i as f64 + 0.5) * bw, *c as f64).width(bw * 0.95))
        .collect();
    let n = norm.len() as f64;
    let normal: Vec<[f64; 2]> = (0..=80)
        .map(|k| {
            let x = lo + (hi - lo) * k as f64 / 80.0;
            [
                x,
                n * bw * (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt(),
            ]
        })
        .collect();
    Plot::new("residual histogram")
        .legend(Legend::default())
        .x_axis_label("normalised residual (residual / uncertainty)")
        .y_axis_label("data")
        .show(ui, |p| {
            p.bar_chart(BarChart::new("normalised residuals", bars));
            p.line(Line::new("unit normal", normal));
        });
}

/// What an export of the selected run needs, taken from the document so
/// a background job can write the figure.
struct ExportInputs {
    dir: std::path::PathBuf,
    project: fieldstone_core::project::file::ProjectFile,
    model: Arc<crate::pipeline::ModelContext>,
    scenario: fieldstone_core::project::file::Scenario,
    run: Arc<RunView>,
}

fn export_inputs(ws: &Workspace) -> Result<ExportInputs, String> {
    let d = ws.doc.as_ref().ok_or("no project is open")?;
    let name = ws.scenario_name();
    let (Some(model), Some(run), Some(scenario)) = (
        d.views.model.clone(),
        d.views.runs.get(&name).cloned(),
        d.project.scenarios.iter().find(|s| s.name == name).cloned(),
    ) else {
        return Err("run the scenario first".into());
    };
    Ok(ExportInputs {
        dir: d.dir.clone(),
        project: d.project.clone(),
        model,
        scenario,
        run,
    })
}

/// Writes the section of the selected run shown by `view` (east-west
/// unless north-south) as PNG or SVG into its run folder, in a background
/// job whose result reaches the run log.
fn export_section(
    ws: &mut Workspace,
    ctx: &egui::Context,
    view: ResultView,
    ext: &'static str,
) -> Result<(), String> {
    let x = export_inputs(ws)?;
    let ns = view == ResultView::SectionNorthSouth;
    let at = ws.display.section_at;
    ws.start_task(&format!("export of a {ext} section"), ctx, move |_| {
        let m = &x.model;
        let mesh = &m.mesh;
        let [(i0, i1), (j0, j1), _] = mesh.core;
        let (xs, ys) = (&mesh.x, &mesh.y);
        let at = at.unwrap_or([0.5 * (xs[i0] + xs[i1]), 0.5 * (ys[j0] + ys[j1])]);
        let line = if ns {
            [[at[0], ys[j0]], [at[0], ys[j1]]]
        } else {
            [[xs[i0], at[1]], [xs[i1], at[1]]]
        };
        let step = (xs[i0 + 1] - xs[i0]).max(1.0);
        let s = section(mesh, &x.run.model, &line, step).map_err(|e| e.to_string())?;
        let name = &x.scenario.name;
        let title = format!(
            "{name} — {} section through {:.0} m {}",
            if ns { "north-south" } else { "east-west" },
            if ns { at[0] } else { at[1] },
            if ns { "E" } else { "N" }
        );
        let style = crate::pipeline::FigureStyle::of(&x.project);
        let fig = crate::pipeline::run_section_figure(
            &x.dir,
            &x.project,
            m,
            &x.scenario,
            &s,
            &line,
            &title,
            &style,
        );
        let path = crate::pipeline::run_dir(&x.dir, name).join(format!(
            "window_section_{}.{ext}",
            if ns { "ns" } else { "ew" }
        ));
        let bytes = if ext == "png" {
            fig.png_at_dpi(x.project.exports.figure_dpi.unwrap_or(BASE_DPI))
        } else {
            fig.svg().into_bytes()
        };
        fieldstone_core::io::atomic::write_bytes_atomically(&path, &bytes)
            .map_err(|e| e.to_string())?;
        Ok(format!("wrote {}", path.display()))
    });
    Ok(())
}

/// Writes the plan slice of the selected run at the slice's elevation as
/// a GeoTIFF and a PNG, in a background job.
fn export_slice(ws: &mut Workspace, ctx: &egui::Context) -> Result<(), String> {
    let x = export_inputs(ws)?;
    let z = ws.display.slice_z;
    if !z.is_finite() {
        return Err("show a plan slice first".into());
    }
    ws.start_task("export of a plan slice", ctx, move |_| {
        let name = &x.scenario.name;
        let g = plan_slice(&x.model.mesh, &x.run.model, SliceLevel::Elevation(z), None)
            .map_err(|e| e.to_string())?;
        let base = crate::pipeline::run_dir(&x.dir, name).join(format!("window_slice_{z:.0}m"));
        let tif = base.with_extension("tif");
        fieldstone_core::grid::geotiff::write_geotiff(&tif, &g).map_err(|e| e.to_string())?;
        let fig = crate::pipeline::run_slice_figure(
            &x.project,
            &x.model,
            &x.scenario,
            &g,
            format!("{name} — plan slice at {z:.0} m elevation"),
            &crate::pipeline::FigureStyle::of(&x.project),
        );
        let dpi = x.project.exports.figure_dpi.unwrap_or(BASE_DPI);
        fieldstone_core::io::atomic::write_bytes_atomically(
            &base.with_extension("png"),
            &fig.png_at_dpi(dpi),
        )
        .map_err(|e| e.to_string())?;
        Ok(format!("wrote {} and .png", tif.display()))
    });
    Ok(())
}
