//! Coordinate references by EPSG code.
//!
//! Known codes (EPSG Geodetic Parameter Dataset definitions; common practice
//! for survey data):
//!
//! | code | reference |
//! |---|---|
//! | 4326, 4269, 4283, 7844, 4258 | geographic WGS 84, NAD83, GDA94, GDA2020, ETRS89 |
//! | 32601–32660 / 32701–32760 | WGS 84 / UTM zones 1–60 north / south |
//! | 26901–26923 | NAD83 / UTM zones 1–23 north |
//! | 28348–28358 | GDA94 / MGA zones 48–58 (south) |
//! | 7846–7859 | GDA2020 / MGA zones 46–59 (south) |
//! | 25828–25838 | ETRS89 / UTM zones 28–38 north |
//!
//! Datum shifts between these references (up to a couple of metres between
//! WGS 84 and the plate-fixed datums) are not applied: a survey stays in the
//! datum it was delivered in, and normal gravity and the main field, which
//! vary over kilometres, are insensitive to them.

use super::ellipsoid::{Ellipsoid, GRS80, WGS84};
use super::tm::TransverseMercator;
use serde::{Deserialize, Serialize};
use thiserror::Error;

/// A coordinate reference Fieldstone can use.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Crs {
    Geographic {
        epsg: u32,
        datum: &'static str,
        ellipsoid: Ellipsoid,
    },
    Utm {
        epsg: u32,
        datum: &'static str,
        zone: u32,
        south: bool,
        ellipsoid: Ellipsoid,
    },
}

/// The EPSG code as stored in a project.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(transparent)]
pub struct Epsg(pub u32);

#[derive(Debug, Error, PartialEq)]
pub enum CrsError {
    #[error("EPSG:{0} is not a coordinate reference Fieldstone knows; use geographic 4326, 4269, 4283, 7844 or 4258, or a UTM/MGA code: WGS 84 326zz/327zz, NAD83 269zz, GDA94 283zz, GDA2020 78zz, ETRS89 258zz")]
    Unknown(u32),
    #[error("latitude {0}° is outside −90° to 90° (are latitude and longitude swapped?)")]
    LatitudeRange(f64),
    #[error("longitude {0}° is outside −360° to 360°")]
    LongitudeRange(f64),
    #[error("{lat}°, {lon}° lies {off_deg:.1}° of longitude from the central meridian of UTM zone {zone}; coordinates that far out are outside the zone's useful range (more than 10°)")]
    OutsideZone {
        lat: f64,
        lon: f64,
        zone: u32,
        off_deg: f64,
    },
    #[error("coordinate is not a finite number")]
    NotFinite,
}

impl Crs {
    /// Looks up an EPSG code.
    pub fn from_epsg(code: u32) -> Result<Crs, CrsError> {
        let utm = |datum, zone, south, ellipsoid| {
            Ok(Crs::Utm {
                epsg: code,
                datum,
                zone,
                south,
                ellipsoid,
            })
        };
        match code {
            4326 => Ok(Crs::Geographic {
                epsg: code,
                datum: "WGS 84",
                ellipsoid: WGS84,
            }),
            4269 => Ok(Crs::Geographic {
                epsg: code,
                datum: "NAD83",
                ellipsoid: GRS80,
            }),
            4283 => Ok(Crs::Geographic {
                epsg: code,
                datum: "GDA94",
                ellipsoid: GRS80,
            }),
            7844 => Ok(Crs::Geographic {
                epsg: code,
                datum: "GDA2020",
                ellipsoid: GRS80,
            }),
            4258 => Ok(Crs::Geographic {
                epsg: code,
                datum: "ETRS89",
                ellipsoid: GRS80,
            }),
            32601..=32660 => utm("WGS 84", code - 32600, false, WGS84),
            32701..=32760 => utm("WGS 84", code - 32700, true, WGS84),
            26901..=26923 => utm("NAD83", code - 26900, false, GRS80),
            28348..=28358 => utm("GDA94", code - 28300, true, GRS80),
            7846..=7859 => utm("GDA2020", code - 7800, true, GRS80),
            25828..=25838 => utm("ETRS89", code - 25800, false, GRS80),
            _ => Err(CrsError::Unknown(code)),
        }
    }

    pub fn epsg(&self) -> u32 {
        match self {
            Crs::Geographic { epsg, .. } | Crs::Utm { epsg, .. } => *epsg,
        }
    }

    pub fn is_geographic(&self) -> bool {
        matches!(self, Crs::Geographic { .. })
    }

    pub fn ellipsoid(&self) -> Ellipsoid {
        match self {
            Crs::Geographic { ellipsoid, .. } | Crs::Utm { ellipsoid, .. } => *ellipsoid,
        }
    }

