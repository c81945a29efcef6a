//! Base-station networks of relative gravity surveys, adjusted by weighted
//! least squares.
//!
//! A survey of several files (one a day, say) reads base stations, some of
//! known absolute gravity and some not. Every base reading `i` in file `f`
//! at time `tᵢ` is an observation equation
//!
//!   rᵢ = g(sᵢ) + c_f + d_f·(tᵢ − t̄_f) + vᵢ,
//!
//! with `g(s)` the absolute gravity of the base read (known, or unknown and
//! solved for), `c_f` the meter's reading offset in that file, `d_f` its
//! linear drift there (mGal per hour, about the file's mean time `t̄_f`) and
//! `vᵢ` the residual; readings are weighted by the inverse of their variance
//! (Torge 1989, Gravimetry, on the observation equations of relative
//! gravimetry with a drift polynomial per survey day and their least-squares
//! adjustment). Known bases are held fixed. The unknowns follow from the
//! normal equations; their standard errors from the inverse of the normal
//! matrix scaled by the a-posteriori variance factor `vᵀWv / (n − u)`.
//!
//! The adjustment gives every base a value; the readings between bases are
//! then tied to them loop by loop ([`super::drift::reduce_loops`]).

use nalgebra::{DMatrix, DVector};
use serde::Serialize;
use std::collections::BTreeMap;
use thiserror::Error;

/// One reading at a base station.
#[derive(Debug, Clone, PartialEq)]
pub struct BaseObservation {
    /// Which file (day) of the survey it comes from.
    pub file: usize,
    /// Time of the reading, seconds (any origin; within a file only
    /// differences matter).
    pub time_s: f64,
    pub station: String,
    /// The reading in mGal (after the meter's calibration and the tide).
    pub reading_mgal: f64,
    /// Standard deviation of the reading, mGal (its weight is 1/sd²).
    pub sd_mgal: f64,
}

/// A base after the adjustment.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AdjustedBase {
    pub station: String,
    /// Absolute gravity, mGal: as given for a known base, adjusted otherwise.
    pub value_mgal: f64,
    /// Standard error of an adjusted value, mGal (None for a known base, or
    /// when the network has no redundancy).
    pub sd_mgal: Option<f64>,
    pub known: bool,
    /// Readings of this base in the adjustment.
    pub readings: usize,
    /// Root mean square of their residuals, mGal.
    pub rms_residual_mgal: f64,
}

/// The drift of one file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FileDrift {
    pub file: usize,
    pub rate_mgal_per_h: f64,
    /// The meter's reading offset (reading minus absolute gravity at the
    /// file's mean time), mGal.
    pub offset_mgal: f64,
}

/// The adjusted network.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NetworkAdjustment {
    pub bases: Vec<AdjustedBase>,
    /// Residual of each observation, in the order given, mGal
    /// (observed minus adjusted).
    pub residuals_mgal: Vec<f64>,
    pub drift: Vec<FileDrift>,
    /// Square root of the a-posteriori variance factor (1 when the readings'
    /// standard deviations were right); None without redundancy.
    pub sigma0: Option<f64>,
    /// Observations minus unknowns.
    pub redundancy: usize,
}

impl NetworkAdjustment {
    /// Every base's value (known or adjusted), by station.
    pub fn values(&self) -> BTreeMap<String, f64> {
        self.bases
            .iter()
            .map(|b| (b.station.clone(), b.value_mgal))
            .collect()
    }
}

