//! A 16-bit greyscale PNG writer for `simulate --frame`, with text chunks.
//!
//! Small on purpose: every row with filter type 0 and the zlib stream in stored blocks (no
//! compression; a simulated frame is mostly noise, which Deflate shrinks little), so the CLI
//! needs no PNG or compression crate. It writes nothing else: no gamma, no colour, one IDAT.
//!
//! # Source
//! PNG specification (ISO/IEC 15948:2003): §5.2 signature, §5.3 chunks, §5.5 CRC-32, §11.2.2
//! IHDR, §11.3.4.5 iTXt (uncompressed, no language tag); RFC 1950 §2.2 (zlib header, Adler-32)
//! and RFC 1951 §3.2.4 (stored blocks of at most 65 535 bytes).

/// CRC-32 of PNG chunks (§5.5: polynomial 0xEDB88320, reflected), bit by bit.
fn crc32(bytes: &[u8]) -> u32 {
    let mut c = !0u32;
    for b in bytes {
        c ^= u32::from(*b);
        for _ in 0..8 {
            c = if c & 1 == 1 {
                (c >> 1) ^ 0xEDB8_8320
            } else {
                c >> 1
            };
        }
    }
    !c
}

/// Adler-32 (RFC 1950 §8.2); 5552 bytes is the longest run whose sums fit 32 bits (zlib).
fn adler32(bytes: &[u8]) -> u32 {
    let (mut a, mut b) = (1u32, 0u32);
    for chunk in bytes.chunks(5552) {
        for x in chunk {
            a += u32::from(*x);
            b += a;
        }
        a %= 65521;
        b %= 65521;
    }
    (b << 16) | a
}

fn chunk(out: &mut Vec<u8>, kind: &[u8; 4], data: &[u8]) {
    // A chunk longer than 2^31 − 1 bytes cannot be written; the frames here are far smaller
    // (the engine's simulation is limited to 2^28 pixels: 512 MiB).
    let len = u32::try_from(data.len()).unwrap_or(u32::MAX);
    out.extend_from_slice(&len.to_be_bytes());
    let start = out.len();
    out.extend_from_slice(kind);
    out.extend_from_slice(data);
    let crc = crc32(out.get(start..).unwrap_or(&[]));
    out.extend_from_slice(&crc.to_be_bytes());
}

/// The PNG file of a `width` × `height` frame of 16-bit samples, row by row, with `texts` as
/// uncompressed iTXt chunks (keyword, UTF-8 text).
pub fn grey16(width: u32, height: u32, samples: &[u16], texts: &[(&str, &str)]) -> Vec<u8> {
    let mut out = vec![0x89, b'P', b'N', b'G', 0x0d, 0x0a, 0x1a, 0x0a];
    let mut ihdr = width.to_be_bytes().to_vec();
    ihdr.extend_from_slice(&height.to_be_bytes());
    ihdr.extend_from_slice(&[16, 0, 0, 0, 0]);
    chunk(&mut out, b"IHDR", &ihdr);
    for (keyword, text) in texts {
        // Keyword, NUL, compression flag 0, method 0, empty language tag and translation.
        let mut t = keyword.as_bytes().to_vec();
        t.extend_from_slice(&[0, 0, 0, 0, 0]);
        t.extend_from_slice(text.as_bytes());
        chunk(&mut out, b"iTXt", &t);
    }
    let row = width as usize;
    let mut filtered = Vec::with_capacity(samples.len() * 2 + height as usize);
    for r in samples.chunks(row.max(1)) {
        filtered.push(0);
        filtered.extend(r.iter().flat_map(|s| s.to_be_bytes()));
    }
    let mut z = Vec::with_capacity(filtered.len() + filtered.len() / 65535 * 5 + 11);
    z.extend_from_slice(&[0x78, 0x01]);
    let mut blocks = filtered.chunks(65535).peekable();
    while let Some(b) = blocks.next() {
        z.push(u8::from(blocks.peek().is_none()));
        // OK: a block is at most 65 535 bytes.
        let n = u16::try_from(b.len()).unwrap_or(u16::MAX);
        z.extend_from_slice(&n.to_le_bytes());
        z.extend_from_slice(&(!n).to_le_bytes());
        z.extend_from_slice(b);
    }
    z.extend_from_slice(&adler32(&filtered).to_be_bytes());
    chunk(&mut out, b"IDAT", &z);
    chunk(&mut out, b"IEND", &[]);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Source: the CRC-32 check value 0xCBF43926 of "123456789" (CRC-32/ISO-HDLC) and
    /// Wikipedia's Adler-32 example, "Wikipedia" → 0x11E60398.
    #[test]
    fn checksums() {
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        assert_eq!(adler32(b"Wikipedia"), 0x11E6_0398);
    }

    /// Source: the engine's decoder reading it back (its own tests check it against Pillow).
    #[test]
    fn the_engine_reads_it_back() {
        let samples: Vec<u16> = (0..3 * 40_000u32).map(|i| (i * 7919) as u16).collect();
        let f = engine::frames::decode(&grey16(300, 400, &samples, &[("Title", "tést")]), None)
            .map_err(|e| e.to_string());
        assert_eq!(f.map(|f| f.pixels().to_vec()), Ok(samples));
    }
}
