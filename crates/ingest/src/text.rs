//! Turning an export's bytes into text: encodings, byte-order marks, binary junk.

use crate::error::{IngestError, RejectKind};
use std::borrow::Cow;
use twistlot_model::plugin::TextEncoding;

const BOM: &[u8] = b"\xEF\xBB\xBF";
/// How many leading bytes are inspected to tell text from binary.
const SNIFF_BYTES: usize = 8192;
/// How many leading bytes are counted for control characters.
const CONTROL_SAMPLE_BYTES: usize = 2048;

/// Refuses empty files and binary content before any plugin looks at them.
pub fn check_text_like(file: &str, bytes: &[u8]) -> Result<(), IngestError> {
    let body = bytes.strip_prefix(BOM).unwrap_or(bytes);
    if body.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(IngestError::file(RejectKind::Empty, file, "the file is empty"));
    }
    let head = &body[..body.len().min(SNIFF_BYTES)];
    // Text exports have no NUL at all; other control bytes are counted over a shorter stretch.
    let sample = &head[..head.len().min(CONTROL_SAMPLE_BYTES)];
    let control = sample.iter().filter(|&&b| b < 0x20 && !matches!(b, b'\t' | b'\n' | b'\r' | 0x0c)).count();
    if memchr::memchr(0, head).is_some() || control * 20 > sample.len() {
        return Err(IngestError::file(
            RejectKind::Binary,
            file,
            "the file holds binary data, not a text export (is it the rig's raw data file?)",
        ));
    }
    Ok(())
}

/// The first `lines` lines (at most 8 KiB) as text, for format detection (lossy:
/// signatures are ASCII, and a Windows-1252 byte must not hide them).
pub fn head_text(bytes: &[u8], lines: usize) -> Cow<'_, str> {
    let body = bytes.strip_prefix(BOM).unwrap_or(bytes);
    let body = &body[..body.len().min(SNIFF_BYTES)];
    let end = memchr::memchr_iter(b'\n', body).nth(lines).map(|p| p + 1).unwrap_or(body.len());
    String::from_utf8_lossy(&body[..end])
}

/// Decodes the whole file in the layout's encoding.
pub fn decode<'a>(file: &str, bytes: &'a [u8], encoding: TextEncoding) -> Result<Cow<'a, str>, IngestError> {
    match encoding {
        TextEncoding::Utf8 => {
            let body = bytes.strip_prefix(BOM).unwrap_or(bytes);
            match std::str::from_utf8(body) {
                Ok(text) => Ok(Cow::Borrowed(text)),
                Err(err) => {
                    let offset = err.valid_up_to();
                    let line = body[..offset].iter().filter(|&&b| b == b'\n').count() + 1;
                    Err(IngestError {
                        kind: RejectKind::Encoding,
                        file: file.to_string(),
                        line: Some(line),
                        column: None,
                        rig_format: None,
                        message: format!(
                            "byte 0x{:02X} at offset {offset} is not UTF-8 (the layout says UTF-8; was the file saved as Windows-1252?)",
                            body[offset]
                        ),
                    })
                }
            }
        }
        TextEncoding::Windows1252 => {
            if bytes.is_ascii() {
                // ASCII is the same in both; skip the copy.
                return Ok(Cow::Borrowed(std::str::from_utf8(bytes).unwrap_or_default()));
            }
            let (text, _) = encoding_rs::WINDOWS_1252.decode_without_bom_handling(bytes);
            Ok(text)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bom_is_stripped_and_windows_1252_decoded() {
        let text = decode("a", b"\xEF\xBB\xBFangle", TextEncoding::Utf8).unwrap();
        assert_eq!(text, "angle");
        let text = decode("a", b"Pr\xfcfer: M\xfcller", TextEncoding::Windows1252).unwrap();
        assert_eq!(text, "Prüfer: Müller");
    }

    #[test]
    fn bad_utf8_names_the_line() {
        let err = decode("a.csv", b"x\ny\nM\xfcller\n", TextEncoding::Utf8).unwrap_err();
        assert_eq!(err.kind, RejectKind::Encoding);
        assert_eq!(err.line, Some(3));
    }

    #[test]
    fn empty_and_binary_are_refused() {
        assert_eq!(check_text_like("a", b"").unwrap_err().kind, RejectKind::Empty);
        assert_eq!(check_text_like("a", b" \r\n\n").unwrap_err().kind, RejectKind::Empty);
        let junk: Vec<u8> = (0..=255u8).cycle().take(4000).collect();
        assert_eq!(check_text_like("a", &junk).unwrap_err().kind, RejectKind::Binary);
        assert!(check_text_like("a", b"angle_deg,torque_nmm\r\n1,2\r\n").is_ok());
    }
}