/// Why a network cannot be adjusted.
#[derive(Debug, Error, PartialEq)]
pub enum NetworkError {
    #[error("no base of known absolute gravity is read; give at least one base its value")]
    NoKnownBase,
    #[error("base(s) {stations} are read only in files that read no base of known value (files {files}); tie them with a loop through a known base")]
    NotTied { stations: String, files: String },
    #[error("file {file} reads bases at one time only; a loop needs a base reading at its start and at its end")]
    OneTime { file: usize },
    #[error("reading {index}: the {what} is not a finite number")]
    NotFinite { index: usize, what: &'static str },
    #[error("the network's normal equations are singular; every file needs base readings at two times and every unknown base a tie to a known one")]
    Singular,
}

/// The bases of a survey, read from a table with a column of station ids
/// and a column of absolute gravity in mGal (blank where unknown; optional
/// coordinates and other columns are allowed and not used here): station →
/// value. A base listed twice must have the same value both times.
pub fn read_bases(path: &std::path::Path) -> Result<BTreeMap<String, Option<f64>>, String> {
    use crate::survey::columns::{guess_role, normalise, Role};
    use crate::table::passthrough::read_passthrough;
    let t = read_passthrough(path, &[]).map_err(|e| e.to_string())?;
    let found = || t.names.join(", ");
    let station = t
        .names
        .iter()
        .position(|n| guess_role(n, false) == Role::Station)
        .or_else(|| {
            t.names
                .iter()
                .position(|n| ["base", "name", "basestation"].contains(&normalise(n).as_str()))
        })
        .ok_or_else(|| {
            format!(
                "{}: no column of base station ids (a header such as station or base; found: {})",
                path.display(),
                found()
            )
        })?;
    let value = t
        .names
        .iter()
        .enumerate()
        .position(|(k, n)| {
            let m = normalise(n);
            k != station
                && (guess_role(n, true) == Role::Gravity
                    || m.contains("mgal")
                    || m.contains("absolute")
                    || m == "value")
        })
        .ok_or_else(|| {
            format!(
                "{}: no column of absolute gravity in mGal (a header such as gravity_mgal or absolute_mgal; found: {})",
                path.display(),
                found()
            )
        })?;
    let values = t.numbers(value, false).map_err(|e| e.to_string())?;
    let mut out: BTreeMap<String, Option<f64>> = BTreeMap::new();
    let mut line_of: BTreeMap<String, u64> = BTreeMap::new();
    for (r, value) in values.iter().enumerate() {
        let id = t.text(r, station);
        if id.is_empty() {
            return Err(format!(
                "{}: line {}: the base has no station id",
                path.display(),
                t.lines[r]
            ));
        }
        let v = value.is_finite().then_some(*value);
        if let Some(prev) = out.get(&id) {
            if *prev != v {
                let show =
                    |x: &Option<f64>| x.map_or("no value".to_string(), |a| format!("{a} mGal"));
                return Err(format!(
                    "{}: line {}: base '{id}' is listed twice with different values ({} on line {}, {} here)",
                    path.display(),
                    t.lines[r],
                    show(prev),
                    line_of[&id],
                    show(&v)
                ));
            }
            continue;
        }
        out.insert(id.clone(), v);
        line_of.insert(id, t.lines[r]);
    }
    Ok(out)
}

/// A small union-find over files and unknown stations.
struct Groups(Vec<usize>);

impl Groups {
    fn find(&mut self, a: usize) -> usize {
        let mut r = a;
        while self.0[r] != r {
            r = self.0[r];
        }
        let mut a = a;
        while self.0[a] != r {
            let next = self.0[a];
            self.0[a] = r;
            a = next;
        }
        r
    }
    fn join(&mut self, a: usize, b: usize) {
        let (ra, rb) = (self.find(a), self.find(b));
        self.0[ra] = rb;
    }
}

/// Adjusts the network of base readings `obs`, holding the bases in `known`
/// (station → absolute gravity, mGal) fixed. Stations read in `obs` that
/// are not in `known` are solved for.
pub fn adjust_network(
    obs: &[BaseObservation],
    known: &BTreeMap<String, f64>,
) -> Result<NetworkAdjustment, NetworkError> {
    for (index, o) in obs.iter().enumerate() {
        for (v, what) in [
            (o.time_s, "time"),
            (o.reading_mgal, "reading"),
            (o.sd_mgal, "standard deviation"),
        ] {
            if !v.is_finite() {
                return Err(NetworkError::NotFinite { index, what });
            }
        }
        if o.sd_mgal <= 0.0 {
            return Err(NetworkError::NotFinite {
                index,
                what: "standard deviation (must be positive)",
            });
        }
    }
    if !obs.iter().any(|o| known.contains_key(&o.station)) {
        return Err(NetworkError::NoKnownBase);
    }
    // Files (in order of appearance) and unknown stations (sorted).
    let mut files: Vec<usize> = obs.iter().map(|o| o.file).collect();
    files.sort_unstable();
    files.dedup();
    let file_index: BTreeMap<usize, usize> =
        files.iter().enumerate().map(|(k, f)| (*f, k)).collect();
    let unknown: Vec<String> = {
        let mut u: Vec<String> = obs
            .iter()
            .filter(|o| !known.contains_key(&o.station))
            .map(|o| o.station.clone())
            .collect();
        u.sort();
        u.dedup();
        u
    };
    let unknown_index: BTreeMap<&str, usize> = unknown
        .iter()
        .enumerate()
        .map(|(k, s)| (s.as_str(), k))
        .collect();
    // Every file needs readings at two times for its drift.
    for (k, f) in files.iter().enumerate() {
        let times: Vec<f64> = obs
            .iter()
            .filter(|o| file_index[&o.file] == k)
            .map(|o| o.time_s)
            .collect();
        let lo = times.iter().cloned().fold(f64::INFINITY, f64::min);
        let hi = times.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        if hi <= lo {
            return Err(NetworkError::OneTime { file: *f });
        }
    }
    // Every unknown base must be tied, through files and other bases, to a
    // file that reads a known base.
    let nf = files.len();
    let mut groups = Groups((0..nf + unknown.len()).collect());
    let mut anchored = vec![false; nf];
    for o in obs {
        let f = file_index[&o.file];
        match unknown_index.get(o.station.as_str()) {
            Some(u) => groups.join(f, nf + u),
            None => anchored[f] = true,
        }
    }
    let mut anchored_roots = std::collections::BTreeSet::new();
    for (f, a) in anchored.iter().enumerate() {
        if *a {
            anchored_roots.insert(groups.find(f));
        }
    }
    let loose: Vec<usize> = (0..unknown.len())
        .filter(|u| !anchored_roots.contains(&groups.find(nf + u)))
        .collect();
    if !loose.is_empty() {
        let roots: std::collections::BTreeSet<usize> =
            loose.iter().map(|u| groups.find(nf + u)).collect();
        let loose_files: Vec<String> = (0..nf)
            .filter(|f| roots.contains(&groups.find(*f)))
            .map(|f| files[f].to_string())
            .collect();
        return Err(NetworkError::NotTied {
            stations: loose
                .iter()
                .map(|u| unknown[*u].clone())
                .collect::<Vec<_>>()
                .join(", "),
            files: loose_files.join(", "),
        });
    }
    // Mean time of each file (hours), the origin of its drift.
    let mut mean_t = vec![0.0; nf];
    let mut count = vec![0usize; nf];
    for o in obs {
        let f = file_index[&o.file];
        mean_t[f] += o.time_s / 3600.0;
        count[f] += 1;
    }
    for f in 0..nf {
        mean_t[f] /= count[f] as f64;
    }
    // Unknowns: the unknown bases, then (offset, drift) of every file.
    let nu = unknown.len() + 2 * nf;
    let row_of = |o: &BaseObservation| -> (Vec<(usize, f64)>, f64) {
        let f = file_index[&o.file];
        let tau = o.time_s / 3600.0 - mean_t[f];
        let mut a = vec![
            (unknown.len() + 2 * f, 1.0),
            (unknown.len() + 2 * f + 1, tau),
        ];
        let b = match known.get(&o.station) {
            Some(g) => o.reading_mgal - g,
            None => {
                a.push((unknown_index[o.station.as_str()], 1.0));
                o.reading_mgal
            }
        };
        (a, b)
    };
    let mut n = DMatrix::<f64>::zeros(nu, nu);
    let mut rhs = DVector::<f64>::zeros(nu);
    // Each observation's row of the design matrix (column, coefficient),
    // right-hand side and weight.
    type Row = (Vec<(usize, f64)>, f64, f64);
    let rows: Vec<Row> = obs
        .iter()
        .map(|o| {
            let (a, b) = row_of(o);
            (a, b, 1.0 / (o.sd_mgal * o.sd_mgal))
        })
        .collect();
    for (a, b, w) in &rows {
        for &(i, ai) in a {
            rhs[i] += w * ai * b;
            for &(j, aj) in a {
                n[(i, j)] += w * ai * aj;
            }
        }
    }
    let chol = n.clone().cholesky().ok_or(NetworkError::Singular)?;
    let x = chol.solve(&rhs);
    let q = chol.inverse();
    let residuals: Vec<f64> = rows
        .iter()
        .map(|(a, b, _)| b - a.iter().map(|&(i, ai)| ai * x[i]).sum::<f64>())
        .collect();
    let redundancy = obs.len().saturating_sub(nu);
    let sigma0 = (redundancy > 0).then(|| {
        (rows
            .iter()
            .zip(&residuals)
            .map(|((_, _, w), v)| w * v * v)
            .sum::<f64>()
            / redundancy as f64)
            .sqrt()
    });
    let value_of = |s: &str| -> (f64, Option<f64>, bool) {
        match known.get(s) {
            Some(g) => (*g, None, true),
            None => {
                let k = unknown_index[s];
                (x[k], sigma0.map(|s0| s0 * q[(k, k)].sqrt()), false)
            }
        }
    };
    let mut stations: Vec<&str> = obs.iter().map(|o| o.station.as_str()).collect();
    stations.sort_unstable();
    stations.dedup();
    let bases = stations
        .iter()
        .map(|s| {
            let (value_mgal, sd_mgal, is_known) = value_of(s);
            let own: Vec<f64> = obs
                .iter()
                .zip(&residuals)
                .filter(|(o, _)| o.station == *s)
                .map(|(_, v)| *v)
                .collect();
            AdjustedBase {
                station: s.to_string(),
                value_mgal,
                sd_mgal,
                known: is_known,
                readings: own.len(),
                rms_residual_mgal: (own.iter().map(|v| v * v).sum::<f64>() / own.len() as f64)
                    .sqrt(),
            }
        })
        .collect();
    let drift = files
        .iter()
        .enumerate()
        .map(|(k, f)| FileDrift {
            file: *f,
            offset_mgal: x[unknown.len() + 2 * k],
            rate_mgal_per_h: x[unknown.len() + 2 * k + 1],
        })
        .collect();
    Ok(NetworkAdjustment {
        bases,
        residuals_mgal: residuals,
        drift,
        sigma0,
        redundancy,
    })
}
