//! Calibration tables of relative spring gravity meters: readings in the
//! meter's counter units to milligals.
//!
//! The maker's table has one row per interval of the counter: the counter
//! reading at the start of the interval, the value in milligals at that
//! reading, and the interval factor (mGal per counter unit) that holds up to
//! the next row. A reading `c` in the interval starting at `cᵢ` is
//!
//!   g = vᵢ + (c − cᵢ)·fᵢ   (mGal).
//!
//! This is how the makers of zero-length-spring meters publish their tables
//! (common practice; the layout described from memory of such tables, e.g.
//! rows every 100 counter units). The intervals are of equal length; the last
//! row's interval ends one step after it. Each value follows from the row
//! before (vᵢ₊₁ = vᵢ + (cᵢ₊₁ − cᵢ)·fᵢ) up to the rounding of the printed
//! values; a row that does not is a typing error and is refused.

use std::path::{Path, PathBuf};
use thiserror::Error;

/// Largest difference between a printed value and the value that follows
/// from the row before, mGal. Printed tables round values to 0.01 mGal and
/// factors to 1e-5 mGal per unit, so over a 100-unit step the two agree to
/// about 0.011 mGal; a larger difference is a typing error.
pub const VALUE_TOLERANCE_MGAL: f64 = 0.05;

/// One row of a calibration table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeterRow {
    /// Counter reading at the start of the interval.
    pub counter: f64,
    /// Value at that reading, mGal.
    pub value_mgal: f64,
    /// Interval factor, mGal per counter unit.
    pub factor: f64,
    /// Line of the table file.
    pub line: u64,
}

/// A meter's calibration table.
#[derive(Debug, Clone, PartialEq)]
pub struct MeterTable {
    pub file: PathBuf,
    pub rows: Vec<MeterRow>,
    /// Length of every interval, counter units.
    pub step: f64,
}

/// A problem with a calibration table or a reading converted by it.
#[derive(Debug, Error, PartialEq)]
pub enum MeterError {
    #[error("cannot read {file}: {message}")]
    Read { file: PathBuf, message: String },
    #[error("{file}: line {line}: {message}")]
    Row {
        file: PathBuf,
        line: u64,
        message: String,
    },
    #[error("{file}: the table has {rows} rows; a calibration table needs at least two")]
    TooShort { file: PathBuf, rows: usize },
    #[error("{file}: line {line}: counter reading {counter} is not above {previous} on line {previous_line}; the rows must be in increasing counter order")]
    OutOfOrder {
        file: PathBuf,
        line: u64,
        counter: f64,
        previous: f64,
        previous_line: u64,
    },
    #[error("{file}: line {line}: the counter steps from {previous} to {counter} ({got} units) where every other interval is {step}; a row is missing")]
    Gap {
        file: PathBuf,
        line: u64,
        previous: f64,
        counter: f64,
        got: f64,
        step: f64,
    },
    #[error("{file}: line {line}: the value {value} mGal does not follow from line {previous_line} ({expected:.3} mGal from its value and factor); check the row for a typing error")]
    Inconsistent {
        file: PathBuf,
        line: u64,
        value: f64,
        expected: f64,
        previous_line: u64,
    },
    #[error(
        "reading {reading} counter units is outside the calibration table {file} ({lo} to {hi})"
    )]
    Outside {
        file: PathBuf,
        reading: f64,
        lo: f64,
        hi: f64,
    },
}

/// Splits a table row on commas, semicolons, tabs or spaces.
fn fields(line: &str) -> Vec<&str> {
    line.split([',', ';', '\t', ' '])
        .map(str::trim)
        .filter(|f| !f.is_empty())
        .collect()
}

impl MeterTable {
    /// Reads a table file.
    pub fn read(path: &Path) -> Result<MeterTable, MeterError> {
        let bytes = std::fs::read(path).map_err(|e| MeterError::Read {
            file: path.to_path_buf(),
            message: e.to_string(),
        })?;
        let text = crate::io::text::decode_lossless_enough(crate::io::text::strip_bom(&bytes));
        MeterTable::parse(&text, path)
    }

