//! `fieldstone filter --in GRID.tif --out OUT.tif (--upward-m H | --vertical-derivative | ...)`

use clap::{ArgGroup, Args, ValueEnum};
use fieldstone_core::filter::spectral::{apply, Filter};
use fieldstone_core::filter::trend::{trend_surface, TrendSettings};
use fieldstone_core::grid::geotiff::read_geotiff;
use fieldstone_core::progress::Silent;
use std::path::PathBuf;

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum TrendOutput {
    Regional,
    Residual,
}

#[derive(Debug, Args)]
#[command(group(ArgGroup::new("operation").required(true).args([
    "upward_m", "vertical_derivative", "x_derivative", "y_derivative", "total_horizontal_derivative",
    "analytic_signal", "reduce_to_pole", "band_pass", "trend", "subtract"])))]
pub struct FilterArgs {
    /// Input grid (GeoTIFF).
    #[arg(long = "in", value_name = "GRID.tif")]
    pub input: PathBuf,
    /// Output grid (.tif or .csv).
    #[arg(long)]
    pub out: PathBuf,
    /// Upward continuation by this height, metres.
    #[arg(long = "upward-m", allow_hyphen_values = true)]
    pub upward_m: Option<f64>,
    /// First vertical derivative (positive downward), units per metre.
    #[arg(long)]
    pub vertical_derivative: bool,
    /// Derivative toward east, units per metre.
    #[arg(long)]
    pub x_derivative: bool,
    /// Derivative toward north, units per metre.
    #[arg(long)]
    pub y_derivative: bool,
    /// Total horizontal derivative, units per metre.
    #[arg(long)]
    pub total_horizontal_derivative: bool,
    /// Analytic-signal amplitude, units per metre.
    #[arg(long)]
    pub analytic_signal: bool,
    /// Reduction to the pole (induced magnetization); needs the field direction.
    #[arg(long, requires_all = ["inclination_deg", "declination_deg"])]
    pub reduce_to_pole: bool,
    #[arg(long = "inclination-deg", allow_hyphen_values = true)]
    pub inclination_deg: Option<f64>,
    #[arg(long = "declination-deg", allow_hyphen_values = true)]
    pub declination_deg: Option<f64>,
    /// Below this inclination the amplitude term is stabilised, degrees.
    #[arg(long = "min-inclination-deg", default_value_t = 20.0)]
    pub min_inclination_deg: f64,
    /// Butterworth band-pass between two wavelengths, metres: LONG,SHORT.
    #[arg(long = "band-pass", value_name = "LONG,SHORT")]
    pub band_pass: Option<String>,
    /// Butterworth order of the band-pass.
    #[arg(long, default_value_t = 4)]
    pub order: u32,
    /// Polynomial trend of this order (0–3) as regional.
    #[arg(long)]
    pub trend: Option<usize>,
    /// Fit the trend robustly (iteratively reweighted).
    #[arg(long)]
    pub robust: bool,
    /// With --trend: write the regional or the residual.
    #[arg(long, value_enum, default_value = "residual")]
    pub output: TrendOutput,
    /// Subtract another grid (same lattice and reference): e.g. data − regional.
    #[arg(long, value_name = "OTHER.tif")]
    pub subtract: Option<PathBuf>,
}

pub fn run(a: &FilterArgs) -> super::CliResult {
    if a.input == a.out {
        return Err(format!(
            "--out {} is the input grid; choose another name so the input is kept",
            a.out.display()
        )
        .into());
    }
    let g = read_geotiff(&a.input).map_err(|e| e.to_string())?;
    let out = if let Some(order) = a.trend {
        let reg = trend_surface(
            &g,
            &TrendSettings {
                order,
                robust: a.robust,
                polygon: None,
            },
        )
        .map_err(|e| format!("--trend {order}: {e}"))?;
        match a.output {
            TrendOutput::Regional => reg,
            TrendOutput::Residual => g.minus(&reg).map_err(|e| e.to_string())?,
        }
    } else if let Some(other) = &a.subtract {
        let b = read_geotiff(other).map_err(|e| e.to_string())?;
        g.minus(&b)
            .map_err(|e| format!("{} minus {}: {e}", a.input.display(), other.display()))?
    } else {
        let f = if let Some(h) = a.upward_m {
            Filter::UpwardContinuation { height_m: h }
        } else if a.vertical_derivative {
            Filter::VerticalDerivative
        } else if a.x_derivative {
            Filter::XDerivative
        } else if a.y_derivative {
            Filter::YDerivative
        } else if a.total_horizontal_derivative {
            Filter::TotalHorizontalDerivative
        } else if a.analytic_signal {
            Filter::AnalyticSignal
        } else if a.reduce_to_pole {
            Filter::ReductionToPole {
                inclination_deg: a.inclination_deg.unwrap_or(90.0),
                declination_deg: a.declination_deg.unwrap_or(0.0),
                min_inclination_deg: a.min_inclination_deg,
            }
        } else {
            let spec = a.band_pass.as_deref().unwrap_or("");
            let parts: Vec<f64> = spec
                .split(',')
                .map(|p| p.trim().parse::<f64>())
                .collect::<Result<_, _>>()
                .map_err(|_| {
                    format!("--band-pass '{spec}': give two wavelengths in metres, LONG,SHORT")
                })?;
            if parts.len() != 2 {
                return Err(format!(
                    "--band-pass '{spec}': give two wavelengths in metres, LONG,SHORT"
                )
                .into());
            }
            Filter::BandPass {
                long_wavelength_m: parts[0],
                short_wavelength_m: parts[1],
                order: a.order,
            }
        };
        apply(&g, &f, &Silent).map_err(|e| e.to_string())?
    };
    fieldstone_pipeline::gridding::write_grid(&a.out, &out)?;
    eprintln!(
        "filter: {} -> {} ({})",
        a.input.display(),
        a.out.display(),
        out.note
    );
    Ok(())
}
