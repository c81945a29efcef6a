//! Well-known text (WKT) of coordinate references, as found in `.prj`
//! files beside grids and shapefiles: only the EPSG code of the whole
//! reference is read.

/// The EPSG code a WKT names for its whole reference: the
/// `AUTHORITY["EPSG","n"]` (WKT 1) or `ID["EPSG",n]` (WKT 2) directly inside
/// the root element; None when the root names none (an authority of a
/// unit or datum inside is not the reference's).
pub fn epsg_of_wkt(wkt: &str) -> Option<u32> {
    let upper = wkt.to_ascii_uppercase();
    let b = upper.as_bytes();
    let mut depth = 0usize;
    let mut in_quote = false;
    for i in 0..b.len() {
        match b[i] {
            b'"' => in_quote = !in_quote,
            b'[' | b'(' if !in_quote => depth += 1,
            b']' | b')' if !in_quote => depth = depth.saturating_sub(1),
            _ if !in_quote && depth == 1 => {
                for key in ["AUTHORITY[", "ID["] {
                    let starts_word = i == 0 || !b[i - 1].is_ascii_alphanumeric();
                    if starts_word && upper[i..].starts_with(key) {
                        let body: String = upper[i + key.len()..]
                            .chars()
                            .take_while(|c| *c != ']')
                            .collect();
                        let parts: Vec<&str> = body
                            .split(',')
                            .map(|p| p.trim().trim_matches('"'))
                            .collect();
                        if parts.len() >= 2 && parts[0] == "EPSG" {
                            return parts[1].parse::<u32>().ok();
                        }
                    }
                }
            }
            _ => {}
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_reference_is_the_root_authority_of_the_wkt() {
        let wkt = r#"PROJCS["WGS 84 / UTM zone 17N",GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563,AUTHORITY["EPSG","7030"]],AUTHORITY["EPSG","6326"]],AUTHORITY["EPSG","4326"]],PROJECTION["Transverse_Mercator"],UNIT["metre",1,AUTHORITY["EPSG","9001"]],AUTHORITY["EPSG","32617"]]"#;
        assert_eq!(epsg_of_wkt(wkt), Some(32617));
        assert_eq!(epsg_of_wkt(r#"PROJCRS["x",ID["EPSG",28354]]"#), Some(28354));
        assert_eq!(epsg_of_wkt("PROJCS[\"local\"]"), None);
        // Only a unit's authority: the reference is not known.
        assert_eq!(
            epsg_of_wkt(r#"PROJCS["local",UNIT["metre",1,AUTHORITY["EPSG","9001"]]]"#),
            None
        );
    }
}
