//! PackBits decoding (TIFF compression 32773): byte runs and literal stretches.
//!
//! Decoding stops when the caller's limit is reached, so a stretch running past a strip's end
//! is cut there; a strip whose data ends early leaves fewer bytes, which the caller refuses.
//!
//! # Source
//! TIFF 6.0 §9 ("PackBits Compression"): a header byte n of 0..127 copies the next n + 1
//! bytes literally; −127..−1 repeats the next byte −n + 1 times; −128 is a no-op.

/// Decode PackBits `data` into `out` (appending) until `out` holds `limit` bytes or the data
/// ends.
pub(crate) fn decode(data: &[u8], out: &mut Vec<u8>, limit: usize) {
    let mut rest = data;
    while let [n, tail @ ..] = rest {
        let room = limit.saturating_sub(out.len());
        if room == 0 {
            return;
        }
        let n = i8::from_ne_bytes([*n]);
        if n >= 0 {
            let len = usize::from(n.unsigned_abs()) + 1;
            let take = len.min(tail.len());
            out.extend_from_slice(tail.get(..take.min(room)).unwrap_or(&[]));
            rest = tail.get(take..).unwrap_or(&[]);
        } else if n != -128 {
            let Some((b, tail)) = tail.split_first() else {
                return;
            };
            let len = usize::from(n.unsigned_abs()) + 1;
            out.extend(std::iter::repeat_n(*b, len.min(room)));
            rest = tail;
        } else {
            rest = tail;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Source: TIFF 6.0 §9, the worked example: the packed bytes
    /// FE AA 02 80 00 2A FD AA 03 80 00 2A 22 F7 AA unpack to
    /// AA AA AA 80 00 2A AA AA AA AA 80 00 2A 22 AA AA AA AA AA AA AA AA AA AA.
    #[test]
    fn the_specifications_example() {
        let packed = [
            0xFE, 0xAA, 0x02, 0x80, 0x00, 0x2A, 0xFD, 0xAA, 0x03, 0x80, 0x00, 0x2A, 0x22, 0xF7,
            0xAA,
        ];
        let unpacked = [
            0xAA, 0xAA, 0xAA, 0x80, 0x00, 0x2A, 0xAA, 0xAA, 0xAA, 0xAA, 0x80, 0x00, 0x2A, 0x22,
            0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA, 0xAA,
        ];
        let mut out = Vec::new();
        decode(&packed, &mut out, 100);
        assert_eq!(out, unpacked);
        // The limit cuts a run; -128 is skipped.
        let mut out = Vec::new();
        decode(&[0x80, 0xFE, 0xAA, 0xFE, 0xBB], &mut out, 4);
        assert_eq!(out, [0xAA, 0xAA, 0xAA, 0xBB]);
    }
}
