//! Text handling shared by every reader of user files: what encoding a file is in, and how much
//! of an offending piece of text an error message may quote.
//!
//! Readers decode with [`decode_utf8`] so a UTF-16 or UTF-32 file is named as such instead of
//! failing later with a puzzling message, and a UTF-8 byte-order mark is dropped. Messages quote
//! user text through [`excerpt`] (at most [`EXCERPT_CHARS`] characters), so a one-line 10 MB
//! token never ends up whole on a terminal.

use std::borrow::Cow;

/// Most characters of user text an error message quotes.
pub const EXCERPT_CHARS: usize = 80;

/// `text` quoted for an error message: Rust-escaped and in double quotes like `{:?}`, cut to
/// [`EXCERPT_CHARS`] characters with the number of characters left out.
pub fn excerpt(text: &str) -> String {
    let total = text.chars().count();
    if total <= EXCERPT_CHARS {
        return format!("{text:?}");
    }
    let head: String = text.chars().take(EXCERPT_CHARS).collect();
    format!("{head:?}… ({} more characters)", total - EXCERPT_CHARS)
}

/// `message` with every quoted run (between `"` or `` ` ``) longer than [`EXCERPT_CHARS`]
/// characters shortened, for messages built by other libraries (serde's, say) that quote user
/// text whole.
pub fn shorten_quotes(message: &str) -> Cow<'_, str> {
    if message.chars().count() <= 2 * EXCERPT_CHARS {
        return Cow::Borrowed(message);
    }
    let mut out = String::with_capacity(4 * EXCERPT_CHARS);
    let mut quote: Option<char> = None;
    let mut run = 0usize;
    let mut dropped = 0usize;
    for ch in message.chars() {
        match quote {
            Some(q) if ch == q => {
                if dropped > 0 {
                    out.push_str(&format!("… ({dropped} more characters)"));
                }
                out.push(ch);
                quote = None;
                dropped = 0;
            }
            Some(_) => {
                run += 1;
                if run <= EXCERPT_CHARS {
                    out.push(ch);
                } else {
                    dropped += 1;
                }
            }
            None => {
                if ch == '"' || ch == '`' {
                    quote = Some(ch);
                    run = 0;
                }
                out.push(ch);
            }
        }
    }
    if dropped > 0 {
        out.push_str(&format!("… ({dropped} more characters)"));
    }
    Cow::Owned(out)
}

/// A text encoding Spinfall does not read, recognised by its byte-order mark or its zero bytes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ForeignEncoding {
    /// UTF-16, little endian.
    Utf16Le,
    /// UTF-16, big endian.
    Utf16Be,
    /// UTF-32, little endian.
    Utf32Le,
    /// UTF-32, big endian.
    Utf32Be,
}

impl std::fmt::Display for ForeignEncoding {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            ForeignEncoding::Utf16Le => "UTF-16 (little endian)",
            ForeignEncoding::Utf16Be => "UTF-16 (big endian)",
            ForeignEncoding::Utf32Le => "UTF-32 (little endian)",
            ForeignEncoding::Utf32Be => "UTF-32 (big endian)",
        })
    }
}

/// The encoding of `bytes` when it is one Spinfall refuses: a UTF-16/UTF-32 byte-order mark, or
/// (without one) the zero bytes every other byte that ASCII text in UTF-16 has.
pub fn foreign_encoding(bytes: &[u8]) -> Option<ForeignEncoding> {
    match bytes {
        [0xFF, 0xFE, 0, 0, ..] => return Some(ForeignEncoding::Utf32Le),
        [0, 0, 0xFE, 0xFF, ..] => return Some(ForeignEncoding::Utf32Be),
        [0xFF, 0xFE, ..] => return Some(ForeignEncoding::Utf16Le),
        [0xFE, 0xFF, ..] => return Some(ForeignEncoding::Utf16Be),
        _ => {}
    }
    // No mark: look at the first few hundred bytes. ASCII text in UTF-16 has a zero in every
    // other byte; UTF-8 text never has zero bytes.
    let head = &bytes[..bytes.len().min(512)];
    if head.len() < 4 {
        return None;
    }
    let zeros_at = |parity: usize| {
        head.iter()
            .enumerate()
            .filter(|(i, b)| i % 2 == parity && **b == 0)
            .count()
    };
    let half = head.len() / 2;
    let (even, odd) = (zeros_at(0), zeros_at(1));
    if odd * 10 >= half * 8 && even * 10 < half * 2 {
        Some(ForeignEncoding::Utf16Le)
    } else if even * 10 >= half * 8 && odd * 10 < half * 2 {
        Some(ForeignEncoding::Utf16Be)
    } else {
        None
    }
}

