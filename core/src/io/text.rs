//! Small helpers for reading text files written on any platform.

/// Strips a UTF-8 byte-order mark, if present.
pub fn strip_bom(bytes: &[u8]) -> &[u8] {
    bytes.strip_prefix(&[0xEF, 0xBB, 0xBF]).unwrap_or(bytes)
}

/// Decodes a header or field for messages and names: UTF-8 when valid,
/// otherwise Windows-1252 (the usual encoding of text exported on field
/// laptops), so that no header makes a reader fail.
pub fn decode_lossless_enough(bytes: &[u8]) -> String {
    match std::str::from_utf8(bytes) {
        Ok(s) => s.to_string(),
        Err(_) => bytes.iter().map(|&b| windows_1252_char(b)).collect(),
    }
}

/// One Windows-1252 byte as a char (0x80–0x9F mapped per the code page;
/// the five undefined bytes become U+FFFD).
fn windows_1252_char(b: u8) -> char {
    const HIGH: [u32; 32] = [
        0x20AC, 0xFFFD, 0x201A, 0x0192, 0x201E, 0x2026, 0x2020, 0x2021, 0x02C6, 0x2030, 0x0160,
        0x2039, 0x0152, 0xFFFD, 0x017D, 0xFFFD, 0xFFFD, 0x2018, 0x2019, 0x201C, 0x201D, 0x2022,
        0x2013, 0x2014, 0x02DC, 0x2122, 0x0161, 0x203A, 0x0153, 0xFFFD, 0x017E, 0x0178,
    ];
    match b {
        0x80..=0x9F => char::from_u32(HIGH[(b - 0x80) as usize]).unwrap_or('\u{FFFD}'),
        _ => b as char,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bom_is_stripped_once() {
        assert_eq!(strip_bom(b"\xEF\xBB\xBFx,y"), b"x,y");
        assert_eq!(strip_bom(b"x,y"), b"x,y");
    }

    #[test]
    fn windows_1252_headers_decode() {
        // "Höhe" in Windows-1252, and the euro sign at 0x80 (code page table).
        assert_eq!(decode_lossless_enough(b"H\xF6he"), "Höhe");
        assert_eq!(decode_lossless_enough(b"\x80"), "€");
        assert_eq!(decode_lossless_enough("µGal".as_bytes()), "µGal");
    }
}
