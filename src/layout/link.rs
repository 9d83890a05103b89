//! Share links: `#L=` + base64url (no padding) of raw DEFLATE of the
//! minified layout JSON. Decoding is pure data and bounded in size.

use super::{parse_layout, Layout};
use crate::error::{printable, InputError};
use base64::engine::general_purpose::URL_SAFE_NO_PAD;
use base64::Engine as _;

/// Fragment prefix of a share link.
pub const LINK_PREFIX: &str = "#L=";
/// Largest inflated layout a link may carry (bytes); protects against
/// decompression bombs.
pub const MAX_LINK_LAYOUT_BYTES: usize = 4 << 20;

/// Encodes a layout as a URL fragment, prefix included. A layout whose
/// JSON is longer than [`MAX_LINK_LAYOUT_BYTES`] gives a link that
/// [`decode_link`] refuses; [`checked_link`] refuses it up front.
pub fn encode_link(layout: &Layout) -> String {
    pack(&layout.to_json_compact())
}

/// [`encode_link`], refusing what [`decode_link`] would refuse: a layout
/// whose minified JSON unpacks past [`MAX_LINK_LAYOUT_BYTES`].
pub fn checked_link(layout: &Layout) -> Result<String, InputError> {
    let json = layout.to_json_compact();
    if json.len() > MAX_LINK_LAYOUT_BYTES {
        return Err(InputError::new(
            "link",
            format!(
                "the layout is {} bytes as minified JSON; a link carries at most {} MiB (save it as a file instead)",
                json.len(),
                MAX_LINK_LAYOUT_BYTES >> 20
            ),
        ));
    }
    Ok(pack(&json))
}

fn pack(json: &str) -> String {
    let packed = miniz_oxide::deflate::compress_to_vec(json.as_bytes(), 9);
    format!("{LINK_PREFIX}{}", URL_SAFE_NO_PAD.encode(packed))
}

/// Decodes a fragment (with or without `#L=`, or a whole URL) into a
/// validated layout.
pub fn decode_link(text: &str) -> Result<Layout, InputError> {
    let t = text.trim();
    let body = match t.find(LINK_PREFIX) {
        Some(i) => &t[i + LINK_PREFIX.len()..],
        None => t.strip_prefix("L=").unwrap_or(t),
    };
    if body.is_empty() {
        return Err(InputError::new("link", "is empty; expected #L= followed by the packed layout"));
    }
    let packed = URL_SAFE_NO_PAD
        .decode(body.as_bytes())
        .map_err(|e| InputError::new("link", match e {
            base64::DecodeError::InvalidByte(at, b) => format!(
                "has a character that cannot be in a link ({} at position {}); copy the whole link again",
                printable(&char::from(b).to_string()),
                at + 1 + t.len() - body.len()
            ),
            base64::DecodeError::InvalidLength(_) | base64::DecodeError::InvalidLastSymbol(..) => {
                "is cut short or has extra characters at its end; copy the whole link again".to_string()
            }
            base64::DecodeError::InvalidPadding => "has padding a link never has; copy the whole link again".to_string(),
        }))?;
    let json = miniz_oxide::inflate::decompress_to_vec_with_limit(&packed, MAX_LINK_LAYOUT_BYTES)
        .map_err(|_| InputError::new("link", "is damaged: its compressed data does not unpack (or unpacks past 4 MiB)"))?;
    let json = String::from_utf8(json).map_err(|_| InputError::new("link", "does not unpack to UTF-8 text"))?;
    parse_layout(&json).map_err(|e| InputError::new(
        if e.field.is_empty() { "link".to_string() } else { format!("link: {}", e.field) },
        e.message,
    ))
}

