//! The page's unpacker: LZMA (the LZMA1 stream of the 7-Zip/xz format family: a range coder
//! over adaptive binary probabilities, with literals, matches and four repeated distances),
//! decoded into a buffer of the known output size.
//!
//! `scripts/single-file.mjs` embeds the engine's wasm in the page's script packed so (raw
//! LZMA1 by Python's `lzma` module, that is liblzma), and this crate, built as a wasm of about
//! 3 KB with no allocator and no imports, unpacks it before the engine is compiled: the same
//! decoding in JavaScript took 66 ms of the single file's start in Chromium, most of it before
//! the JavaScript engine had optimised it. It touches nothing but the memory it is given.
//!
//! Written from the format's description in the LZMA SDK (Igor Pavlov, public domain:
//! `DOC/lzma-specification.txt` and its `LzmaSpec.cpp`); `tests/e2e/unpack.test.mjs` checks
//! the wasm against liblzma on varied streams and damaged ones. Never panics: every read and
//! write is checked, and every step writes at least one byte or ends the decoding.

#![cfg_attr(target_arch = "wasm32", no_std)]

/// Why a stream was refused (the wasm returns `code()`; the page's script names it).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Error {
    /// lc above 8, lp or pb above 4.
    Properties,
    /// Not a range coder's start (its first byte is not 0, or fewer than 5 bytes).
    Start,
    /// The input ends before the output is full.
    Truncated,
    /// A match reaches before the first byte written.
    Distance,
    /// A match runs past the output's end.
    PastEnd,
    /// The end marker before the output is full.
    EndsEarly,
    /// The probability buffer given is smaller than [`probs_len`] asks.
    Buffer,
}

impl Error {
    /// The number the wasm export returns for it (0 is success).
    #[must_use]
    pub fn code(self) -> u32 {
        match self {
            Error::Properties => 1,
            Error::Start => 2,
            Error::Truncated => 3,
            Error::Distance => 4,
            Error::PastEnd => 5,
            Error::EndsEarly => 6,
            Error::Buffer => 7,
        }
    }
}

const PROB_INIT: u16 = 1024; // 0.5 in 11-bit probabilities
const STATES: usize = 12;
const POS_STATES_MAX: usize = 16;
const END_POS_MODEL: u32 = 14;
const FULL_DISTANCES: usize = 128;
const MATCH_MIN: usize = 2;
// Offsets of each model in the one probability buffer.
const IS_MATCH: usize = 0;
const IS_REP: usize = IS_MATCH + STATES * POS_STATES_MAX;
const IS_REP_G0: usize = IS_REP + STATES;
const IS_REP_G1: usize = IS_REP_G0 + STATES;
const IS_REP_G2: usize = IS_REP_G1 + STATES;
const IS_REP0_LONG: usize = IS_REP_G2 + STATES;
const POS_SLOT: usize = IS_REP0_LONG + STATES * POS_STATES_MAX; // 4 trees of 64
const SPEC_POS: usize = POS_SLOT + 4 * 64;
const ALIGN: usize = SPEC_POS + 1 + FULL_DISTANCES - END_POS_MODEL as usize; // 16
/// A length coder: choice, choice 2, low[16][8], mid[16][8], high[256].
const LEN_SIZE: usize = 2 + 2 * POS_STATES_MAX * 8 + 256;
const MATCH_LEN: usize = ALIGN + 16;
const REP_LEN: usize = MATCH_LEN + LEN_SIZE;
const LITERAL: usize = REP_LEN + LEN_SIZE;

/// The probabilities a stream with these literal settings needs (`u16`s), or `None` when
/// out of range (lc above 8, lp above 4).
#[must_use]
pub fn probs_len(lc: u32, lp: u32) -> Option<usize> {
    (lc <= 8 && lp <= 4).then(|| LITERAL + (0x300 << (lc + lp)))
}

/// The range decoder over the input.
struct Range<'a> {
    src: &'a [u8],
    pos: usize,
    range: u32,
    code: u32,
}

