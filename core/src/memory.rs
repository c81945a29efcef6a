//! Memory checks before large allocations.
//!
//! Every buffer whose size follows the user's data (grids, meshes and their
//! cell arrays, sensitivities, FFT kernel spectra, tables read from files) is
//! estimated first and refused when it would take more than [`SHARE`] of the
//! memory the system says is available, so a too-large request ends with a
//! message saying what to change instead of the system killing the program.

use thiserror::Error;

/// Memory assumed when the system does not say (a common field laptop).
pub const ASSUMED_BYTES: u64 = 8 << 30;

/// Fraction of the available memory one allocation may take.
pub const SHARE: f64 = 0.8;

/// A request that would not fit.
#[derive(Debug, Clone, PartialEq, Error)]
#[error("{what} would need {needed_mb:.0} MB, more than {share:.0} % of the {available_mb:.0} MB of memory available; {advice}", share = SHARE * 100.0)]
pub struct MemoryError {
    pub what: String,
    pub needed_mb: f64,
    pub available_mb: f64,
    pub advice: String,
}

/// Memory available to the program: MemAvailable from /proc/meminfo where
/// there is one (Linux); `None` elsewhere.
pub fn available_bytes() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

/// Environment variable that sets the memory Fieldstone plans with, in
/// megabytes (a shared machine, or a test of the refusals).
pub const LIMIT_VAR: &str = "FIELDSTONE_MEMORY_MB";

/// The memory to plan with: [`LIMIT_VAR`] when set, else the available
/// memory, else [`ASSUMED_BYTES`].
pub fn available_or_assumed() -> u64 {
    if let Some(mb) = std::env::var(LIMIT_VAR)
        .ok()
        .and_then(|v| v.trim().parse::<f64>().ok())
        .filter(|v| v.is_finite() && *v > 0.0)
    {
        return (mb * 1e6) as u64;
    }
    available_bytes().unwrap_or(ASSUMED_BYTES)
}

/// Refuses `bytes` for `what` when it exceeds [`SHARE`] of `available`.
pub fn check(what: &str, bytes: u64, available: u64, advice: &str) -> Result<(), MemoryError> {
    if bytes as f64 <= SHARE * available as f64 {
        Ok(())
    } else {
        Err(MemoryError {
            what: what.to_string(),
            needed_mb: bytes as f64 / 1e6,
            available_mb: available as f64 / 1e6,
            advice: advice.to_string(),
        })
    }
}

/// [`check`] against the memory available now.
pub fn check_now(what: &str, bytes: u64, advice: &str) -> Result<(), MemoryError> {
    check(what, bytes, available_or_assumed(), advice)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn requests_above_the_share_are_refused_with_sizes() {
        assert!(check("a grid", 800, 1000, "").is_ok());
        let e = check("a grid", 801_000_000, 1_000_000_000, "use larger cells")
            .unwrap_err()
            .to_string();
        assert!(e.contains("a grid would need 801 MB"), "{e}");
        assert!(e.contains("80 % of the 1000 MB"), "{e}");
        assert!(e.ends_with("use larger cells"), "{e}");
    }

    #[test]
    fn this_machine_reports_its_memory() {
        #[cfg(target_os = "linux")]
        assert!(available_bytes().is_some_and(|b| b > 0));
        assert!(available_or_assumed() > 0);
    }
}