    /// Parses table text: three numbers a row (counter reading, value in
    /// mGal, interval factor); a header row is optional; blank lines and
    /// lines starting with `#` are skipped. `file` names the table in
    /// messages.
    pub fn parse(text: &str, file: &Path) -> Result<MeterTable, MeterError> {
        let file = file.to_path_buf();
        let mut rows: Vec<MeterRow> = Vec::new();
        let mut seen_data = false;
        for (k, raw) in text.lines().enumerate() {
            let line = k as u64 + 1;
            let t = raw.trim();
            if t.is_empty() || t.starts_with('#') {
                continue;
            }
            let f = fields(t);
            let nums: Vec<Option<f64>> = f.iter().map(|x| x.parse::<f64>().ok()).collect();
            if !seen_data && nums.iter().all(|n| n.is_none()) {
                // The header row.
                seen_data = true;
                continue;
            }
            seen_data = true;
            if f.len() < 3 {
                return Err(MeterError::Row {
                    file,
                    line,
                    message: format!("expected three numbers (counter reading, value in mGal, interval factor), found {} field(s)", f.len()),
                });
            }
            let mut v = [0.0; 3];
            for (i, name) in ["counter reading", "value in mGal", "interval factor"]
                .iter()
                .enumerate()
            {
                v[i] = match nums[i] {
                    Some(x) if x.is_finite() => x,
                    _ => {
                        return Err(MeterError::Row {
                            file,
                            line,
                            message: format!("the {name} '{}' is not a number", f[i]),
                        })
                    }
                };
            }
            if v[2] <= 0.0 {
                return Err(MeterError::Row {
                    file,
                    line,
                    message: format!(
                        "the interval factor {} is not positive (about 1 mGal per counter unit is usual)",
                        v[2]
                    ),
                });
            }
            rows.push(MeterRow {
                counter: v[0],
                value_mgal: v[1],
                factor: v[2],
                line,
            });
        }
        if rows.len() < 2 {
            return Err(MeterError::TooShort {
                file,
                rows: rows.len(),
            });
        }
        for w in rows.windows(2) {
            if w[1].counter <= w[0].counter {
                return Err(MeterError::OutOfOrder {
                    file,
                    line: w[1].line,
                    counter: w[1].counter,
                    previous: w[0].counter,
                    previous_line: w[0].line,
                });
            }
        }
        // The step: the most common interval length (the table's own).
        let mut steps: Vec<f64> = rows
            .windows(2)
            .map(|w| w[1].counter - w[0].counter)
            .collect();
        steps.sort_by(f64::total_cmp);
        let step = steps[steps.len() / 2];
        for w in rows.windows(2) {
            let got = w[1].counter - w[0].counter;
            if (got - step).abs() > 1e-9 * step.max(1.0) {
                return Err(MeterError::Gap {
                    file,
                    line: w[1].line,
                    previous: w[0].counter,
                    counter: w[1].counter,
                    got,
                    step,
                });
            }
            let expected = w[0].value_mgal + got * w[0].factor;
            if (w[1].value_mgal - expected).abs() > VALUE_TOLERANCE_MGAL {
                return Err(MeterError::Inconsistent {
                    file,
                    line: w[1].line,
                    value: w[1].value_mgal,
                    expected,
                    previous_line: w[0].line,
                });
            }
        }
        Ok(MeterTable { file, rows, step })
    }

    /// The range of counter readings the table covers.
    pub fn range(&self) -> (f64, f64) {
        (
            self.rows[0].counter,
            self.rows[self.rows.len() - 1].counter + self.step,
        )
    }

    /// A reading in counter units in milligals.
    pub fn to_mgal(&self, counter: f64) -> Result<f64, MeterError> {
        let (lo, hi) = self.range();
        if !(counter >= lo && counter <= hi) {
            return Err(MeterError::Outside {
                file: self.file.clone(),
                reading: counter,
                lo,
                hi,
            });
        }
        // The last row whose counter is at or below the reading.
        let i = self.rows.partition_point(|r| r.counter <= counter).max(1) - 1;
        let r = &self.rows[i];
        Ok(r.value_mgal + (counter - r.counter) * r.factor)
    }