/// Why [`decode_utf8`] refused a text.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum EncodingError {
    /// The text is in an encoding Spinfall does not read.
    #[error("the file is encoded as {0}; save it as UTF-8 (or plain ASCII) and try again")]
    Foreign(ForeignEncoding),
    /// The bytes are not UTF-8.
    #[error(
        "the file is not UTF-8 text (invalid byte at offset {offset}, line {line}); save it as \
         UTF-8"
    )]
    NotUtf8 {
        /// Byte offset of the first invalid byte.
        offset: usize,
        /// 1-based line of that byte.
        line: usize,
    },
}

/// How [`decode_utf8`] treats bytes that are not UTF-8.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InvalidBytes {
    /// Refuse the text, naming the first bad byte.
    Refuse,
    /// Replace each bad sequence by U+FFFD (for formats whose keywords and numbers are ASCII,
    /// where a bad byte in a comment does no harm).
    Replace,
}

/// `bytes` as UTF-8 text without a leading byte-order mark. UTF-16 and UTF-32 text is refused
/// by name (see [`foreign_encoding`]).
pub fn decode_utf8(bytes: &[u8], invalid: InvalidBytes) -> Result<Cow<'_, str>, EncodingError> {
    if let Some(encoding) = foreign_encoding(bytes) {
        return Err(EncodingError::Foreign(encoding));
    }
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    match std::str::from_utf8(bytes) {
        Ok(text) => Ok(Cow::Borrowed(text)),
        Err(e) => match invalid {
            InvalidBytes::Replace => Ok(String::from_utf8_lossy(bytes)),
            InvalidBytes::Refuse => {
                let offset = e.valid_up_to();
                let line = 1 + bytes[..offset].iter().filter(|&&b| b == b'\n').count();
                Err(EncodingError::NotUtf8 { offset, line })
            }
        },
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap known-good values")]
mod tests {
    use super::*;

    #[test]
    fn excerpts_are_capped() {
        assert_eq!(excerpt("abc"), "\"abc\"");
        let long = "x".repeat(10_000);
        let e = excerpt(&long);
        assert!(e.len() < 120, "{e}");
        assert!(e.contains("9920 more characters"), "{e}");
    }

    #[test]
    fn long_quotes_in_messages_are_shortened() {
        let msg = format!(
            "invalid type: string \"{}\", expected f64",
            "y".repeat(5000)
        );
        let short = shorten_quotes(&msg);
        assert!(short.len() < 200, "{short}");
        assert!(short.ends_with("\", expected f64"), "{short}");
        assert!(short.contains("4920 more characters"), "{short}");
        assert_eq!(shorten_quotes("short \"q\""), "short \"q\"");
    }

    #[test]
    fn encodings_are_recognised() {
        let utf16le: Vec<u8> = "v 1 2 3\n"
            .encode_utf16()
            .flat_map(|u| u.to_le_bytes())
            .collect();
        assert_eq!(foreign_encoding(&utf16le), Some(ForeignEncoding::Utf16Le));
        let mut with_bom = vec![0xFF, 0xFE];
        with_bom.extend(&utf16le);
        assert_eq!(
            decode_utf8(&with_bom, InvalidBytes::Replace).unwrap_err(),
            EncodingError::Foreign(ForeignEncoding::Utf16Le)
        );
        let utf16be: Vec<u8> = "{\"a\": 1}"
            .encode_utf16()
            .flat_map(|u| u.to_be_bytes())
            .collect();
        assert_eq!(foreign_encoding(&utf16be), Some(ForeignEncoding::Utf16Be));
        assert_eq!(
            decode_utf8(b"\xEF\xBB\xBFv 1 2 3", InvalidBytes::Refuse).unwrap(),
            "v 1 2 3"
        );
        assert_eq!(
            decode_utf8(b"a\nb\xFFc", InvalidBytes::Refuse).unwrap_err(),
            EncodingError::NotUtf8 { offset: 3, line: 2 }
        );
        assert_eq!(
            decode_utf8(b"a\xFFc", InvalidBytes::Replace).unwrap(),
            "a\u{FFFD}c"
        );
        assert_eq!(foreign_encoding(b"v 1 2 3\nf 1 2 3\n"), None);
    }
}
