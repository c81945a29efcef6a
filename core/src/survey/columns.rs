//! Column roles and units, and guessing them from header text.

use serde::{Deserialize, Serialize};

/// What a column holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Role {
    /// Projected x (easting).
    Easting,
    /// Projected y (northing).
    Northing,
    Longitude,
    Latitude,
    /// Elevation of the sensor or station (z up).
    Elevation,
    /// Height of the sensor above the ground (terrain clearance).
    HeightAboveGround,
    /// Line number or name.
    Line,
    /// Station or fiducial.
    Station,
    Date,
    Time,
    /// Date and time together (e.g. ISO 8601).
    DateTime,
    /// Gravity meter reading or observed gravity.
    Gravity,
    /// Magnetometer reading (total field).
    Magnetic,
    /// Base-station gravity reading.
    BaseGravity,
    /// Base-station magnetometer reading.
    BaseMagnetic,
    /// Height of the instrument above the station mark.
    InstrumentHeight,
    /// Carried through unchanged.
    PassThrough,
    /// Not imported.
    Ignore,
}

impl Role {
    pub const ALL: [Role; 18] = [
        Role::Easting,
        Role::Northing,
        Role::Longitude,
        Role::Latitude,
        Role::Elevation,
        Role::HeightAboveGround,
        Role::Line,
        Role::Station,
        Role::Date,
        Role::Time,
        Role::DateTime,
        Role::Gravity,
        Role::Magnetic,
        Role::BaseGravity,
        Role::BaseMagnetic,
        Role::InstrumentHeight,
        Role::PassThrough,
        Role::Ignore,
    ];

    pub fn label(&self) -> &'static str {
        match self {
            Role::Easting => "easting (x)",
            Role::Northing => "northing (y)",
            Role::Longitude => "longitude",
            Role::Latitude => "latitude",
            Role::Elevation => "elevation",
            Role::HeightAboveGround => "height above ground",
            Role::Line => "line",
            Role::Station => "station / fiducial",
            Role::Date => "date",
            Role::Time => "time",
            Role::DateTime => "date and time",
            Role::Gravity => "gravity reading",
            Role::Magnetic => "magnetic reading",
            Role::BaseGravity => "base gravity reading",
            Role::BaseMagnetic => "base magnetic reading",
            Role::InstrumentHeight => "instrument height",
            Role::PassThrough => "pass through",
            Role::Ignore => "ignore",
        }
    }

    /// The short key a role is named by on the command line
    /// (`--column KEY=HEADER`) and by `fieldstone inspect --roles`.
    pub fn key(&self) -> &'static str {
        match self {
            Role::Easting => "x",
            Role::Northing => "y",
            Role::Longitude => "lon",
            Role::Latitude => "lat",
            Role::Elevation => "height",
            Role::HeightAboveGround => "clearance",
            Role::Line => "line",
            Role::Station => "station",
            Role::Date => "date",
            Role::Time => "time",
            Role::DateTime => "datetime",
            Role::Gravity => "gravity",
            Role::Magnetic => "magnetic",
            Role::BaseGravity => "base_gravity",
            Role::BaseMagnetic => "base_magnetic",
            Role::InstrumentHeight => "instrument_height",
            Role::PassThrough => "keep",
            Role::Ignore => "ignore",
        }
    }

    /// The role of a key (see [`Role::key`]); None for an unknown key.
    pub fn from_key(key: &str) -> Option<Role> {
        let k = key.trim().to_ascii_lowercase();
        Role::ALL.iter().copied().find(|r| r.key() == k)
    }

    /// True for roles whose values are numbers.
    pub fn is_numeric(&self) -> bool {
        !matches!(
            self,
            Role::Line
                | Role::Station
                | Role::Date
                | Role::Time
                | Role::DateTime
                | Role::PassThrough
                | Role::Ignore
        )
    }

    /// True for roles measured as a length.
    pub fn is_length(&self) -> bool {
        matches!(
            self,
            Role::Easting
                | Role::Northing
                | Role::Elevation
                | Role::HeightAboveGround
                | Role::InstrumentHeight
        )
    }

    /// The units a column of this role may be given in; the first is the default.
    pub fn units(&self) -> &'static [Unit] {
        match self {
            r if r.is_length() => &[Unit::Metre, Unit::Foot, Unit::UsSurveyFoot],
            Role::Gravity | Role::BaseGravity => &[Unit::Mgal, Unit::MicrometrePerSecond2],
            Role::Magnetic | Role::BaseMagnetic => &[Unit::Nanotesla],
            Role::Longitude | Role::Latitude => &[Unit::Degree],
            _ => &[Unit::None],
        }
    }
}

