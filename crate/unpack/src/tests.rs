//! The decoder against a stream made by liblzma (Python 3.11's `lzma` module, raw LZMA1,
//! preset 6, lc 3, lp 0, pb 2, of the text below followed by the bytes 0 to 255), and damaged
//! copies of it. The wider comparison (varied data, settings and the page's own wasm) is
//! `tests/e2e/unpack.test.mjs`, which runs this crate's wasm.

use super::{decode, probs_len, Error};

/// What the stream holds.
fn original() -> Vec<u8> {
    let mut v = b"the photon transfer curve of a sensor: mean against variance, ".repeat(5);
    v.extend(0..=255u8);
    v
}

/// liblzma's stream of [`original`] (Python: `lzma.compress(data, format=lzma.FORMAT_RAW,
/// filters=[{"id": lzma.FILTER_LZMA1, "preset": 6, "lc": 3, "lp": 0, "pb": 2}])`).
const PACKED: [u8; 296] = [
    0, 58, 26, 8, 206, 118, 190, 155, 227, 129, 214, 25, 234, 43, 245, 76, 175, 95, 153, 123, 181,
    215, 201, 119, 86, 159, 116, 199, 254, 159, 0, 143, 112, 95, 155, 137, 243, 13, 109, 143, 100,
    48, 82, 33, 95, 49, 80, 91, 247, 247, 45, 119, 140, 174, 53, 7, 253, 176, 201, 10, 115, 18,
    194, 176, 112, 205, 199, 13, 56, 221, 200, 249, 24, 36, 145, 197, 53, 241, 252, 203, 238, 180,
    74, 117, 120, 104, 10, 238, 181, 91, 105, 202, 242, 194, 147, 131, 41, 192, 99, 75, 225, 227,
    233, 31, 192, 105, 208, 87, 232, 178, 92, 56, 94, 252, 28, 218, 144, 153, 163, 98, 139, 29,
    119, 130, 15, 206, 202, 67, 40, 179, 235, 202, 43, 40, 216, 27, 223, 48, 41, 109, 51, 63, 113,
    187, 250, 1, 168, 176, 216, 58, 162, 193, 12, 247, 10, 226, 48, 159, 175, 210, 141, 116, 142,
    94, 36, 175, 88, 122, 199, 11, 143, 187, 47, 5, 226, 221, 192, 14, 136, 239, 74, 237, 1, 197,
    30, 118, 41, 217, 104, 72, 6, 25, 169, 166, 193, 40, 112, 232, 61, 43, 132, 34, 186, 107, 202,
    24, 148, 30, 188, 130, 252, 16, 11, 66, 49, 20, 177, 201, 236, 73, 81, 7, 36, 112, 58, 213, 26,
    103, 101, 243, 70, 253, 154, 184, 231, 164, 87, 44, 68, 123, 172, 129, 175, 111, 80, 71, 214,
    164, 13, 191, 140, 129, 0, 80, 207, 155, 76, 189, 215, 213, 65, 128, 144, 154, 189, 146, 165,
    104, 74, 106, 213, 130, 215, 215, 135, 173, 185, 168, 97, 114, 204, 149, 236, 23, 83, 136, 82,
    168, 228, 249, 255, 255, 155, 36, 0, 0,
];

fn run(src: &[u8], out_len: usize) -> (Result<(), Error>, Vec<u8>) {
    let mut out = vec![0u8; out_len];
    let mut probs = vec![0u16; probs_len(3, 0).unwrap_or(0)];
    let r = decode(src, 3, 0, 2, &mut out, &mut probs);
    (r, out)
}

#[test]
fn decodes_liblzmas_stream() {
    let want = original();
    assert_eq!(run(&PACKED, want.len()), (Ok(()), want));
}

#[test]
fn names_what_is_wrong() {
    let n = original().len();
    assert_eq!(
        run(PACKED.get(..PACKED.len() / 2).unwrap_or(&[]), n).0,
        Err(Error::Truncated)
    );
    // liblzma's raw stream ends with the end marker: more output asked for finds it.
    assert_eq!(run(&PACKED, n + 10).0, Err(Error::EndsEarly));
    let mut first = PACKED;
    first[0] = 1;
    assert_eq!(run(&first, n).0, Err(Error::Start));
    assert_eq!(run(PACKED.get(..4).unwrap_or(&[]), n).0, Err(Error::Start));
    let mut out = vec![0u8; n];
    let mut probs = vec![0u16; probs_len(3, 0).unwrap_or(0)];
    assert_eq!(
        decode(&PACKED, 9, 0, 2, &mut out, &mut probs),
        Err(Error::Properties)
    );
    assert_eq!(
        decode(&PACKED, 3, 0, 5, &mut out, &mut probs),
        Err(Error::Properties)
    );
    assert_eq!(
        decode(&PACKED, 3, 1, 2, &mut out, &mut probs),
        Err(Error::Buffer)
    );
    // 0x300 literal probabilities for each of the 2^(lc + lp) literal contexts (the LZMA
    // specification's `LitProbs`).
    let base = probs_len(0, 0).unwrap_or(0);
    assert_eq!(probs_len(3, 0), Some(base - 0x300 + 0x300 * 8));
    assert_eq!(probs_len(1, 3), Some(base - 0x300 + 0x300 * 16));
    assert_eq!(probs_len(4, 5), None);
}

/// Every single-bit flip of the stream ends in an error or other bytes, never a panic or a
/// hang (the page then finds that the wasm does not compile).
#[test]
fn damage_never_panics() {
    let n = original().len();
    let mut refused = 0;
    for byte in 0..PACKED.len() {
        for bit in 0..8 {
            let mut bad = PACKED;
            if let Some(b) = bad.get_mut(byte) {
                *b ^= 1 << bit;
            }
            if run(&bad, n).0.is_err() {
                refused += 1;
            }
        }
    }
    assert!(refused > 0);
}