impl Range<'_> {
    #[inline(always)]
    fn normalize(&mut self) -> Result<(), Error> {
        if self.range < 1 << 24 {
            let byte = *self.src.get(self.pos).ok_or(Error::Truncated)?;
            self.pos += 1;
            self.range <<= 8;
            self.code = (self.code << 8) | u32::from(byte);
        }
        Ok(())
    }

    /// One bit with the adaptive probability `p`.
    #[inline]
    fn bit(&mut self, p: &mut u16) -> Result<u32, Error> {
        let bound = (self.range >> 11) * u32::from(*p);
        let b = if self.code < bound {
            self.range = bound;
            *p += (2048 - *p) >> 5;
            0
        } else {
            self.range -= bound;
            self.code -= bound;
            *p -= *p >> 5;
            1
        };
        self.normalize()?;
        Ok(b)
    }

    fn bit_at(&mut self, probs: &mut [u16], i: usize) -> Result<u32, Error> {
        let p = probs.get_mut(i).ok_or(Error::Buffer)?;
        self.bit(p)
    }

    fn tree(&mut self, probs: &mut [u16], base: usize, bits: u32) -> Result<u32, Error> {
        let mut m = 1u32;
        for _ in 0..bits {
            m = (m << 1) | self.bit_at(probs, base + m as usize)?;
        }
        Ok(m - (1 << bits))
    }

    fn reverse_tree(&mut self, probs: &mut [u16], base: usize, bits: u32) -> Result<u32, Error> {
        let mut m = 1u32;
        let mut symbol = 0;
        for k in 0..bits {
            let b = self.bit_at(probs, base + m as usize)?;
            m = (m << 1) | b;
            symbol |= b << k;
        }
        Ok(symbol)
    }

    fn direct(&mut self, bits: u32) -> Result<u32, Error> {
        let mut result = 0u32;
        for _ in 0..bits {
            self.range >>= 1;
            let b = u32::from(self.code >= self.range);
            if b == 1 {
                self.code -= self.range;
            }
            result = (result << 1) | b;
            self.normalize()?;
        }
        Ok(result)
    }

    fn length(&mut self, probs: &mut [u16], base: usize, pos_state: usize) -> Result<usize, Error> {
        let len = if self.bit_at(probs, base)? == 0 {
            self.tree(probs, base + 2 + pos_state * 8, 3)?
        } else if self.bit_at(probs, base + 1)? == 0 {
            8 + self.tree(probs, base + 2 + POS_STATES_MAX * 8 + pos_state * 8, 3)?
        } else {
            16 + self.tree(probs, base + 2 + 2 * POS_STATES_MAX * 8, 8)?
        };
        Ok(len as usize)
    }
}

