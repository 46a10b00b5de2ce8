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
    // Python: zlib.adler32(bytes([255]) * 5553) == 0x8e299c8b (one byte past a whole run).
    assert_eq!(adler32(&[255; 5553]), 0x8e29_9c8b);
    // Python: zlib.adler32(bytes(i * 7 % 251 for i in range(100003))) == 0x9537c6bf (16-byte
    // steps and a tail).
    let ramp: Vec<u8> = (0..100_003u32).map(|i| (i * 7 % 251) as u8).collect();
    assert_eq!(adler32(&ramp), 0x9537_c6bf);
}

/// Source: RFC 1950 §8.2's definition (A = 1 + Σ D_i, B = Σ A_i, both mod 65521, byte by
/// byte), transcribed here as the reference for lengths around the 16-byte lanes and the
/// 5552-byte runs of `adler32`, on bytes 0xff (the largest sums) and on a ramp.
#[test]
fn adler32_lanes_match_the_definition() {
    let serial = |bytes: &[u8]| {
        let (mut a, mut b) = (1u32, 0u32);
        for x in bytes {
            a = (a + u32::from(*x)) % 65521;
            b = (b + a) % 65521;
        }
        (b << 16) | a
    };
    let ramp: Vec<u8> = (0..20_000u32).map(|i| (i * 13 % 256) as u8).collect();
    let ones = [255u8; 20_000];
    for n in (0..=40)
        .chain(5540..=5570)
        .chain(11_090..=11_120)
        .chain([20_000])
    {
        assert_eq!(adler32(&ramp[..n]), serial(&ramp[..n]), "ramp, length {n}");
        assert_eq!(adler32(&ones[..n]), serial(&ones[..n]), "0xff, length {n}");
    }
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

/// The bytes of `skew(n)` (the Python below): an LCG's 16 high bits' trailing zeros, times 7, so
/// byte 7k has probability 2^-(k+1) and its Huffman code is about k + 1 bits long.
fn skew(n: usize) -> Vec<u8> {
    let mut x: u64 = 1;
    (0..n)
        .map(|_| {
            x = (x * 1_103_515_245 + 12_345) % (1 << 31);
            let t = (x >> 15) | 0x1_0000;
            (t.trailing_zeros() * 7) as u8
        })
        .collect()
}

/// Source: Python 3's zlib (zlib 1.3): `c = zlib.compressobj(9, zlib.DEFLATED, 15, 9,
/// zlib.Z_HUFFMAN_ONLY)`, `c.compress(skew(3000)) + c.flush()` (literals only), with `skew`:
/// ```text
/// def skew(n):
///     x, out = 1, bytearray()
///     for _ in range(n):
///         x = (x * 1103515245 + 12345) % 2**31
///         t = (x >> 15) | 0x10000
///         out.append(((t & -t).bit_length() - 1) * 7)
///     return bytes(out)
/// ```
/// One dynamic block whose literal/length code has codes longer than `TABLE_BITS` (checked
/// here from its header), so the decode reaches the slow path; Python's
/// `zlib.adler32(skew(3000))` is 1948274607.
#[test]
fn codes_longer_than_the_table() {
    let z = hex(concat!(
        "780105c111a26ddb9645c1b066dd864d5bb6edd8b567dfb2fed5c98841901318527b674a3945e0da54d5d62b",
        "3376309f402ea399595bd2786c35148fa74bf4a112aa1a9b1bf1aef603c8afe085ae4f630c1a04f867d17d80",
        "ab0c310433f70c48f3131a35f7852b329678d525d5795a2b0cdfb8e68ca638f6f0ab6ddba39842c830552820",
        "184a97ddbc01a3438ede7a47d93c8e0fe43c7c229bc2b2563600fbdfd6513cba99b490d4c864d8ae13bff271",
        "1a1c3b95442a40f5cbd9980ceeaf88c649fc1cb8c2434a6f0ded6e491ed90f15b98cd5e793a38a9438bb0271",
        "2f45f784ae9c5c7b995cbe67d01c9a41001ffde33caa33be97bcffd82d6b893d4e1f0568e9daf70d6304fb50",
        "6311f326acc90a550719b9ac599f45c624011758b1953dca0a074e07fc1f0f7ffadc143d5c064a0afa5ac0d5",
        "ddce012a0b7e820e241122d3b04efe79d6790b538237972a90bb6bc1a55ebb565980d9879db679a672c28c4a",
        "505e99550321652b11ae03e1f827c2125bc8511ffd7615d904468c40dd4896293f69d18b5e80ddecf784fdf8",
        "39553761e6924fa38a507f5c20cdb47c3b3fdc55f3635014c26533529dce3b980fe21d1d49928469b8b57944",
        "f4892c762ba926b9dd2045f94e97347048f087105bb6fb2607c13827fc7bd9b33471c252fc60f7a41177f817",
        "2baf0209d323eeac03d90de298492808f1750409d6051fb16f6573e589d069d2927665996076f9e18581572e",
        "79aff7c787bbae175c5a25bfe65ccc74070d9bbf760b3eb85a99c1b473e6a93eea5aa33598bef791b0b4c630",
        "f46e0f7ce0d1a7dbb02e73b8d360f88ee7122d5261bbc29879b86ab113cefce3a5df5d69cac15a1260853343",
        "926d2e14048df1b420c56fb4e9e0c25d3463a5a0563aabb65ffdb08da1defbc98f3b51cb823c7a9f22554850",
        "060dfcb13ba8fe136a7532c29ab38dd001138e5dfb1306e275791718b2121020768ba212dadf015360d359f9",
        "bb6dd32ab3a8985eabf39096e5b42880803a6c2827b8c18b5d81ff263909c78c6d1f8b6fdbfac449ba13a69a",
        "9c88a80ee50a7197d00ae94cb8c160e018c692fe1f74204faf"
    ));
    assert_eq!((z[2] >> 1) & 3, 2, "the first block is dynamic");
    let mut bits = Bits {
        data: &z[2..],
        pos: 0,
        buf: 0,
        count: 0,
    };
    bits.take(3).unwrap();
    let (lit, _) = dynamic(&mut bits).unwrap();
    let long: u16 = lit.counts[TABLE_BITS as usize + 1..].iter().sum();
    assert!(
        long > 0,
        "some literal/length codes are longer than the table's bits"
    );
    let want = skew(3000);
    assert_eq!(adler32(&want), 1_948_274_607);
    assert_eq!(inflate(&z).unwrap(), want);
    // Every truncation is an error (some inside a long code), never a panic.
    for cut in 0..z.len() {
        assert!(inflate(&z[..cut]).is_err(), "cut {cut}");
    }
}

/// Source: Python 3's `zlib.compress(b"a" * 300 + b"abc" * 100, 9)` (zlib 1.3): matches at
/// distance 1 (a run of one byte) and at distance 3 with length 258 (a source that overlaps
/// what it writes, RFC 1951 §3.2.3's example of distance < length).
#[test]
fn overlapping_matches() {
    let z = hex("78da4b4c1c054483a4e451442402009e5fe485");
    let mut want = vec![b'a'; 300];
    for _ in 0..100 {
        want.extend_from_slice(b"abc");
    }
    assert_eq!(inflate(&z).unwrap(), want);
    // Stopped by the limit inside an overlapping run: the bytes up to it are kept.
    let mut out = Vec::new();
    assert_eq!(zlib(&z, &mut out, 100), Err(InflateError::TooLong));
    assert_eq!(out, vec![b'a'; 100]);
}

/// Source: Python 3's `zlib.compress(b"hello", 0)` (a stored block) and
/// `zlib.compress(b"a" * 300, 9)` (one literal, then matches at distance 1); common practice,
/// no source, for what the output holds: the bytes before the stream are kept, and a stream
/// that ends early leaves exactly the bytes it decoded, never the zeroed room behind them.
#[test]
fn output_after_bytes_already_there_and_after_errors() {
    let mut out = b"xy".to_vec();
    zlib(&hex("7801010500faff68656c6c6f062c0215"), &mut out, 100).unwrap();
    assert_eq!(out, b"xyhello");
    let runs = hex("78da4b4c1c05c40200d8a871ad");
    let mut out = b"xy".to_vec();
    zlib(&runs, &mut out, 1000).unwrap();
    assert_eq!(out.len(), 302);
    // Cut inside the matches: Truncated, the output as long as what was decoded.
    let mut out = Vec::new();
    assert_eq!(
        zlib(&runs[..5], &mut out, 1000),
        Err(InflateError::Truncated)
    );
    assert!(
        out.len() < 300 && out.iter().all(|b| *b == b'a'),
        "{}",
        out.len()
    );
    // The stored block cut short: nothing of it written.
    let mut out = b"xy".to_vec();
    let cut = hex("7801010500faff6865");
    assert_eq!(zlib(&cut, &mut out, 100), Err(InflateError::Truncated));
    assert_eq!(out, b"xy");
}

/// Source: RFC 1951 §3.2.2's canonical codes worked by hand for lengths a (97): 1, b (98): 2,
/// 256: 3, 257: 3, which give a = 0, b = 10, 256 = 110, 257 = 111, sent first bit first
/// (§3.1.1), so the table index holds them from its lowest bit up.
#[test]
fn literal_pairs_from_a_known_code() {
    let mut lengths = [0u8; 258];
    (lengths[97], lengths[98], lengths[256], lengths[257]) = (1, 2, 3, 3);
    let (lit, incomplete) = Huffman::new(&lengths).unwrap();
    assert!(!incomplete);
    let pairs = Pairs::new(&lit);
    let at = |bits: &[u32]| {
        // The bits in stream order, then ones (which begin 111 = 257, no literal).
        let i = (0..PAIR_BITS).fold(0usize, |i, k| {
            let bit = bits.get(k as usize).copied().unwrap_or(1);
            i | (bit as usize) << k
        });
        pairs.table[i]
    };
    // 0, 0: a a, 2 bits.
    assert_eq!(at(&[0, 0]), 97 | 97 << 8 | 2 << 16 | 2 << 24);
    // 0, 1 0: a b, 3 bits.
    assert_eq!(at(&[0, 1, 0]), 97 | 98 << 8 | 3 << 16 | 2 << 24);
    // 1 0, 0: b a, 3 bits.
    assert_eq!(at(&[1, 0, 0]), 98 | 97 << 8 | 3 << 16 | 2 << 24);
    // 0, 1 1 0: a then end-of-block, so a alone, 1 bit.
    assert_eq!(at(&[0, 1, 1, 0]), 97 | 1 << 16 | 1 << 24);
    // 1 1 1: length symbol 257 first: decoded the general way.
    assert_eq!(at(&[1, 1, 1]), 0);
}
