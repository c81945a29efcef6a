//! `fieldstone igrf --lat DEG --lon DEG --height-m M --date YYYY-MM-DD`

use clap::Args;
use fieldstone_core::geodesy::igrf::{decimal_year_of_date, IgrfModel};

#[derive(Debug, Args)]
pub struct IgrfArgs {
    /// Geodetic latitude, degrees (north positive).
    #[arg(long, allow_hyphen_values = true)]
    pub lat: f64,
    /// Longitude, degrees (east positive).
    #[arg(long, allow_hyphen_values = true)]
    pub lon: f64,
    /// Height above the WGS 84 ellipsoid, metres.
    #[arg(long = "height-m", allow_hyphen_values = true)]
    pub height_m: f64,
    /// Date, YYYY-MM-DD (IGRF-14 covers 1900-01-01 to 2030-01-01).
    #[arg(long)]
    pub date: String,
}

pub fn run(a: &IgrfArgs) -> super::CliResult {
    let year = decimal_year_of_date(&a.date).map_err(|e| format!("--date: {e}"))?;
    let f = IgrfModel::igrf14()
        .field(a.lat, a.lon, a.height_m, year)
        .map_err(|e| e.to_string())?;
    println!("x_nt,y_nt,z_nt,h_nt,f_nt,inclination_deg,declination_deg");
    println!(
        "{:.3},{:.3},{:.3},{:.3},{:.3},{:.5},{:.5}",
        f.x_nt, f.y_nt, f.z_nt, f.h_nt, f.f_nt, f.inclination_deg, f.declination_deg
    );
    Ok(())
}
