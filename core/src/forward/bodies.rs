//! The body file of `fieldstone forward`.
//!
//! ```json
//! {
//!   "inducing_field": {"intensity_nt": 55000, "inclination_deg": 70, "declination_deg": -5},
//!   "bodies": [
//!     {"name": "block", "prism": {"x": [100, 300], "y": [-50, 50], "z": [-400, -100]},
//!      "density_contrast_gcc": 0.25, "susceptibility_si": 0.03}
//!   ]
//! }
//! ```
//!
//! `inducing_field` is optional (then there is no magnetic output). A body may
//! carry `magnetization` (intensity in A/m, inclination and declination in
//! degrees), the total magnetization, which replaces its susceptibility.
//! Unknown keys are errors, and every message names the JSON path.

use super::{Body, ForwardModel};
use crate::physics::magnetic::{InducingField, Magnetization};
use crate::physics::Prism;
use serde::Deserialize;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// Largest density contrast accepted, g/cm³. Natural contrasts stay within a
/// few g/cm³ (Telford et al. 1990, Table 6.1: densities 1.0–8 g/cm³ for rocks
/// and ores); larger values are nearly always kg/m³ given by mistake.
pub const MAX_DENSITY_CONTRAST_G_CC: f64 = 10.0;

/// Largest susceptibility accepted, SI. Massive magnetite reaches a few SI
/// (Telford et al. 1990, Table 3.3); larger values are usually 10⁻³ SI or
/// cgs units given by mistake.
pub const MAX_SUSCEPTIBILITY_SI: f64 = 20.0;

