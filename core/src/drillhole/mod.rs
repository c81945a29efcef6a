//! Drill holes: collars, downhole surveys and logged intervals, desurveyed to
//! 3D by the minimum-curvature method, with a report of every inconsistency.
//!
//! * [`tables`]: reading the three tables with their columns recognised from
//!   common header spellings (common practice in mining databases).
//! * [`desurvey`]: minimum curvature between survey stations, positions at any
//!   depth along the hole.
//! * [`checks`]: intervals past total depth, overlaps, gaps, missing collars,
//!   unusable surveys.

pub mod checks;
pub mod desurvey;
pub mod tables;

use serde::{Deserialize, Serialize};

/// How dips are written in the survey table.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum DipConvention {
    /// −90 is straight down, 0 horizontal (the usual mining convention).
    #[default]
    NegativeDown,
    /// +90 is straight down.
    PositiveDown,
    /// Angle from the vertical: 0 is straight down, 90 horizontal.
    FromVertical,
}

impl DipConvention {
    /// Dip in the negative-down convention, degrees.
    pub fn to_negative_down(&self, v: f64) -> f64 {
        match self {
            DipConvention::NegativeDown => v,
            DipConvention::PositiveDown => -v,
            DipConvention::FromVertical => v - 90.0,
        }
    }
}

/// One downhole survey station.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SurveyStation {
    /// Depth along the hole, metres.
    pub depth_m: f64,
    /// Degrees clockwise from grid north.
    pub azimuth_deg: f64,
    /// Degrees, negative below horizontal.
    pub dip_deg: f64,
}

/// A logged interval with its values (one per value column of the table).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Interval {
    pub from_m: f64,
    pub to_m: f64,
    pub values: Vec<f64>,
    pub text: Vec<String>,
    /// File line in the interval table.
    pub line: u64,
}

/// A drill hole.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Hole {
    pub id: String,
    /// Collar position, metres (x east, y north, z elevation).
    pub collar: [f64; 3],
    pub total_depth_m: Option<f64>,
    /// Survey stations sorted by depth (at least one after loading).
    pub surveys: Vec<SurveyStation>,
    pub intervals: Vec<Interval>,
}

/// All holes of a project with the names of the interval value columns.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HoleSet {
    pub holes: Vec<Hole>,
    pub value_names: Vec<String>,
    pub text_names: Vec<String>,
}

#[cfg(test)]
mod tests {
    use super::desurvey::Trace;
    use super::tables::{load_holes, DrillholeSpec};
    use super::*;
    use crate::table::TextOptions;
    use std::path::PathBuf;

    fn write(name: &str, text: &str) -> PathBuf {
        let p =
            std::env::temp_dir().join(format!("fieldstone-dh-{name}-{}.csv", std::process::id()));
        std::fs::write(&p, text).unwrap();
        p
    }

    #[test]
    fn tables_load_desurvey_and_report_inconsistencies() {
        let collars = write("collars", "HoleID,East,North,RL,EOH\nDH01,1000,2000,300,120\nDH02,1100,2000,305,80\nDH02,1101,2000,305,80\nDH03,1200,2000,310,50\n");
        let surveys = write("surveys", "HoleID,Depth,Azimuth,Dip\nDH01,0,90,-60\nDH01,100,90,-60\nDH02,0,0,-90\nDH09,0,0,-90\n");
        let intervals = write(
            "intervals",
            "HoleID,From,To,Density,Susc,Lith\nDH01,0,20,1.9,0.0001,TILL\nDH01,20,60,2.85,0.02,GAB\nDH01,55,70,2.8,0.01,GAB\nDH01,80,130,2.9,0.03,GAB\nDH02,0,30,1.95,0.0,TILL\nDH07,0,5,2,0,X\n",
        );
        let spec = DrillholeSpec {
            collars,
            surveys: Some(surveys),
            intervals: Some(intervals),
            dip_convention: DipConvention::NegativeDown,
            text: TextOptions::default(),
        };
        let (set, issues) = load_holes(&spec).unwrap();
        let text: Vec<String> = issues.iter().map(|i| i.to_string()).collect();
        let has = |s: &str| text.iter().any(|t| t.contains(s));
        assert_eq!(set.holes.len(), 3);
        assert_eq!(set.value_names, ["Density", "Susc"]);
        assert_eq!(set.text_names, ["Lith"]);
        assert!(has("second collar"), "{text:?}");
        assert!(has("DH09") && has("no collar"), "{text:?}");
        assert!(has("DH07"), "{text:?}");
        assert!(has("overlaps"), "{text:?}");
        assert!(has("gap from 70 to 80"), "{text:?}");
        assert!(has("past the total depth 120"), "{text:?}");
        assert!(has("hole 'DH03'") && has("vertical"), "{text:?}");
        // DH01 at 100 m: 50 m east, 86.6 m down from the collar.
        let t = Trace::of(&set.holes[0]);
        let p = t.at(100.0);
        assert!(
            (p[0] - 1050.0).abs() < 1e-9 && (p[2] - (300.0 - 86.602_540_378_443_86)).abs() < 1e-9
        );
    }

    #[test]
    fn missing_columns_name_the_table_and_what_was_found() {
        let collars = write("nocol", "Hole,East,North\nA,1,2\n");
        let spec = DrillholeSpec {
            collars,
            surveys: None,
            intervals: None,
            dip_convention: DipConvention::NegativeDown,
            text: TextOptions::default(),
        };
        let e = load_holes(&spec).unwrap_err().to_string();
        assert!(
            e.contains("collar table has no elevation") && e.contains("Hole, East, North"),
            "{e}"
        );
    }

    #[test]
    fn dip_conventions_convert() {
        assert_eq!(DipConvention::PositiveDown.to_negative_down(60.0), -60.0);
        assert_eq!(DipConvention::FromVertical.to_negative_down(0.0), -90.0);
        assert_eq!(DipConvention::FromVertical.to_negative_down(90.0), 0.0);
    }
}
