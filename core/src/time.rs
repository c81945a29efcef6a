//! Dates and times in the forms field data use, as seconds since
//! 1970-01-01 00:00:00 UTC (f64). Leap seconds are not counted (POSIX time).
//!
//! Accepted: ISO 8601 date-times (`2026-03-14T09:30:15.5`, with `Z` or a
//! `±hh:mm` offset, or a space instead of `T`); dates in year-month-day,
//! day-month-year or month-day-year order with `-`, `/` or `.`; clock times
//! `hh:mm[:ss[.s]]`; decimal hours; seconds of day.

use serde::{Deserialize, Serialize};

/// Order of the fields of a numeric date such as 03/04/2026.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum DateOrder {
    #[default]
    YearMonthDay,
    DayMonthYear,
    MonthDayYear,
}

/// How a time column is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum TimeFormat {
    /// Clock time when it has colons; decimal hours when every value is below
    /// 24; seconds of day otherwise.
    #[default]
    Auto,
    Clock,
    DecimalHours,
    SecondsOfDay,
    /// Time elapsed since an origin the file does not give (since the first
    /// reading, say), in seconds, minutes or hours: enough for drift, not
    /// for the tide.
    ElapsedSeconds,
    ElapsedMinutes,
    ElapsedHours,
}

impl TimeFormat {
    /// Seconds per unit of an elapsed-time format.
    pub fn elapsed_unit_s(self) -> Option<f64> {
        match self {
            TimeFormat::ElapsedSeconds => Some(1.0),
            TimeFormat::ElapsedMinutes => Some(60.0),
            TimeFormat::ElapsedHours => Some(3600.0),
            _ => None,
        }
    }

    /// The format named on the command line (`--unit HEADER=UNIT` of a time
    /// column): s, min or h of elapsed time; clock, hours_of_day,
    /// seconds_of_day.
    pub fn parse(text: &str) -> Option<TimeFormat> {
        match text.trim().to_ascii_lowercase().as_str() {
            "s" | "sec" | "seconds" => Some(TimeFormat::ElapsedSeconds),
            "min" | "minutes" => Some(TimeFormat::ElapsedMinutes),
            "h" | "hours" => Some(TimeFormat::ElapsedHours),
            "clock" => Some(TimeFormat::Clock),
            "hours_of_day" => Some(TimeFormat::DecimalHours),
            "seconds_of_day" => Some(TimeFormat::SecondsOfDay),
            "auto" => Some(TimeFormat::Auto),
            _ => None,
        }
    }
}

/// True when a time field is written as a date and time together
/// (`2026-03-14T09:30`, `2026-03-14 09:30:00`).
pub fn looks_like_datetime(text: &str) -> bool {
    let t = text.trim();
    t.len() >= 8 && (t.contains('T') || t.get(1..).is_some_and(|rest| rest.contains('-')))
}

