//! The report logo: read through the study's files and checked to be an image typst embeds.

use super::*;

/// Largest logo accepted (bytes).
pub const MAX_LOGO_BYTES: u64 = 2 * 1024 * 1024;

/// Reads a logo through `files` and checks that it is a regular file of at most
/// [`MAX_LOGO_BYTES`] whose first bytes are a PNG or JPEG signature or SVG markup, the formats
/// typst embeds; `Err` says what is wrong. The bytes read here are the ones the report embeds,
/// so a logo changed between check and typesetting cannot slip through unchecked.
pub fn read_logo(files: &dyn crate::files::Files, path: &Path) -> Result<Vec<u8>, String> {
    use crate::files::ReadError;
    let bytes = files.read(path, MAX_LOGO_BYTES).map_err(|e| match e {
        ReadError::Folder | ReadError::NotRegular => {
            "is not a regular file (a folder, pipe or device)".to_string()
        }
        ReadError::TooLarge {
            size: Some(size), ..
        } => format!("is {size} bytes"),
        ReadError::TooLarge { size: None, limit } => format!("is more than {limit} bytes"),
        _ => "cannot be read".to_string(),
    })?;
    if image_kind(&bytes[..bytes.len().min(512)]).is_none() {
        return Err("is not a PNG, JPEG or SVG image (judged by its first bytes)".into());
    }
    Ok(bytes)
}

/// The image format of a file from its first bytes: PNG (RFC 2083 signature), JPEG (SOI
/// marker FF D8 FF) or SVG (XML or `<svg` text; common practice).
pub fn image_kind(head: &[u8]) -> Option<&'static str> {
    if head.starts_with(b"\x89PNG\r\n\x1a\n") {
        return Some("png");
    }
    if head.starts_with(&[0xFF, 0xD8, 0xFF]) {
        return Some("jpeg");
    }
    let text = String::from_utf8_lossy(head);
    let text = text.trim_start_matches('\u{feff}').trim_start();
    if text.starts_with("<svg")
        || (text.starts_with("<?xml") || text.starts_with("<!--")) && text.contains("<svg")
    {
        return Some("svg");
    }
    None
}
