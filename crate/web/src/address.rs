//! The scenario link: `#scenario=` followed by the compact JSON, UTF-8, base64url without padding.
//!
//! Pure text in, text out; it touches neither the DOM nor the engine, and does not check that
//! the decoded text is a valid scenario (the engine does that).
//!
//! base64url (RFC 4648 §5) is written here in a few lines rather than with the `base64` crate:
//! measured in the page's wasm, the crate's general engine cost 6.0 KB of code (2.6 KB gzip)
//! for what these two functions do (issue 11, keeping the single file no larger).

use std::fmt;

/// The key of the address fragment that carries a scenario.
pub const KEY: &str = "scenario";

/// The base64url alphabet (RFC 4648 §5, table 2).
const ALPHABET: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_";

/// base64url without padding.
fn encode(bytes: &[u8]) -> String {
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for chunk in bytes.chunks(3) {
        let b = |i: usize| u32::from(chunk.get(i).copied().unwrap_or(0));
        let n = (b(0) << 16) | (b(1) << 8) | b(2);
        // One more character than bytes in the chunk: 1 → 2, 2 → 3, 3 → 4.
        for k in 0..=chunk.len() {
            let six = (n >> (18 - 6 * k)) & 63;
            out.push(char::from(
                ALPHABET.get(six as usize).copied().unwrap_or(b'A'),
            ));
        }
    }
    out
}

/// The bytes of base64url text, with or without its padding; `None` for anything else: a
/// character outside the alphabet, a length no encoding has, or bits left over that are not 0
/// (as RFC 4648 §3.5 lets a decoder refuse).
fn decode(text: &str) -> Option<Vec<u8>> {
    let text = text
        .strip_suffix("==")
        .or_else(|| text.strip_suffix('='))
        .unwrap_or(text);
    if text.len() % 4 == 1 {
        return None;
    }
    let mut out = Vec::with_capacity(text.len() / 4 * 3 + 2);
    let (mut acc, mut bits) = (0u32, 0u32);
    for c in text.bytes() {
        let six = ALPHABET.iter().position(|a| *a == c)?;
        acc = (acc << 6) | u32::try_from(six).ok()?;
        bits += 6;
        if bits >= 8 {
            bits -= 8;
            out.push(u8::try_from((acc >> bits) & 0xff).ok()?);
        }
    }
    (acc & ((1 << bits) - 1) == 0).then_some(out)
}

/// Why a link's scenario could not be read as text.
#[derive(Debug, Clone, PartialEq, Eq)]
#[non_exhaustive]
pub enum LinkError {
    /// The part after `#scenario=` is not base64url.
    NotBase64,
    /// It decodes to bytes that are not UTF-8 text.
    NotUtf8,
}

impl fmt::Display for LinkError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LinkError::NotBase64 => f.write_str(
                "the part after #scenario= is not base64url text (letters, digits, - and _); \
                 the link may have been cut short or changed",
            ),
            LinkError::NotUtf8 => {
                f.write_str("the part after #scenario= does not decode to UTF-8 text")
            }
        }
    }
}

/// The address fragment (with its `#`) for a scenario given as compact JSON.
///
/// ```
/// assert_eq!(noise_budget_web::address::fragment_for("{}"), "#scenario=e30");
/// ```
#[must_use]
pub fn fragment_for(json: &str) -> String {
    format!("#{KEY}={}", encode(json.as_bytes()))
}

/// The scenario text carried by an address fragment (`location.hash`, with or without `#`):
/// `Ok(None)` when the fragment carries no scenario.
///
/// # Errors
/// A [`LinkError`] when the fragment names a scenario that cannot be decoded to text.
pub fn scenario_text(fragment: &str) -> Result<Option<String>, LinkError> {
    let body = fragment.strip_prefix('#').unwrap_or(fragment);
    let Some(encoded) = body
        .split('&')
        .find_map(|part| part.strip_prefix(KEY).and_then(|r| r.strip_prefix('=')))
    else {
        return Ok(None);
    };
    let bytes = decode(encoded.trim()).ok_or(LinkError::NotBase64)?;
    String::from_utf8(bytes)
        .map(Some)
        .map_err(|_| LinkError::NotUtf8)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip_keeps_text_including_non_ascii() {
        let json = r#"{"version":1,"title":"Dock · north µm ✓"}"#;
        let frag = fragment_for(json);
        assert!(frag.starts_with("#scenario="));
        assert!(!frag.ends_with('='), "no padding: {frag}");
        assert!(
            !frag.contains('+') && !frag.contains('/'),
            "url alphabet: {frag}"
        );
        assert_eq!(scenario_text(&frag), Ok(Some(json.to_string())));
    }

    #[test]
    /// Source: RFC 4648 §10 test vectors ("f" → "Zg==", "fo" → "Zm8=", "foobar" → "Zm9vYmFy"),
    /// written without padding; §5 for the URL alphabet, where "-" and "_" replace "+" and "/"
    /// ("~~~" is "fn5+" and "???" is "Pz8/" in standard base64, worked by hand from the bits and checked with Python's base64.urlsafe_b64encode).
    fn known_encodings() {
        assert_eq!(fragment_for("f"), "#scenario=Zg");
        assert_eq!(fragment_for("fo"), "#scenario=Zm8");
        assert_eq!(fragment_for("foobar"), "#scenario=Zm9vYmFy");
        assert_eq!(fragment_for("~~~"), "#scenario=fn5-");
        assert_eq!(fragment_for("???"), "#scenario=Pz8_");
        assert_eq!(scenario_text("#scenario=Zm8="), Ok(Some("fo".into())));
    }

    #[test]
    /// Source: every byte value and every length from 0 to 300, encoded and decoded back
    /// (common practice, no source); and the trailing bits of "Zh" (0b100001 0b…) not 0.
    fn every_byte_round_trips_and_loose_bits_are_refused() {
        for n in 0..300_usize {
            let bytes: Vec<u8> = (0..n)
                .map(|i| u8::try_from((i * 37 + n) % 256).unwrap_or(0))
                .collect();
            assert_eq!(decode(&encode(&bytes)), Some(bytes));
        }
        assert_eq!(decode("Zh"), None);
        assert_eq!(decode("Zg=="), Some(b"f".to_vec()));
        assert_eq!(decode("Z+"), None);
    }

    #[test]
    fn no_scenario_in_fragment() {
        assert_eq!(scenario_text(""), Ok(None));
        assert_eq!(scenario_text("#"), Ok(None));
        assert_eq!(scenario_text("#results"), Ok(None));
        assert_eq!(scenario_text("#scenarios=e30"), Ok(None));
    }

    #[test]
    fn malformed_links_are_errors_not_panics() {
        assert_eq!(scenario_text("#scenario=%%%"), Err(LinkError::NotBase64));
        assert_eq!(scenario_text("#scenario=a"), Err(LinkError::NotBase64));
        // 0xff 0xfe is not UTF-8.
        assert_eq!(scenario_text("#scenario=__4"), Err(LinkError::NotUtf8));
        assert_eq!(scenario_text("#scenario="), Ok(Some(String::new())));
    }
}