/// Decode `src` (raw LZMA1 with literal context bits `lc`, literal position bits `lp`,
/// position bits `pb`) until `out` is full, with `probs` (at least [`probs_len`] long) as the
/// models' memory. Bytes after the output is full (an end marker, the coder's flush) are not
/// read.
///
/// # Errors
/// [`Error`]: bad properties, a short `probs`, or a stream that is damaged or too short.
pub fn decode(
    src: &[u8],
    lc: u32,
    lp: u32,
    pb: u32,
    out: &mut [u8],
    probs: &mut [u16],
) -> Result<(), Error> {
    if pb > 4 {
        return Err(Error::Properties);
    }
    let need = probs_len(lc, lp).ok_or(Error::Properties)?;
    let probs = probs.get_mut(..need).ok_or(Error::Buffer)?;
    probs.fill(PROB_INIT);
    let (Some(&0), Some(head)) = (src.first(), src.get(1..5)) else {
        return Err(Error::Start);
    };
    let code = head.iter().fold(0u32, |c, &b| (c << 8) | u32::from(b));
    if code == u32::MAX {
        return Err(Error::Start);
    }
    let mut rc = Range {
        src,
        pos: 5,
        range: u32::MAX,
        code,
    };
    let pb_mask = (1usize << pb) - 1;
    let lp_mask = (1usize << lp) - 1;
    let mut state = 0usize;
    let (mut rep0, mut rep1, mut rep2, mut rep3) = (0usize, 0usize, 0usize, 0usize);
    let mut o = 0usize;
    let size = out.len();
    while o < size {
        let pos_state = o & pb_mask;
        if rc.bit_at(probs, IS_MATCH + state * POS_STATES_MAX + pos_state)? == 0 {
            let prev = if o > 0 {
                out.get(o - 1).copied().unwrap_or(0)
            } else {
                0
            };
            let base = LITERAL + 0x300 * (((o & lp_mask) << lc) + (usize::from(prev) >> (8 - lc)));
            let lit = probs.get_mut(base..base + 0x300).ok_or(Error::Buffer)?;
            let mut symbol = 1usize;
            if state >= 7 {
                // After a match: the byte at the match distance steers the bits while they agree.
                let mut match_byte =
                    usize::from(*out.get(o.wrapping_sub(rep0 + 1)).ok_or(Error::Distance)?);
                while symbol < 0x100 {
                    let match_bit = (match_byte >> 7) & 1;
                    match_byte <<= 1;
                    let p = lit
                        .get_mut(((1 + match_bit) << 8) + symbol)
                        .ok_or(Error::Buffer)?;
                    let b = rc.bit(p)? as usize;
                    symbol = (symbol << 1) | b;
                    if match_bit != b {
                        break;
                    }
                }
            }
            while symbol < 0x100 {
                let p = lit.get_mut(symbol).ok_or(Error::Buffer)?;
                symbol = (symbol << 1) | rc.bit(p)? as usize;
            }
            if let Some(slot) = out.get_mut(o) {
                *slot = (symbol & 0xff) as u8;
            }
            o += 1;
            state = if state < 4 {
                0
            } else if state < 10 {
                state - 3
            } else {
                state - 6
            };
            continue;
        }
        let len;
        if rc.bit_at(probs, IS_REP + state)? != 0 {
            if o == 0 {
                return Err(Error::Distance);
            }
            if rc.bit_at(probs, IS_REP_G0 + state)? == 0 {
                if rc.bit_at(probs, IS_REP0_LONG + state * POS_STATES_MAX + pos_state)? == 0 {
                    // One byte at the last distance.
                    state = if state < 7 { 9 } else { 11 };
                    let byte = *out.get(o.wrapping_sub(rep0 + 1)).ok_or(Error::Distance)?;
                    if let Some(slot) = out.get_mut(o) {
                        *slot = byte;
                    }
                    o += 1;
                    continue;
                }
            } else {
                let dist;
                if rc.bit_at(probs, IS_REP_G1 + state)? == 0 {
                    dist = rep1;
                } else {
                    if rc.bit_at(probs, IS_REP_G2 + state)? == 0 {
                        dist = rep2;
                    } else {
                        dist = rep3;
                        rep3 = rep2;
                    }
                    rep2 = rep1;
                }
                rep1 = rep0;
                rep0 = dist;
            }
            len = rc.length(probs, REP_LEN, pos_state)?;
            state = if state < 7 { 8 } else { 11 };
        } else {
            rep3 = rep2;
            rep2 = rep1;
            rep1 = rep0;
            len = rc.length(probs, MATCH_LEN, pos_state)?;
            state = if state < 7 { 7 } else { 10 };
            let slot = rc.tree(probs, POS_SLOT + len.min(3) * 64, 6)?;
            let dist = if slot < 4 {
                slot
            } else {
                let bits = (slot >> 1) - 1;
                let dist = (2 | (slot & 1)) << bits;
                if slot < END_POS_MODEL {
                    dist + rc.reverse_tree(probs, SPEC_POS + (dist - slot) as usize, bits)?
                } else {
                    let high = rc.direct(bits - 4)? << 4;
                    dist.wrapping_add(high)
                        .wrapping_add(rc.reverse_tree(probs, ALIGN, 4)?)
                }
            };
            // The end marker (distance 2^32 - 1) before the output is full.
            if dist == u32::MAX {
                return Err(Error::EndsEarly);
            }
            rep0 = dist as usize;
        }
        let len = len + MATCH_MIN;
        if rep0 >= o {
            return Err(Error::Distance);
        }
        if len > size - o {
            return Err(Error::PastEnd);
        }
        // Byte by byte: the source may overlap what is written (a run).
        let from = o - rep0 - 1;
        for k in 0..len {
            let byte = out.get(from + k).copied().unwrap_or(0);
            if let Some(slot) = out.get_mut(o + k) {
                *slot = byte;
            }
        }
        o += len;
    }
    Ok(())
}

/// The wasm's export: decode `src_len` bytes at `src` into `out_len` bytes at `out`, with
/// `probs_len(lc, lp)` `u16`s at `probs` (2-byte aligned), all in this module's memory, placed
/// by the caller past everything the module uses (it grows the memory first). 0 on success,
/// else [`Error::code`].
///
/// # Safety
/// The three regions must lie in the module's memory, not overlap, and `probs` be aligned.
#[cfg(target_arch = "wasm32")]
#[no_mangle]
pub unsafe extern "C" fn unlzma(
    src: *const u8,
    src_len: usize,
    out: *mut u8,
    out_len: usize,
    probs: *mut u16,
    probs_count: usize,
    props: u32,
) -> u32 {
    // SAFETY: the caller's contract above.
    let (src, out, probs) = unsafe {
        (
            core::slice::from_raw_parts(src, src_len),
            core::slice::from_raw_parts_mut(out, out_len),
            core::slice::from_raw_parts_mut(probs, probs_count),
        )
    };
    match decode(
        src,
        props & 0xff,
        (props >> 8) & 0xff,
        (props >> 16) & 0xff,
        out,
        probs,
    ) {
        Ok(()) => 0,
        Err(e) => e.code(),
    }
}

/// The probabilities' length for the export (0 when the settings are out of range).
#[cfg(target_arch = "wasm32")]
#[no_mangle]
pub extern "C" fn unlzma_probs(lc: u32, lp: u32) -> usize {
    probs_len(lc, lp).unwrap_or(0)
}

#[cfg(target_arch = "wasm32")]
#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    core::arch::wasm32::unreachable()
}

#[cfg(test)]
mod tests;
