//! Bytes of a layout file → text, as the page reads a dropped or opened
//! file: UTF-8 with or without a byte order mark, or UTF-16 (either byte
//! order) announced by its byte order mark.

use crate::error::InputError;

/// Largest layout file read, bytes (16 MiB; the page has the same cap).
pub const MAX_LAYOUT_BYTES: u64 = 16 << 20;

/// Decodes a layout file. A UTF-8 byte order mark (EF BB BF) is dropped;
/// FF FE and FE FF mark UTF-16 little- and big-endian text. Anything else
/// must be UTF-8. Errors have an empty field (the whole file).
pub fn decode_layout_bytes(bytes: &[u8]) -> Result<String, InputError> {
    let utf16 = |rest: &[u8], unit: fn([u8; 2]) -> u16, order: &str| {
        if !rest.len().is_multiple_of(2) {
            return Err(InputError::new("", format!("UTF-16 ({order}) text with an odd number of bytes")));
        }
        let units: Vec<u16> = rest.chunks_exact(2).map(|c| unit([c[0], c[1]])).collect();
        String::from_utf16(&units).map_err(|_| InputError::new("", format!("not valid UTF-16 ({order}) text")))
    };
    match bytes {
        [0xef, 0xbb, 0xbf, rest @ ..] => utf8(rest),
        [0xff, 0xfe, rest @ ..] => utf16(rest, u16::from_le_bytes, "little-endian"),
        [0xfe, 0xff, rest @ ..] => utf16(rest, u16::from_be_bytes, "big-endian"),
        _ => utf8(bytes),
    }
}

fn utf8(bytes: &[u8]) -> Result<String, InputError> {
    String::from_utf8(bytes.to_vec())
        .map_err(|_| InputError::new("", "not UTF-8 text (UTF-16 needs its byte order mark)"))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Byte order marks as the Unicode Standard (ch. 23.8, U+FEFF) and the
    // WHATWG Encoding Standard's BOM sniffing define them.
    #[test]
    fn boms_and_encodings() {
        assert_eq!(decode_layout_bytes(b"{}").unwrap(), "{}");
        assert_eq!(decode_layout_bytes(b"\xef\xbb\xbf{}").unwrap(), "{}");
        let le: Vec<u8> = [0xff, 0xfe].into_iter().chain("{\"µ\"}".encode_utf16().flat_map(u16::to_le_bytes)).collect();
        assert_eq!(decode_layout_bytes(&le).unwrap(), "{\"µ\"}");
        let be: Vec<u8> = [0xfe, 0xff].into_iter().chain("{}".encode_utf16().flat_map(u16::to_be_bytes)).collect();
        assert_eq!(decode_layout_bytes(&be).unwrap(), "{}");
        assert!(decode_layout_bytes(b"\xff\xfe{").is_err());
        assert!(decode_layout_bytes(b"\xff\xfe\x00\xd8").is_err(), "lone surrogate");
        assert!(decode_layout_bytes(b"\xc3(").is_err());
    }
}