/// Units of a column, converted once at import to metres, mGal, nT or degrees.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Unit {
    None,
    Metre,
    /// International foot, 0.3048 m exactly.
    Foot,
    /// US survey foot, 1200/3937 m.
    UsSurveyFoot,
    Mgal,
    /// µm/s², the same as the gravity unit (g.u.); 1 µm/s² = 0.1 mGal.
    MicrometrePerSecond2,
    Nanotesla,
    Degree,
}

impl Unit {
    pub fn label(&self) -> &'static str {
        match self {
            Unit::None => "",
            Unit::Metre => "m",
            Unit::Foot => "ft",
            Unit::UsSurveyFoot => "US survey ft",
            Unit::Mgal => "mGal",
            Unit::MicrometrePerSecond2 => "µm/s² (g.u.)",
            Unit::Nanotesla => "nT",
            Unit::Degree => "degrees",
        }
    }

    /// The unit named by `text` on the command line (`--unit HEADER=UNIT`):
    /// m, ft, usft, mGal, gu (µm/s²), nT, deg.
    pub fn parse(text: &str) -> Option<Unit> {
        match text.trim().to_ascii_lowercase().as_str() {
            "m" | "metre" | "metres" | "meter" | "meters" => Some(Unit::Metre),
            "ft" | "foot" | "feet" => Some(Unit::Foot),
            "usft" | "us_ft" | "us-ft" => Some(Unit::UsSurveyFoot),
            "mgal" => Some(Unit::Mgal),
            "gu" | "um/s2" | "µm/s2" | "µm/s²" => Some(Unit::MicrometrePerSecond2),
            "nt" | "gamma" => Some(Unit::Nanotesla),
            "deg" | "degree" | "degrees" => Some(Unit::Degree),
            "" | "none" => Some(Unit::None),
            _ => None,
        }
    }

    /// The name [`Unit::parse`] reads back.
    pub fn key(&self) -> &'static str {
        match self {
            Unit::None => "none",
            Unit::Metre => "m",
            Unit::Foot => "ft",
            Unit::UsSurveyFoot => "usft",
            Unit::Mgal => "mgal",
            Unit::MicrometrePerSecond2 => "gu",
            Unit::Nanotesla => "nt",
            Unit::Degree => "deg",
        }
    }

    /// Factor to the program unit (m, mGal, nT, degrees).
    pub fn factor(&self) -> f64 {
        match self {
            Unit::Foot => 0.3048,
            Unit::UsSurveyFoot => 1200.0 / 3937.0,
            Unit::MicrometrePerSecond2 => 0.1,
            _ => 1.0,
        }
    }
}

/// A column's role and unit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ColumnSpec {
    pub name: String,
    pub role: Role,
    pub unit: Unit,
}

/// Lower-case letters and digits only: "Mag_Corr (nT)" → "magcorrnt".
pub fn normalise(name: &str) -> String {
    name.chars()
        .filter(|c| c.is_alphanumeric())
        .flat_map(|c| c.to_lowercase())
        .collect()
}

/// Unit hinted by header text, if any (e.g. "ELEV_FT", "Height (m)", "grav_gu").
pub fn unit_hint(name: &str) -> Option<Unit> {
    let lower = name.to_lowercase();
    let tokens: Vec<&str> = lower
        .split(|c: char| !c.is_alphanumeric() && c != 'µ' && c != '/')
        .filter(|t| !t.is_empty())
        .collect();
    let has = |t: &str| tokens.contains(&t);
    if has("usft") || lower.contains("us ft") || lower.contains("survey ft") {
        Some(Unit::UsSurveyFoot)
    } else if has("ft") || has("feet") || has("foot") {
        Some(Unit::Foot)
    } else if has("mgal") {
        Some(Unit::Mgal)
    } else if has("gu") || lower.contains("um/s") || lower.contains("µm/s") {
        Some(Unit::MicrometrePerSecond2)
    } else if has("nt") || has("gamma") || has("gammas") {
        Some(Unit::Nanotesla)
    } else if has("m") || has("metres") || has("meters") {
        Some(Unit::Metre)
    } else {
        None
    }
}

/// Strips unit words from a normalised name so "elevft" matches "elev".
fn strip_units(n: &str) -> &str {
    for suffix in [
        "usft", "ft", "feet", "mgal", "gu", "nt", "m", "deg", "degrees",
    ] {
        if let Some(s) = n.strip_suffix(suffix) {
            if !s.is_empty() {
                return s;
            }
        }
    }
    n
}