    /// The counter reading of a value in milligals (the inverse of
    /// [`MeterTable::to_mgal`]); None outside the table.
    pub fn to_counter(&self, mgal: f64) -> Option<f64> {
        let last = &self.rows[self.rows.len() - 1];
        let top = last.value_mgal + self.step * last.factor;
        if !(mgal >= self.rows[0].value_mgal && mgal <= top) {
            return None;
        }
        let i = self.rows.partition_point(|r| r.value_mgal <= mgal).max(1) - 1;
        let r = &self.rows[i];
        Some(r.counter + (mgal - r.value_mgal) / r.factor)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A table in the layout of a maker's table (invented values).
    const TABLE: &str = "counter,value_mgal,factor\n\
        2000,2049.46,1.02478\n\
        2100,2151.94,1.02471\n\
        2200,2254.41,1.02465\n\
        2300,2356.88,1.02460\n";

    fn table() -> MeterTable {
        MeterTable::parse(TABLE, Path::new("meter.csv")).unwrap()
    }

    #[test]
    fn readings_convert_by_interval_and_back() {
        let t = table();
        assert_eq!(t.step, 100.0);
        // Worked by hand: 2150.00 lies in the interval of 2100:
        // 2151.94 + 50 × 1.02471 = 2203.1755.
        assert!((t.to_mgal(2150.0).unwrap() - 2203.1755).abs() < 1e-9);
        // A row's own reading gives its value; the last interval runs one
        // step past the last row.
        assert!((t.to_mgal(2200.0).unwrap() - 2254.41).abs() < 1e-9);
        assert!((t.to_mgal(2400.0).unwrap() - (2356.88 + 102.46)).abs() < 1e-9);
        for c in [2000.0, 2012.34, 2199.99, 2250.5, 2399.0] {
            let g = t.to_mgal(c).unwrap();
            assert!((t.to_counter(g).unwrap() - c).abs() < 1e-9, "{c}");
        }
        assert!(matches!(t.to_mgal(1999.0), Err(MeterError::Outside { .. })));
        assert!(t.to_mgal(f64::NAN).is_err());
    }

    #[test]
    fn the_header_is_optional_and_spaces_separate_too() {
        let t = MeterTable::parse(
            "# meter 123\n2000 2049.46 1.02478\n2100 2151.94 1.02471\n",
            Path::new("m.txt"),
        )
        .unwrap();
        assert_eq!(t.rows.len(), 2);
        assert_eq!(t.rows[1].line, 3);
    }

    #[test]
    fn bad_tables_are_refused_with_the_line() {
        let p = Path::new("m.csv");
        let e = MeterTable::parse("2000,2049.46,1.02478\n1900,1947.0,1.0248\n", p).unwrap_err();
        assert!(matches!(e, MeterError::OutOfOrder { line: 2, .. }), "{e}");
        // A missing row: 2100 then 2300.
        let e = MeterTable::parse(
            "2000,2049.46,1.02478\n2100,2151.94,1.02471\n2300,2356.88,1.02460\n2400,2459.34,1.0245\n",
            p,
        )
        .unwrap_err();
        assert!(matches!(e, MeterError::Gap { line: 3, .. }), "{e}");
        assert!(e.to_string().contains("a row is missing"));
        // A mistyped value.
        let e = MeterTable::parse("2000,2049.46,1.02478\n2100,2115.94,1.02471\n", p).unwrap_err();
        assert!(matches!(e, MeterError::Inconsistent { line: 2, .. }), "{e}");
        let e = MeterTable::parse("2000,abc,1.0\n2100,2100,1.0\n", p).unwrap_err();
        assert!(e.to_string().contains("line 1") && e.to_string().contains("'abc'"));
        assert!(matches!(
            MeterTable::parse("counter,value,factor\n2000,2049.46,1.02478\n", p),
            Err(MeterError::TooShort { rows: 1, .. })
        ));
    }
}
