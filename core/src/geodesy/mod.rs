//! Ellipsoids, map projections and coordinate references.
//!
//! * [`ellipsoid`]: GRS80 and WGS 84 defining constants.
//! * [`tm`]: the transverse Mercator projection by Krüger's series to order
//!   n⁶ (Karney 2011), accurate to well under a millimetre within UTM zones.
//! * [`crs`]: the EPSG codes Fieldstone knows (geographic and UTM/MGA on
//!   WGS 84, NAD83, GDA94, GDA2020 and ETRS89) and conversion between
//!   projected and geographic coordinates.

pub mod crs;
pub mod ellipsoid;
pub mod igrf;
pub mod normal_gravity;
pub mod tm;
pub mod wkt;