/// Guesses the role of a column from its header (common spellings in survey
/// exports; common practice) and whether its values are numbers.
pub fn guess_role(name: &str, numeric: bool) -> Role {
    let full = normalise(name);
    let n = strip_units(&full);
    let is = |words: &[&str]| words.iter().any(|w| *w == n || *w == full);
    let starts = |words: &[&str]| words.iter().any(|w| n.starts_with(w));
    if is(&[
        "x", "east", "easting", "eastings", "e", "xm", "utme", "utmeast", "mgae", "xcoord",
        "x_coord", "xutm",
    ]) {
        Role::Easting
    } else if is(&[
        "y",
        "north",
        "northing",
        "northings",
        "n",
        "ym",
        "utmn",
        "utmnorth",
        "mgan",
        "ycoord",
        "yutm",
    ]) {
        Role::Northing
    } else if is(&[
        "lon",
        "long",
        "longitude",
        "lng",
        "londeg",
        "longdd",
        "londd",
    ]) {
        Role::Longitude
    } else if is(&["lat", "latitude", "latdeg", "latdd"]) {
        Role::Latitude
    } else if is(&[
        "clearance",
        "terrainclearance",
        "radalt",
        "radar",
        "agl",
        "heightaboveground",
        "sensorheight",
        "laseralt",
    ]) {
        Role::HeightAboveGround
    } else if is(&[
        "instrumentheight",
        "insth",
        "hi",
        "meterheight",
        "instheight",
    ]) {
        Role::InstrumentHeight
    } else if is(&[
        "z",
        "elev",
        "elevation",
        "height",
        "alt",
        "altitude",
        "h",
        "ellipsoidalheight",
        "ellht",
        "gpsheight",
        "gpsht",
        "ht",
        "gpsalt",
        "orthometricheight",
        "dem",
        "heightm",
        "elevm",
        "heightmetres",
    ]) {
        Role::Elevation
    } else if is(&[
        "line",
        "lineno",
        "linenumber",
        "flightline",
        "ln",
        "linename",
        "lineid",
        "traverse",
    ]) {
        Role::Line
    } else if is(&[
        "station",
        "stn",
        "sta",
        "stationid",
        "fid",
        "fiducial",
        "point",
        "pt",
        "stationno",
        "stationnumber",
        "id",
    ]) {
        Role::Station
    } else if is(&["datetime", "timestamp", "utcdatetime", "isotime"]) {
        Role::DateTime
    } else if is(&["date", "utcdate", "surveydate", "day"]) {
        Role::Date
    } else if time_format_hint(name).is_some()
        && ["time", "t", "elapsed"]
            .iter()
            .any(|w| full.starts_with(w) && full.len() <= w.len() + 7)
    {
        // "time_minutes", "t[h]", "elapsed_s".
        Role::Time
    } else if is(&[
        "time",
        "utc",
        "utctime",
        "gpstime",
        "timeutc",
        "clock",
        "hms",
        "localtime",
    ]) {
        Role::Time
    } else if is(&["basegrav", "basegravity", "basereading", "basemgal"]) {
        Role::BaseGravity
    } else if is(&[
        "basemag",
        "basemagnetic",
        "basent",
        "basefield",
        "diurnal",
        "basestation",
    ]) {
        Role::BaseMagnetic
    } else if is(&[
        "grav",
        "gravity",
        "g",
        "obsgrav",
        "gobs",
        "observedgravity",
        "reading",
        "dial",
        "gravreading",
        "meterreading",
        "gravmgal",
        "absgrav",
    ]) {
        Role::Gravity
    } else if is(&[
        "mag",
        "tmi",
        "totalfield",
        "magnetic",
        "magnetics",
        "field",
        "rawmag",
        "magraw",
        "tf",
        "bfield",
        "magnt",
        "tmint",
    ]) || starts(&["mag"]) && numeric
    {
        Role::Magnetic
    } else {
        Role::PassThrough
    }
}

/// How a time column's header says its values are written: a unit of
/// elapsed time (`time_minutes`, `t[h]`, `elapsed_s`), or nothing.
pub fn time_format_hint(name: &str) -> Option<crate::time::TimeFormat> {
    use crate::time::TimeFormat;
    let lower = name.to_lowercase();
    let tokens: Vec<&str> = lower
        .split(|c: char| !c.is_alphanumeric())
        .filter(|t| !t.is_empty())
        .collect();
    let has = |w: &[&str]| tokens.iter().any(|t| w.contains(t));
    if has(&["min", "mins", "minute", "minutes"]) {
        Some(TimeFormat::ElapsedMinutes)
    } else if has(&["h", "hr", "hrs", "hour", "hours"]) {
        Some(TimeFormat::ElapsedHours)
    } else if has(&["s", "sec", "secs", "second", "seconds"]) && has(&["elapsed", "t", "time"]) {
        Some(TimeFormat::ElapsedSeconds)
    } else {
        None
    }
}