/// Days from 1970-01-01 to the given civil date (proleptic Gregorian),
/// H. Hinnant's `days_from_civil` algorithm.
pub fn days_from_civil(y: i64, m: u32, d: u32) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = y - era * 400;
    let mp = (m as i64 + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d as i64 - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// Civil date of a day count from 1970-01-01 (inverse of [`days_from_civil`]).
pub fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = if z >= 0 { z } else { z - 146_096 } / 146_097;
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

fn days_in_month(y: i64, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ if (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 => 29,
        _ => 28,
    }
}

/// Parses a date; returns days since 1970-01-01.
pub fn parse_date(text: &str, order: DateOrder) -> Result<i64, String> {
    let t = text.trim();
    let parts: Vec<&str> = t.split(['-', '/', '.']).collect();
    if parts.len() != 3 {
        return Err(format!(
            "'{t}' is not a date (expected three parts separated by -, / or .)"
        ));
    }
    let nums: Vec<i64> = parts
        .iter()
        .map(|p| p.trim().parse::<i64>())
        .collect::<Result<_, _>>()
        .map_err(|_| format!("'{t}' is not a date"))?;
    // A four-digit first field is always a year, whatever the order.
    let (y, m, d) = if parts[0].len() == 4 {
        (nums[0], nums[1], nums[2])
    } else {
        match order {
            DateOrder::YearMonthDay => (nums[0], nums[1], nums[2]),
            DateOrder::DayMonthYear => (nums[2], nums[1], nums[0]),
            DateOrder::MonthDayYear => (nums[2], nums[0], nums[1]),
        }
    };
    let y = if (0..100).contains(&y) && parts[0].len() != 4 && parts[2].len() <= 2 {
        2000 + y
    } else {
        y
    };
    if !(1..=12).contains(&m) {
        return Err(format!(
            "'{t}': month {m} is not 1–12 (is the date order right?)"
        ));
    }
    if d < 1 || d > days_in_month(y, m as u32) as i64 {
        return Err(format!("'{t}': day {d} does not exist in {y}-{m:02}"));
    }
    if !(1900..=2200).contains(&y) {
        return Err(format!("'{t}': year {y} is outside 1900–2200"));
    }
    Ok(days_from_civil(y, m as u32, d as u32))
}

/// Parses a clock time `hh:mm[:ss[.s]]` to seconds of day.
pub fn parse_clock(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let parts: Vec<&str> = t.split(':').collect();
    if parts.len() < 2 || parts.len() > 3 {
        return Err(format!("'{t}' is not a clock time (hh:mm or hh:mm:ss)"));
    }
    let h: f64 = parts[0]
        .parse()
        .map_err(|_| format!("'{t}' is not a clock time"))?;
    let m: f64 = parts[1]
        .parse()
        .map_err(|_| format!("'{t}' is not a clock time"))?;
    let s: f64 = if parts.len() == 3 {
        parts[2]
            .parse()
            .map_err(|_| format!("'{t}' is not a clock time"))?
    } else {
        0.0
    };
    if !(0.0..24.0).contains(&h)
        || !(0.0..60.0).contains(&m)
        || !(0.0..61.0).contains(&s)
        || h.fract() != 0.0
        || m.fract() != 0.0
    {
        return Err(format!("'{t}' is not a valid time of day"));
    }
    Ok(h * 3600.0 + m * 60.0 + s)
}

/// Parses a time column value to seconds of day by `format`.
pub fn parse_time_of_day(
    text: &str,
    format: TimeFormat,
    all_below_24: bool,
) -> Result<f64, String> {
    let t = text.trim();
    match format {
        TimeFormat::Clock => parse_clock(t),
        TimeFormat::Auto if t.contains(':') => parse_clock(t),
        _ => {
            let v: f64 = t.parse().map_err(|_| format!("'{t}' is not a time"))?;
            let hours = matches!(format, TimeFormat::DecimalHours)
                || (format == TimeFormat::Auto && all_below_24);
            let s = if hours { v * 3600.0 } else { v };
            if !(0.0..=86_401.0).contains(&s) || !s.is_finite() {
                return Err(format!("'{t}' is not a time of day ({} s)", s));
            }
            Ok(s)
        }
    }
}

/// Parses an ISO 8601 date-time (or a date alone) to seconds since the epoch.
pub fn parse_datetime(text: &str, order: DateOrder) -> Result<f64, String> {
    let t = text.trim();
    let (date, rest) = match t.find(['T', ' ']) {
        Some(i) => (&t[..i], t[i + 1..].trim()),
        None => (t, ""),
    };
    let days = parse_date(date, order)?;
    if rest.is_empty() {
        return Ok(days as f64 * 86_400.0);
    }
    let (clock, offset_s) =
        if let Some(c) = rest.strip_suffix('Z').or_else(|| rest.strip_suffix("UTC")) {
            (c.trim(), 0.0)
        } else if let Some(i) = rest.rfind(['+', '-']).filter(|&i| i > 0) {
            let off = &rest[i + 1..];
            let sign = if rest.as_bytes()[i] == b'-' {
                -1.0
            } else {
                1.0
            };
            let (oh, om) = match off.split_once(':') {
                Some((h, m)) => (h, m),
                None if off.len() == 4 => (&off[..2], &off[2..]),
                None => (off, "0"),
            };
            let oh: f64 = oh
                .parse()
                .map_err(|_| format!("'{t}': bad time-zone offset"))?;
            let om: f64 = om
                .parse()
                .map_err(|_| format!("'{t}': bad time-zone offset"))?;
            (&rest[..i], sign * (oh * 3600.0 + om * 60.0))
        } else {
            (rest, 0.0)
        };
    Ok(days as f64 * 86_400.0 + parse_clock(clock)? - offset_s)
}

/// Formats seconds since the epoch as ISO 8601 UTC (for messages and files).
pub fn format_iso(t_s: f64) -> String {
    let days = (t_s / 86_400.0).floor();
    let (y, m, d) = civil_from_days(days as i64);
    let sod = t_s - days * 86_400.0;
    let h = (sod / 3600.0).floor();
    let mi = ((sod - h * 3600.0) / 60.0).floor();
    let s = sod - h * 3600.0 - mi * 60.0;
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:06.3}Z",
        h as u32, mi as u32, s
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn day_counts_match_known_dates() {
        // 2000-03-01 is day 11 017 of the Unix epoch; 1970-01-01 is day 0
        // (POSIX time, IEEE Std 1003.1).
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 3, 1), 11_017);
        // 2026-12-02: 20 789 days (1 796 169 600 s), as `date -d 2026-12-02 +%s` prints.
        assert_eq!(days_from_civil(2026, 12, 2) * 86_400, 1_796_169_600);
        for z in [-800_000, -1, 0, 1, 11_016, 20_789, 100_000] {
            let (y, m, d) = civil_from_days(z);
            assert_eq!(days_from_civil(y, m, d), z);
        }
    }

    #[test]
    fn dates_in_every_order() {
        let want = days_from_civil(2026, 3, 4);
        assert_eq!(
            parse_date("2026-03-04", DateOrder::DayMonthYear).unwrap(),
            want
        );
        assert_eq!(
            parse_date("04/03/2026", DateOrder::DayMonthYear).unwrap(),
            want
        );
        assert_eq!(
            parse_date("03/04/2026", DateOrder::MonthDayYear).unwrap(),
            want
        );
        assert_eq!(parse_date("4.3.26", DateOrder::DayMonthYear).unwrap(), want);
        assert!(parse_date("2026-02-30", DateOrder::YearMonthDay)
            .unwrap_err()
            .contains("does not exist"));
        assert!(parse_date("13/13/2026", DateOrder::DayMonthYear)
            .unwrap_err()
            .contains("month 13"));
    }

    #[test]
    fn times_and_datetimes() {
        assert_eq!(parse_clock("09:30:15.5").unwrap(), 34_215.5);
        assert_eq!(
            parse_time_of_day("9.5", TimeFormat::Auto, true).unwrap(),
            34_200.0
        );
        assert_eq!(
            parse_time_of_day("34200", TimeFormat::Auto, false).unwrap(),
            34_200.0
        );
        let base = days_from_civil(2026, 3, 14) as f64 * 86_400.0;
        assert_eq!(
            parse_datetime("2026-03-14T09:30:00", DateOrder::default()).unwrap(),
            base + 34_200.0
        );
        assert_eq!(
            parse_datetime("2026-03-14 09:30:00Z", DateOrder::default()).unwrap(),
            base + 34_200.0
        );
        assert_eq!(
            parse_datetime("2026-03-14T19:30:00+10:00", DateOrder::default()).unwrap(),
            base + 34_200.0
        );
        assert_eq!(
            parse_datetime("2026-03-14T04:00:00-0530", DateOrder::default()).unwrap(),
            base + 34_200.0
        );
        assert_eq!(format_iso(base + 34_215.25), "2026-03-14T09:30:15.250Z");
        assert!(parse_clock("25:00").is_err());
    }
}