/// A problem with a body file.
#[derive(Debug, Error)]
pub enum BodyFileError {
    #[error("cannot read body file {file}: {source}")]
    Read {
        file: PathBuf,
        source: std::io::Error,
    },
    #[error("{file}: at {path} (line {line}, column {column}): {message}")]
    Syntax {
        file: PathBuf,
        path: String,
        line: usize,
        column: usize,
        message: String,
    },
    #[error("{file}: at {path}: {message}")]
    Invalid {
        file: PathBuf,
        path: String,
        message: String,
    },
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileSpec {
    #[serde(default)]
    inducing_field: Option<InducingField>,
    bodies: Vec<BodySpec>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct BodySpec {
    #[serde(default)]
    name: Option<String>,
    prism: PrismSpec,
    #[serde(default)]
    density_contrast_gcc: Option<f64>,
    #[serde(default)]
    susceptibility_si: Option<f64>,
    #[serde(default)]
    magnetization: Option<Magnetization>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct PrismSpec {
    x: [f64; 2],
    y: [f64; 2],
    z: [f64; 2],
}

/// A parsed body file, with notes for the user (things accepted but worth
/// saying, such as a susceptibility that is unused without an inducing field).
#[derive(Debug, Clone, PartialEq)]
pub struct BodyFile {
    pub model: ForwardModel,
    pub notes: Vec<String>,
}

/// Reads and checks a body file.
pub fn read_body_file(path: &Path) -> Result<BodyFile, BodyFileError> {
    let text = std::fs::read(path).map_err(|source| BodyFileError::Read {
        file: path.to_path_buf(),
        source,
    })?;
    parse_body_file(crate::io::text::strip_bom(&text), path)
}

/// Parses body-file bytes; `file` is used in messages only.
pub fn parse_body_file(bytes: &[u8], file: &Path) -> Result<BodyFile, BodyFileError> {
    let mut de = serde_json::Deserializer::from_slice(bytes);
    let spec: FileSpec = serde_path_to_error::deserialize(&mut de).map_err(|e| {
        let path = e.path().to_string();
        let inner = e.into_inner();
        BodyFileError::Syntax {
            file: file.to_path_buf(),
            path,
            line: inner.line(),
            column: inner.column(),
            message: inner.to_string(),
        }
    })?;
    de.end().map_err(|e| BodyFileError::Syntax {
        file: file.to_path_buf(),
        path: ".".into(),
        line: e.line(),
        column: e.column(),
        message: e.to_string(),
    })?;
    build(spec, file)
}

fn build(spec: FileSpec, file: &Path) -> Result<BodyFile, BodyFileError> {
    let invalid = |path: String, message: String| BodyFileError::Invalid {
        file: file.to_path_buf(),
        path,
        message,
    };
    let mut notes = Vec::new();
    if let Some(f) = &spec.inducing_field {
        check_direction("inducing_field", f.inclination_deg, f.declination_deg)
            .map_err(|(p, m)| invalid(p, m))?;
        if !(f.intensity_nt.is_finite() && f.intensity_nt > 0.0 && f.intensity_nt < 100_000.0) {
            return Err(invalid(
                "inducing_field.intensity_nt".into(),
                format!("{} is not a main-field intensity in nT (expected between 0 and 100 000; the Earth's field is about 22 000–67 000 nT)", f.intensity_nt),
            ));
        }
    }
    if spec.bodies.is_empty() {
        return Err(invalid(
            "bodies".into(),
            "the list is empty; give at least one body".into(),
        ));
    }
    for (i, b) in spec.bodies.iter().enumerate() {
        let Some(n) = &b.name else { continue };
        if let Some(j) = spec.bodies[..i]
            .iter()
            .position(|c| c.name.as_deref() == Some(n))
        {
            return Err(invalid(
                format!("bodies[{i}].name"),
                format!("the name '{n}' is used twice (bodies[{j}] has it too); names must be unique so the bodies can be told apart in the output"),
            ));
        }
    }
    let mut bodies = Vec::with_capacity(spec.bodies.len());
    for (i, b) in spec.bodies.into_iter().enumerate() {
        let at = |field: &str| format!("bodies[{i}].{field}");
        let name = b.name.clone().unwrap_or_else(|| format!("body {}", i + 1));
        let prism = Prism {
            x: b.prism.x,
            y: b.prism.y,
            z: b.prism.z,
        };
        if let Err(e) = prism.validate() {
            let axis = match e {
                crate::physics::PrismError::NotFinite { axis, .. }
                | crate::physics::PrismError::NotIncreasing { axis, .. } => axis,
            };
            return Err(invalid(at(&format!("prism.{axis}")), e.to_string()));
        }
        let density = b.density_contrast_gcc.unwrap_or(0.0);
        if !density.is_finite() || density.abs() > MAX_DENSITY_CONTRAST_G_CC {
            return Err(invalid(
                at("density_contrast_gcc"),
                format!("{density} g/cm³ is not a plausible density contrast (|Δρ| ≤ {MAX_DENSITY_CONTRAST_G_CC}); if this is kg/m³, divide by 1000"),
            ));
        }
        if let Some(chi) = b.susceptibility_si {
            if !chi.is_finite() || chi.abs() > MAX_SUSCEPTIBILITY_SI {
                return Err(invalid(
                    at("susceptibility_si"),
                    format!("{chi} is not a plausible SI susceptibility (|χ| ≤ {MAX_SUSCEPTIBILITY_SI}); if this is in 10⁻³ SI, divide by 1000; cgs values multiply by 4π"),
                ));
            }
        }
        let magnetization = match (&b.magnetization, b.susceptibility_si, &spec.inducing_field) {
            (Some(m), chi, Some(_)) => {
                check_direction(&at("magnetization"), m.inclination_deg, m.declination_deg).map_err(|(p, msg)| invalid(p, msg))?;
                if !m.intensity_am.is_finite() || m.intensity_am < 0.0 || m.intensity_am > 1.0e5 {
                    return Err(invalid(at("magnetization.intensity_am"), format!("{} A/m is not a plausible magnetization (0 to 100 000 A/m)", m.intensity_am)));
                }
                if chi.is_some() {
                    notes.push(format!("{name}: magnetization given, so susceptibility_si is not used (the magnetization is the total)"));
                }
                Some(m.vector_a_m())
            }
            (Some(_), _, None) => {
                return Err(invalid(
                    at("magnetization"),
                    "a magnetization needs \"inducing_field\" at the top level: it sets the direction onto which the total-field anomaly is projected".into(),
                ))
            }
            (None, Some(chi), Some(f)) => Some(f.induced_magnetization(chi)),
            (None, Some(_), None) => {
                notes.push(format!("{name}: susceptibility_si is not used because the file has no inducing_field"));
                None
            }
            (None, None, _) => None,
        };
        bodies.push(Body {
            name,
            prism,
            density_g_cc: density,
            magnetization_a_m: magnetization,
        });
    }
    Ok(BodyFile {
        model: ForwardModel {
            bodies,
            inducing_field: spec.inducing_field,
        },
        notes,
    })
}

fn check_direction(path: &str, inc: f64, dec: f64) -> Result<(), (String, String)> {
    if !inc.is_finite() || !(-90.0..=90.0).contains(&inc) {
        return Err((
            format!("{path}.inclination_deg"),
            format!("{inc} is outside −90° to 90°"),
        ));
    }
    if !dec.is_finite() || !(-360.0..=360.0).contains(&dec) {
        return Err((
            format!("{path}.declination_deg"),
            format!("{dec} is outside −360° to 360°"),
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(s: &str) -> Result<BodyFile, BodyFileError> {
        parse_body_file(s.as_bytes(), Path::new("bodies.json"))
    }

    const GOOD: &str = r#"{
      "inducing_field": {"intensity_nt": 55000, "inclination_deg": 70, "declination_deg": -5},
      "bodies": [
        {"prism": {"x": [100, 300], "y": [-50, 50], "z": [-400, -100]},
         "density_contrast_gcc": 0.25, "susceptibility_si": 0.03},
        {"name": "remanent", "prism": {"x": [0, 10], "y": [0, 10], "z": [-20, -10]},
         "magnetization": {"intensity_am": 1.2, "inclination_deg": -30, "declination_deg": 10}}
      ]
    }"#;

    #[test]
    fn the_documented_example_parses() {
        let f = parse(GOOD).unwrap();
        assert_eq!(f.model.bodies.len(), 2);
        assert_eq!(f.model.bodies[0].name, "body 1");
        assert_eq!(f.model.bodies[0].density_g_cc, 0.25);
        let m = f.model.bodies[1].magnetization_a_m.unwrap();
        assert!(((m[0] * m[0] + m[1] * m[1] + m[2] * m[2]).sqrt() - 1.2).abs() < 1e-12);
        // Negative inclination points up: +z.
        assert!(m[2] > 0.0);
    }

    #[test]
    fn unknown_keys_are_named_with_their_path() {
        let e = parse(
            r#"{"bodies": [{"prism": {"x": [0, 1], "y": [0, 1], "z": [0, 1]}, "densty": 1}]}"#,
        )
        .unwrap_err();
        let s = e.to_string();
        assert!(s.contains("bodies[0]") && s.contains("densty"), "{s}");
    }

    #[test]
    fn reversed_bounds_name_the_axis() {
        let e = parse(r#"{"bodies": [{"prism": {"x": [0, 1], "y": [0, 1], "z": [5, 1]}, "density_contrast_gcc": 1}]}"#).unwrap_err();
        assert!(e.to_string().contains("bodies[0].prism.z"), "{e}");
    }

    #[test]
    fn wrong_types_and_syntax_give_line_and_path() {
        let e = parse(
            "{\"bodies\": [\n {\"prism\": {\"x\": [0, \"a\"], \"y\": [0, 1], \"z\": [0, 1]}}]}",
        )
        .unwrap_err();
        let s = e.to_string();
        assert!(
            s.contains("bodies[0].prism.x") && s.contains("line 2"),
            "{s}"
        );
        let e = parse("{\"bodies\": [").unwrap_err();
        assert!(matches!(e, BodyFileError::Syntax { .. }), "{e}");
    }

    #[test]
    fn densities_in_kg_per_m3_are_caught() {
        let e = parse(r#"{"bodies": [{"prism": {"x": [0, 1], "y": [0, 1], "z": [0, 1]}, "density_contrast_gcc": 250}]}"#).unwrap_err();
        assert!(e.to_string().contains("kg/m³"), "{e}");
    }

    #[test]
    fn magnetization_without_a_field_is_refused_and_unused_susceptibility_noted() {
        let e = parse(r#"{"bodies": [{"prism": {"x": [0, 1], "y": [0, 1], "z": [0, 1]}, "magnetization": {"intensity_am": 1, "inclination_deg": 0, "declination_deg": 0}}]}"#).unwrap_err();
        assert!(e.to_string().contains("inducing_field"), "{e}");
        let f = parse(r#"{"bodies": [{"prism": {"x": [0, 1], "y": [0, 1], "z": [0, 1]}, "susceptibility_si": 0.01}]}"#).unwrap();
        assert_eq!(f.notes.len(), 1);
        assert!(!f.model.has_magnetics());
    }

    #[test]
    fn empty_body_lists_and_bad_fields_are_refused() {
        assert!(parse(r#"{"bodies": []}"#)
            .unwrap_err()
            .to_string()
            .contains("empty"));
        let e = parse(r#"{"inducing_field": {"intensity_nt": 55000, "inclination_deg": 120, "declination_deg": 0}, "bodies": [{"prism": {"x": [0, 1], "y": [0, 1], "z": [0, 1]}}]}"#).unwrap_err();
        assert!(
            e.to_string().contains("inducing_field.inclination_deg"),
            "{e}"
        );
        assert!(parse("").is_err());
        assert!(parse("{\"bodies\": []} trailing").is_err());
    }
}