/// A full guess: role and unit (from the header hint where it fits the role).
pub fn guess_column(name: &str, numeric: bool) -> ColumnSpec {
    let role = guess_role(name, numeric);
    let allowed = role.units();
    let unit = match unit_hint(name) {
        Some(u) if allowed.contains(&u) => u,
        _ => allowed[0],
    };
    ColumnSpec {
        name: name.to_string(),
        role,
        unit,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn common_spellings_are_recognised() {
        let cases = [
            ("Easting", Role::Easting),
            ("X", Role::Easting),
            ("NORTHING", Role::Northing),
            ("Lat", Role::Latitude),
            ("Longitude", Role::Longitude),
            ("ELEV_FT", Role::Elevation),
            ("Height (m)", Role::Elevation),
            ("RADALT", Role::HeightAboveGround),
            ("Line", Role::Line),
            ("FID", Role::Station),
            ("Date", Role::Date),
            ("UTC_time", Role::Time),
            ("Grav_mGal", Role::Gravity),
            ("TMI", Role::Magnetic),
            ("Mag_raw", Role::Magnetic),
            ("base_mag", Role::BaseMagnetic),
            ("Operator", Role::PassThrough),
        ];
        for (name, role) in cases {
            assert_eq!(guess_role(name, true), role, "{name}");
        }
    }

    #[test]
    fn units_come_from_the_header_when_they_fit_the_role() {
        assert_eq!(guess_column("ELEV_FT", true).unit, Unit::Foot);
        assert_eq!(guess_column("Elevation (m)", true).unit, Unit::Metre);
        assert_eq!(
            guess_column("grav_gu", true).unit,
            Unit::MicrometrePerSecond2
        );
        assert_eq!(guess_column("Gravity", true).unit, Unit::Mgal);
        assert_eq!(guess_column("TMI (nT)", true).unit, Unit::Nanotesla);
        // A feet hint on a magnetic column does not fit and is ignored.
        assert_eq!(guess_column("mag_ft", true).unit, Unit::Nanotesla);
    }

    #[test]
    fn keys_name_every_role_once_and_parse_back() {
        let mut seen = std::collections::BTreeSet::new();
        for r in Role::ALL {
            assert!(seen.insert(r.key()), "{}", r.key());
            assert_eq!(Role::from_key(r.key()), Some(r));
        }
        assert_eq!(Role::from_key("LAT"), Some(Role::Latitude));
        assert_eq!(Role::from_key("reading"), None);
        assert_eq!(Unit::parse("mGal"), Some(Unit::Mgal));
        assert_eq!(Unit::parse("ft"), Some(Unit::Foot));
        assert_eq!(Unit::parse("furlong"), None);
        for u in [
            Unit::None,
            Unit::Metre,
            Unit::Foot,
            Unit::UsSurveyFoot,
            Unit::Mgal,
            Unit::MicrometrePerSecond2,
            Unit::Nanotesla,
            Unit::Degree,
        ] {
            assert_eq!(Unit::parse(u.key()), Some(u));
        }
    }

    #[test]
    fn time_headers_name_their_units() {
        use crate::time::TimeFormat;
        assert_eq!(
            time_format_hint("time_minutes"),
            Some(TimeFormat::ElapsedMinutes)
        );
        assert_eq!(time_format_hint("t[h]"), Some(TimeFormat::ElapsedHours));
        assert_eq!(
            time_format_hint("elapsed_s"),
            Some(TimeFormat::ElapsedSeconds)
        );
        assert_eq!(time_format_hint("UTC_time"), None);
        assert_eq!(guess_role("time_minutes", true), Role::Time);
        assert_eq!(guess_role("t[h]", true), Role::Time);
    }

    #[test]
    fn factors_are_exact_definitions() {
        // International foot (1959 agreement): 0.3048 m; US survey foot 1200/3937 m;
        // 1 g.u. = 1 µm/s² = 0.1 mGal (1 mGal = 10 µm/s²).
        assert_eq!(Unit::Foot.factor(), 0.3048);
        assert!((Unit::UsSurveyFoot.factor() - 0.304_800_609_6).abs() < 1e-10);
        assert_eq!(Unit::MicrometrePerSecond2.factor(), 0.1);
    }
}
