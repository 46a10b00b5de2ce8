//! The scenario link: `#scenario=` followed by the compact JSON, UTF-8, base64url without padding.
//!
//! Pure text in, text out; it touches neither the DOM nor the engine, and does not check that
//! the decoded text is a valid scenario (the engine does that).

use std::fmt;

use base64::alphabet::URL_SAFE;
use base64::engine::general_purpose::{GeneralPurpose, GeneralPurposeConfig};
use base64::engine::DecodePaddingMode;
use base64::Engine as _;

/// The key of the address fragment that carries a scenario.
pub const KEY: &str = "scenario";

/// base64url; writes no padding, and on reading accepts it or not (some tools add it).
const CODEC: GeneralPurpose = GeneralPurpose::new(
    &URL_SAFE,
    GeneralPurposeConfig::new()
        .with_encode_padding(false)
        .with_decode_padding_mode(DecodePaddingMode::Indifferent),
);

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
    format!("#{KEY}={}", CODEC.encode(json.as_bytes()))
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
    let bytes = CODEC
        .decode(encoded.trim())
        .map_err(|_| LinkError::NotBase64)?;
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
