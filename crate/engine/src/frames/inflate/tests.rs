//! Tests of inflate.rs: the RFC 1951 block types and the RFC 1950 wrapper on streams written by
//! Python 3's `zlib.compress` (zlib 1.3, a general-purpose library), and malformed streams.

#![allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code: a failure should panic

use super::*;

fn hex(s: &str) -> Vec<u8> {
    (0..s.len())
        .step_by(2)
        .map(|i| u8::from_str_radix(&s[i..i + 2], 16).unwrap())
        .collect()
}

fn inflate(data: &[u8]) -> Result<Vec<u8>, InflateError> {
    let mut out = Vec::new();
    zlib(data, &mut out, 1 << 20).map(|()| out)
}

/// Source: Wikipedia's Adler-32 worked example, "Wikipedia" → 0x11E60398 (also Python's
/// `zlib.adler32(b"Wikipedia")`); RFC 1950 §8.2 for the empty input's 1.
#[test]
fn adler32_worked_example() {
    assert_eq!(adler32(b"Wikipedia"), 0x11E6_0398);
    assert_eq!(adler32(b""), 1);
    // Python: zlib.adler32(bytes([255]) * 100000) == 0x149a302c (past the 5552-byte runs).
    assert_eq!(adler32(&[255; 100_000]), 0x149a_302c);
}

/// Source: Python `zlib.compress(b"a")` = 78 9c 4b 04 00 00 62 00 62: one final
/// fixed-Huffman block (RFC 1951 §3.2.6): 'a' is the 8-bit code 0x91, then end-of-block.
#[test]
fn fixed_huffman_block() {
    assert_eq!(inflate(&hex("789c4b040000620062")).unwrap(), b"a");
    // Python `zlib.compress(b"abcabcabcabcabcabcabcabcabcabc", 9)`: a length/distance pair.
    assert_eq!(
        inflate(&hex("78da4b4c4a4ec48d00b20c0b7d")).unwrap(),
        b"abcabcabcabcabcabcabcabcabcabc"
    );
}

/// Source: Python `zlib.compress(b"hello", 0)`: one stored block (RFC 1951 §3.2.4), LEN 5 and
/// NLEN its complement, then the Adler-32 0x062c0215.
#[test]
fn stored_block() {
    let s = hex("7801010500faff68656c6c6f062c0215");
    assert_eq!(inflate(&s).unwrap(), b"hello");
    // NLEN not the complement of LEN.
    let mut bad = s.clone();
    bad[5] = 0xfe;
    assert!(matches!(inflate(&bad), Err(InflateError::Corrupt(_))));
}

/// Source: Python `zlib.compress(b" ".join(str(i * 7).encode() for i in range(120)), 9)`, whose
/// first block is dynamic (block type 2, RFC 1951 §3.2.7).
#[test]
fn dynamic_huffman_block() {
    let z = hex(concat!(
        "78da1d91c701034108c45a9912960cfd37669d1ffa6903e869642937f92a4ae9ca53b53a344f33dad499",
        "6e65af64e670326f5904471f7045a5ac0df0066ff116ef5afe82fb1f8cdc792b782c569e252f879337de",
        "e02ddee25d2a9e01bfb252b8c329a21519fcf4c1281a6ff0066ff10eef4ef95a69c1380f4619a94c8355",
        "1663367336dee02ddee1dda85eaacc60555eaa706021d9aa0a16f3006ff0166ff1aed4cfe1d4c6e63cd8",
        "de835167aacb60d58d377883b778f7ad981dbfd1d06088305418320c1d86104389f952fc5be05163c831",
        "f4587a2c3d961e4b8f8df80143325513"
    ));
    assert_eq!((z[2] >> 1) & 3, 2, "the first block is dynamic");
    let want: Vec<u8> = (0..120)
        .map(|i| (i * 7).to_string())
        .collect::<Vec<_>>()
        .join(" ")
        .into_bytes();
    assert_eq!(inflate(&z).unwrap(), want);
}

/// Source: RFC 1950 §2.2 (header check, FDICT) and §2.2's ADLER32 field; common practice, no
/// source, for refusing each damage.
#[test]
fn damaged_streams_are_refused() {
    let s = hex("789c4b040000620062");
    // Adler-32 changed.
    let mut bad = s.clone();
    bad[8] ^= 1;
    assert_eq!(
        inflate(&bad),
        Err(InflateError::Adler {
            stored: 0x0062_0063,
            computed: 0x0062_0062
        })
    );
    // Header check (CMF·256 + FLG a multiple of 31), method, dictionary.
    assert_eq!(inflate(&hex("789d4b04")), Err(InflateError::Header));
    assert_eq!(inflate(&hex("799c4b04")), Err(InflateError::Header));
    assert_eq!(inflate(&hex("78bb")), Err(InflateError::Dictionary));
    // Every truncation is an error, never a panic.
    for cut in 0..s.len() {
        assert!(inflate(&s[..cut]).is_err(), "cut {cut}");
    }
    // Block type 3.
    assert!(matches!(
        inflate(&hex("789c07")),
        Err(InflateError::Corrupt(_))
    ));
    // More output than the limit: TooLong, with the bytes up to the limit kept.
    let mut out = Vec::new();
    let r = zlib(&hex("78da4b4c4a4ec48d00b20c0b7d"), &mut out, 7);
    assert_eq!((r, &out[..]), (Err(InflateError::TooLong), &b"abcabca"[..]));
}