    /// A readable name, e.g. "GDA2020 / MGA zone 55 (EPSG:7855)".
    pub fn name(&self) -> String {
        match self {
            Crs::Geographic { epsg, datum, .. } => format!("{datum} geographic (EPSG:{epsg})"),
            Crs::Utm {
                epsg,
                datum,
                zone,
                south,
                ..
            } => {
                let kind = if datum.starts_with("GDA") {
                    "MGA zone"
                } else {
                    "UTM zone"
                };
                let hemi = if *south && !datum.starts_with("GDA") {
                    "S"
                } else if datum.starts_with("GDA") {
                    ""
                } else {
                    "N"
                };
                format!("{datum} / {kind} {zone}{hemi} (EPSG:{epsg})")
            }
        }
    }

    fn projection(&self) -> Option<TransverseMercator> {
        match self {
            Crs::Utm {
                zone,
                south,
                ellipsoid,
                ..
            } => {
                let lon0 = -183.0 + 6.0 * *zone as f64;
                Some(TransverseMercator::new(
                    *ellipsoid,
                    lon0,
                    0.9996,
                    500_000.0,
                    if *south { 10_000_000.0 } else { 0.0 },
                ))
            }
            Crs::Geographic { .. } => None,
        }
    }

    /// Projected (easting, northing) from latitude and longitude, degrees. For a
    /// geographic reference returns (longitude, latitude) unchanged.
    pub fn project(&self, lat_deg: f64, lon_deg: f64) -> Result<(f64, f64), CrsError> {
        check_geographic(lat_deg, lon_deg)?;
        match self.projection() {
            None => Ok((lon_deg, lat_deg)),
            Some(tm) => {
                let off = ((lon_deg - tm.lon0_deg + 540.0).rem_euclid(360.0) - 180.0).abs();
                if off > 10.0 {
                    if let Crs::Utm { zone, .. } = self {
                        return Err(CrsError::OutsideZone {
                            lat: lat_deg,
                            lon: lon_deg,
                            zone: *zone,
                            off_deg: off,
                        });
                    }
                }
                Ok(tm.forward(lat_deg, lon_deg))
            }
        }
    }

    /// Latitude and longitude (degrees) from projected coordinates; for a
    /// geographic reference `x` is longitude and `y` latitude.
    pub fn unproject(&self, x: f64, y: f64) -> Result<(f64, f64), CrsError> {
        if !x.is_finite() || !y.is_finite() {
            return Err(CrsError::NotFinite);
        }
        match self.projection() {
            None => {
                check_geographic(y, x)?;
                Ok((y, x))
            }
            Some(tm) => {
                let (lat, lon) = tm.inverse(x, y);
                Ok((lat, (lon + 540.0).rem_euclid(360.0) - 180.0))
            }
        }
    }
}

fn check_geographic(lat: f64, lon: f64) -> Result<(), CrsError> {
    if !lat.is_finite() || !lon.is_finite() {
        return Err(CrsError::NotFinite);
    }
    if !(-90.0..=90.0).contains(&lat) {
        return Err(CrsError::LatitudeRange(lat));
    }
    if !(-360.0..=360.0).contains(&lon) {
        return Err(CrsError::LongitudeRange(lon));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn known_codes_resolve_and_unknown_are_refused() {
        assert!(matches!(
            Crs::from_epsg(32755),
            Ok(Crs::Utm {
                zone: 55,
                south: true,
                ..
            })
        ));
        assert!(matches!(
            Crs::from_epsg(26911),
            Ok(Crs::Utm {
                zone: 11,
                south: false,
                ..
            })
        ));
        assert!(matches!(
            Crs::from_epsg(7855),
            Ok(Crs::Utm {
                zone: 55,
                south: true,
                ..
            })
        ));
        assert_eq!(
            Crs::from_epsg(28350).unwrap().name(),
            "GDA94 / MGA zone 50 (EPSG:28350)"
        );
        assert_eq!(
            Crs::from_epsg(32633).unwrap().name(),
            "WGS 84 / UTM zone 33N (EPSG:32633)"
        );
        let e = Crs::from_epsg(2193).unwrap_err();
        assert!(e.to_string().contains("EPSG:2193"));
    }

    #[test]
    fn out_of_range_latitudes_are_refused_with_a_hint() {
        let c = Crs::from_epsg(32610).unwrap();
        let e = c.project(123.0, 45.0).unwrap_err();
        assert!(e.to_string().contains("swapped"), "{e}");
        assert!(c.project(45.0, 10.0).is_err(), "far outside zone 10");
    }
}
