//! Inflate: the zlib stream format (RFC 1950) around Deflate (RFC 1951), for PNG and TIFF.
//!
//! Written small, after zlib's "puff", with puff's one costly step replaced: a Huffman code is
//! decoded by one look-up in a table indexed by the next `TABLE_BITS` bits (symbol and code
//! length), and only a code longer than that continues puff's bit-by-bit walk over counts and
//! symbols arrays. Bits come through a 64-bit buffer refilled 8 bytes at a time. Output goes
//! into one `Vec` whose capacity the caller sets from the header, so a stream can never
//! allocate more than that.
//! It checks the zlib header and the Adler-32 of the output; it does not support a preset
//! dictionary (PNG and TIFF never use one).
//!
//! # Source
//! RFC 1950 §2.2 (zlib header, FDICT, Adler-32 §8.2 and its worked definition), RFC 1951 §3.2.3
//! (block header), §3.2.4 (stored blocks), §3.2.5 (length and distance codes), §3.2.6 (fixed
//! Huffman codes), §3.2.7 (dynamic Huffman codes), §3.2.2 (canonical codes from lengths).

use std::fmt;

/// What is wrong with a zlib stream.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub(crate) enum InflateError {
    /// The two header bytes are not a zlib header of the Deflate method (RFC 1950 §2.2).
    Header,
    /// The header asks for a preset dictionary, which PNG and TIFF never use.
    Dictionary,
    /// The data ends before the stream does.
    Truncated,
    /// A block type 3, a stored block whose length check fails, a bad code table or code.
    Corrupt(&'static str),
    /// The stream holds more bytes than the caller's limit (the output holds the bytes up to
    /// it).
    TooLong,
    /// The Adler-32 at the end does not match the output's.
    Adler {
        /// The checksum in the stream.
        stored: u32,
        /// The checksum of the decoded bytes.
        computed: u32,
    },
}

impl fmt::Display for InflateError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            InflateError::Header => write!(f, "not a zlib stream of deflate data"),
            InflateError::Dictionary => write!(f, "zlib stream needs a preset dictionary"),
            InflateError::Truncated => write!(f, "deflate data ends early (truncated)"),
            InflateError::Corrupt(what) => write!(f, "deflate data: {what}"),
            InflateError::TooLong => write!(f, "deflate data holds more bytes than the image"),
            InflateError::Adler { stored, computed } => write!(
                f,
                "zlib adler-32 0x{stored:08x} does not match the data's 0x{computed:08x}"
            ),
        }
    }
}

/// Bits read least significant first (RFC 1951 §3.1.1), from a byte slice, through a 64-bit
/// buffer refilled 8 bytes at a time where 8 remain and byte by byte near the end.
///
/// `count` bits of `buf` are the stream's next bits. The bits above them are either zero or,
/// after an 8-byte refill, the low bits of the bytes at `pos` (the same bits the next refill
/// ORs in again), so a peek past `count` never sees invented data that `count` allows.
#[derive(Clone, Copy)]
struct Bits<'a> {
    data: &'a [u8],
    pos: usize,
    buf: u64,
    count: u32,
}

impl Bits<'_> {
    /// Fill the buffer to at least 56 bits, or with every byte left.
    #[inline(always)]
    fn refill(&mut self) {
        if self.count > 56 {
            return;
        }
        if let Some(eight) = self
            .data
            .get(self.pos..self.pos + 8)
            .and_then(|b| <[u8; 8]>::try_from(b).ok())
        {
            self.buf |= u64::from_le_bytes(eight) << self.count;
            // Whole bytes that fit above `count` (count ≤ 56, so 1 to 7 of them).
            self.pos += ((63 - self.count) / 8) as usize;
            self.count |= 56;
        } else {
            while self.count <= 56 {
                let Some(b) = self.data.get(self.pos) else {
                    return;
                };
                self.buf |= u64::from(*b) << self.count;
                self.pos += 1;
                self.count += 8;
            }
        }
    }

    /// Drop the next `n` ≤ `count` bits.
    #[inline(always)]
    fn drop_bits(&mut self, n: u32) {
        self.buf >>= n;
        self.count -= n;
    }

    /// The next `n` ≤ 32 bits as a number, first bit lowest.
    #[inline(always)]
    fn take(&mut self, n: u32) -> Result<u32, InflateError> {
        if self.count < n {
            self.refill();
            if self.count < n {
                return Err(InflateError::Truncated);
            }
        }
        // OK: n ≤ 32, so the mask keeps at most 32 bits.
        #[allow(clippy::cast_possible_truncation)]
        let v = (self.buf & ((1u64 << n) - 1)) as u32;
        self.drop_bits(n);
        Ok(v)
    }

    /// Drop the bits up to the next byte boundary; the position of the next whole byte.
    fn align(&mut self) -> usize {
        let whole = (self.count / 8) as usize;
        self.buf = 0;
        self.count = 0;
        self.pos -= whole;
        self.pos
    }
}

/// Longest Huffman code in Deflate (RFC 1951 §3.2.7).
const MAX_BITS: usize = 15;

/// Bits of the primary lookup table: codes up to this long are decoded in one step.
const TABLE_BITS: u32 = 10;

/// A canonical Huffman code: how many codes of each length and the symbols in code order (for
/// codes longer than `TABLE_BITS`, decoded as puff does), and a table indexed by the next
/// `TABLE_BITS` bits whose entry is `symbol << 4 | length`, 0 where the code is longer (or
/// absent).
struct Huffman {
    counts: [u16; MAX_BITS + 1],
    symbols: [u16; 288],
    table: [u16; 1 << TABLE_BITS],
    /// The walk's `first` and `index` after the first `TABLE_BITS` bits matched no code.
    first_at: i32,
    index_at: i32,
}

impl Huffman {
    /// The code of these lengths (RFC 1951 §3.2.2). `Err` for an over-subscribed code; `Ok`
    /// with `true` when the code is incomplete (allowed for a single distance code).
    fn new(lengths: &[u8]) -> Result<(Huffman, bool), InflateError> {
        let mut h = Huffman {
            counts: [0; MAX_BITS + 1],
            symbols: [0; 288],
            table: [0; 1 << TABLE_BITS],
            first_at: 0,
            index_at: 0,
        };
        for l in lengths {
            if let Some(c) = h.counts.get_mut(usize::from(*l)) {
                *c += 1;
            }
        }
        let mut left: i32 = 1;
        for c in h.counts.iter().skip(1) {
            left = (left << 1) - i32::from(*c);
            if left < 0 {
                return Err(InflateError::Corrupt("over-subscribed huffman code"));
            }
        }
        // offsets[len]: index in `symbols` of the first code of that length; next[len]: the
        // first code of that length (RFC 1951 §3.2.2 step 2).
        let mut offsets = [0u16; MAX_BITS + 1];
        let mut next = [0u16; MAX_BITS + 1];
        let (mut offset, mut code) = (0u16, 0u16);
        for len in 1..=MAX_BITS {
            let c = h.counts.get(len).copied().unwrap_or(0);
            if let (Some(o), Some(n)) = (offsets.get_mut(len), next.get_mut(len)) {
                *o = offset;
                *n = code;
            }
            offset += c;
            code = (code + c) << 1;
            if len == TABLE_BITS as usize {
                h.index_at = i32::from(offset);
                h.first_at = i32::from(code);
            }
        }
        for (symbol, l) in (0u16..).zip(lengths) {
            let len = usize::from(*l);
            let (Some(o), Some(n)) = (offsets.get_mut(len), next.get_mut(len)) else {
                continue;
            };
            if len == 0 {
                continue;
            }
            if let Some(s) = h.symbols.get_mut(usize::from(*o)) {
                *s = symbol;
            }
            *o += 1;
            // Codes are sent most significant bit first (§3.1.1): the table is indexed by the
            // code reversed, with every value of the bits above it.
            let reversed = usize::from(n.reverse_bits() >> (16 - len));
            *n += 1;
            if len <= TABLE_BITS as usize {
                let entry = (symbol << 4) | u16::from(*l);
                for e in h.table.iter_mut().skip(reversed).step_by(1 << len) {
                    *e = entry;
                }
            }
        }
        Ok((h, left > 0))
    }

    /// The table's entry for the buffered bits `buf`.
    #[inline(always)]
    fn entry(&self, buf: u64) -> u16 {
        let index = (buf & ((1 << TABLE_BITS) - 1)) as usize;
        self.table.get(index).copied().unwrap_or(0)
    }

    /// Decode one symbol: one table look-up, or for a code longer than the table's bits (or
    /// a missing one) the rest of puff's bit-by-bit walk.
    #[inline(always)]
    fn decode(&self, bits: &mut Bits) -> Result<u16, InflateError> {
        bits.refill();
        let index = (bits.buf & ((1 << TABLE_BITS) - 1)) as usize;
        let entry = self.table.get(index).copied().unwrap_or(0);
        let len = u32::from(entry & 15);
        if len != 0 && len <= bits.count {
            bits.drop_bits(len);
            return Ok(entry >> 4);
        }
        let (symbol, len) = self.decode_slow(bits.buf, bits.count)?;
        bits.drop_bits(len);
        Ok(symbol)
    }

    /// Puff's `decode` on the buffered bits `buf` (`count` of them): the symbol and its code's
    /// length. With `TABLE_BITS` bits at hand that matched no code, the walk resumes after them
    /// from `first_at` and `index_at` (the state the walk over them would reach).
    #[inline(never)]
    fn decode_slow(&self, buf: u64, count: u32) -> Result<(u16, u32), InflateError> {
        let (mut code, mut first, mut index, mut len) = if count >= TABLE_BITS {
            // The first TABLE_BITS bits as a code, most significant bit first (§3.1.1).
            // OK: masked to TABLE_BITS ≤ 16 bits.
            #[allow(clippy::cast_possible_truncation)]
            let low = (buf & ((1 << TABLE_BITS) - 1)) as u16;
            let code = i32::from(low.reverse_bits() >> (16 - TABLE_BITS));
            (code << 1, self.first_at, self.index_at, TABLE_BITS + 1)
        } else {
            (0, 0, 0, 1)
        };
        while let Some(count_at) = self.counts.get(len as usize) {
            if len > count {
                return Err(InflateError::Truncated);
            }
            code |= ((buf >> (len - 1)) & 1) as i32;
            let n = i32::from(*count_at);
            if code - n < first {
                return usize::try_from(index + (code - first))
                    .ok()
                    .and_then(|i| self.symbols.get(i).copied())
                    .map(|s| (s, len))
                    .ok_or(InflateError::Corrupt("bad huffman code"));
            }
            index += n;
            first = (first + n) << 1;
            code <<= 1;
            len += 1;
        }
        Err(InflateError::Corrupt("bad huffman code"))
    }
}

/// Base lengths and extra bits of length symbols 257..285 (RFC 1951 §3.2.5).
const LENGTH_BASE: [u16; 29] = [
    3, 4, 5, 6, 7, 8, 9, 10, 11, 13, 15, 17, 19, 23, 27, 31, 35, 43, 51, 59, 67, 83, 99, 115, 131,
    163, 195, 227, 258,
];
const LENGTH_EXTRA: [u8; 29] = [
    0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 3, 3, 3, 3, 4, 4, 4, 4, 5, 5, 5, 5, 0,
];
/// Base distances and extra bits of distance symbols 0..29 (RFC 1951 §3.2.5).
const DIST_BASE: [u16; 30] = [
    1, 2, 3, 4, 5, 7, 9, 13, 17, 25, 33, 49, 65, 97, 129, 193, 257, 385, 513, 769, 1025, 1537,
    2049, 3073, 4097, 6145, 8193, 12289, 16385, 24577,
];
const DIST_EXTRA: [u8; 30] = [
    0, 0, 0, 0, 1, 1, 2, 2, 3, 3, 4, 4, 5, 5, 6, 6, 7, 7, 8, 8, 9, 9, 10, 10, 11, 11, 12, 12, 13,
    13,
];

/// Order of the code length code lengths (RFC 1951 §3.2.7).
const CODE_LENGTH_ORDER: [usize; 19] = [
    16, 17, 18, 0, 8, 7, 9, 6, 10, 5, 11, 4, 12, 3, 13, 2, 14, 1, 15,
];

/// Where the output goes: `buf` is the caller's `Vec` grown to its limit, `pos` the end of what
/// is written, the bytes after `start` this stream's (so a distance never reaches before it).
/// Each write is one bounds check on `buf`, which is the limit check too.
struct Out<'a> {
    buf: &'a mut [u8],
    pos: usize,
    start: usize,
}

impl Out<'_> {
    #[inline(always)]
    fn push(&mut self, b: u8) -> Result<(), InflateError> {
        let slot = self.buf.get_mut(self.pos).ok_or(InflateError::TooLong)?;
        *slot = b;
        self.pos += 1;
        Ok(())
    }

    /// Copy `len` bytes from `dist` back (RFC 1951 §3.2.3: the copy may overlap its source).
    #[inline(always)]
    fn copy(&mut self, dist: usize, len: usize) -> Result<(), InflateError> {
        let end = self.pos;
        if dist > end - self.start {
            return Err(InflateError::Corrupt("distance too far back"));
        }
        // Past the limit, the bytes up to it are written before the error (TIFF keeps them).
        let room = self.buf.len().saturating_sub(end);
        let n = len.min(room);
        let from = end - dist;
        if dist >= n {
            // The source lies wholly in bytes already written.
            self.buf.copy_within(from..from + n, end);
        } else {
            // An overlapping run (distance 1 repeats a byte): each byte is one written `dist`
            // before it, byte by byte.
            for i in end..end + n {
                let b = self.buf.get(i - dist).copied().unwrap_or(0);
                if let Some(x) = self.buf.get_mut(i) {
                    *x = b;
                }
            }
        }
        self.pos = end + n;
        if len > room {
            return Err(InflateError::TooLong);
        }
        Ok(())
    }
}

/// Bits of the literal pairs table: a literal code and the next, when both are literals and
/// their lengths sum to at most this, are read in one look-up. 11 measured faster than 10, 12
/// or 13 on a 12 MP 16-bit frame (the table is built again for every block).
const PAIR_BITS: u32 = 11;

/// For every value of the next `PAIR_BITS` bits, the literals they begin with: `first |
/// second << 8 | bits << 16 | count << 24`, with `count` 2 (both codes, `bits` long together),
/// 1 (the first code only, `bits` its length; `second` is not a byte of the stream) or 0 (the
/// first code is not a literal in the table: decode it the general way). A Huffman table's
/// entries repeat over the bits above their code, so an index with `PAIR_BITS − len₁` known bits
/// after the first code finds the second code's entry whenever that code is no longer.
struct Pairs {
    table: [u32; 1 << PAIR_BITS],
}

impl Pairs {
    fn new(lit: &Huffman) -> Pairs {
        let mut table = [0u32; 1 << PAIR_BITS];
        for (i, p) in (0u64..).zip(table.iter_mut()) {
            let first = lit.entry(i);
            if !is_literal(first) {
                continue;
            }
            let len = u32::from(first & 15);
            let second = lit.entry(i >> len);
            let len2 = u32::from(second & 15);
            let (b0, b1) = (u32::from(first >> 4), u32::from(second >> 4));
            *p = if is_literal(second) && len + len2 <= PAIR_BITS {
                b0 | (b1 << 8) | ((len + len2) << 16) | (2 << 24)
            } else {
                b0 | (len << 16) | (1 << 24)
            };
        }
        Pairs { table }
    }
}

/// Whether a table entry is a literal's: a code in the table (entry not 0, its length ≥ 1) of
/// a symbol below 256, so the entry is below `256 << 4`.
#[inline(always)]
fn is_literal(entry: u16) -> bool {
    entry.wrapping_sub(1) < (256 << 4) - 1
}

/// One block's symbols with the given codes, until end-of-block (RFC 1951 §3.2.5).
fn codes(
    bits_io: &mut Bits,
    out: &mut Out,
    lit: &Huffman,
    dist: &Huffman,
) -> Result<(), InflateError> {
    // A local copy, which the compiler keeps in registers; written back on every exit.
    let mut local = *bits_io;
    let pairs = Pairs::new(lit);
    let r = codes_in(&mut local, out, lit, &pairs, dist);
    *bits_io = local;
    r
}

/// The loop of [`codes`].
#[inline(always)]
fn codes_in(
    bits: &mut Bits,
    out: &mut Out,
    lit: &Huffman,
    pairs: &Pairs,
    dist: &Huffman,
) -> Result<(), InflateError> {
    loop {
        // Literals straight from the pairs table, one or two per look-up, while the buffer
        // holds `PAIR_BITS`; one refill (to 56 or more bits) serves several look-ups.
        if bits.count < 32 {
            bits.refill();
        }
        if bits.count >= PAIR_BITS {
            let index = (bits.buf & ((1 << PAIR_BITS) - 1)) as usize;
            let p = pairs.table.get(index).copied().unwrap_or(0);
            let count = (p >> 24) as usize;
            if count != 0 {
                // Two bytes written, `count` of them kept: a second byte not kept is written
                // over by the next symbol or cut off by the final truncation.
                if let Some([o0, o1]) = out.buf.get_mut(out.pos..out.pos + 2) {
                    // OK: masked to 8 bits.
                    #[allow(clippy::cast_possible_truncation)]
                    {
                        (*o0, *o1) = (p as u8, (p >> 8) as u8);
                    }
                    out.pos += count;
                    bits.drop_bits((p >> 16) & 0xff);
                    continue;
                }
            }
        }
        let symbol = lit.decode(bits)?;
        if symbol < 256 {
            // OK: symbol < 256.
            #[allow(clippy::cast_possible_truncation)]
            out.push(symbol as u8)?;
        } else if symbol == 256 {
            return Ok(());
        } else {
            let i = usize::from(symbol - 257);
            let (base, extra) = LENGTH_BASE
                .get(i)
                .zip(LENGTH_EXTRA.get(i))
                .ok_or(InflateError::Corrupt("bad length symbol"))?;
            let len = usize::from(*base) + bits.take(u32::from(*extra))? as usize;
            let d = usize::from(dist.decode(bits)?);
            let (base, extra) = DIST_BASE
                .get(d)
                .zip(DIST_EXTRA.get(d))
                .ok_or(InflateError::Corrupt("bad distance symbol"))?;
            let d = usize::from(*base) + bits.take(u32::from(*extra))? as usize;
            out.copy(d, len)?;
        }
    }
}

/// The fixed codes of RFC 1951 §3.2.6.
fn fixed() -> Result<(Huffman, Huffman), InflateError> {
    let mut lengths = [8u8; 288];
    for (i, l) in lengths.iter_mut().enumerate() {
        *l = match i {
            0..=143 => 8,
            144..=255 => 9,
            256..=279 => 7,
            _ => 8,
        };
    }
    Ok((Huffman::new(&lengths)?.0, Huffman::new(&[5; 30])?.0))
}

/// The codes of a dynamic block's header (RFC 1951 §3.2.7).
fn dynamic(bits: &mut Bits) -> Result<(Huffman, Huffman), InflateError> {
    let nlen = bits.take(5)? as usize + 257;
    let ndist = bits.take(5)? as usize + 1;
    let ncode = bits.take(4)? as usize + 4;
    if nlen > 286 || ndist > 30 {
        return Err(InflateError::Corrupt("too many length or distance codes"));
    }
    let mut lengths = [0u8; 320];
    for i in CODE_LENGTH_ORDER.iter().take(ncode) {
        // OK: three bits.
        #[allow(clippy::cast_possible_truncation)]
        let l = bits.take(3)? as u8;
        if let Some(slot) = lengths.get_mut(*i) {
            *slot = l;
        }
    }
    let (lencode, incomplete) = Huffman::new(lengths.get(..19).unwrap_or(&[]))?;
    if incomplete {
        return Err(InflateError::Corrupt("incomplete code length code"));
    }
    let mut i = 0;
    while i < nlen + ndist {
        let symbol = lencode.decode(bits)?;
        let (value, repeat) = match symbol {
            // OK: symbol < 16.
            #[allow(clippy::cast_possible_truncation)]
            0..=15 => (symbol as u8, 1),
            16 => {
                let prev = i
                    .checked_sub(1)
                    .and_then(|p| lengths.get(p).copied())
                    .ok_or(InflateError::Corrupt("repeat with no previous length"))?;
                (prev, 3 + bits.take(2)? as usize)
            }
            17 => (0, 3 + bits.take(3)? as usize),
            _ => (0, 11 + bits.take(7)? as usize),
        };
        if i + repeat > nlen + ndist {
            return Err(InflateError::Corrupt("code lengths repeat past the end"));
        }
        for l in lengths.iter_mut().skip(i).take(repeat) {
            *l = value;
        }
        i += repeat;
    }
    let lit_lengths = lengths.get(..nlen).unwrap_or(&[]);
    if lit_lengths.get(256).copied().unwrap_or(0) == 0 {
        return Err(InflateError::Corrupt("no end-of-block code"));
    }
    let dist_lengths = lengths.get(nlen..nlen + ndist).unwrap_or(&[]);
    // An incomplete code is allowed only when it has a single code of length 1 (puff's rule:
    // RFC 1951 allows one distance code; zlib accepts the same for literal/lengths).
    let single = |l: &[u8]| l.iter().filter(|x| **x != 0).count() == 1;
    let (lit, inc) = Huffman::new(lit_lengths)?;
    if inc && !single(lit_lengths) {
        return Err(InflateError::Corrupt("incomplete literal/length code"));
    }
    let (dist, inc) = Huffman::new(dist_lengths)?;
    if inc && !single(dist_lengths) {
        return Err(InflateError::Corrupt("incomplete distance code"));
    }
    Ok((lit, dist))
}

/// Inflate raw Deflate data into `out` (appending), at most until `out` holds `limit` bytes;
/// the number of input bytes the stream took.
fn deflate(data: &[u8], out: &mut Vec<u8>, limit: usize) -> Result<usize, InflateError> {
    let mut bits = Bits {
        data,
        pos: 0,
        buf: 0,
        count: 0,
    };
    let start = out.len();
    // Grown (zeroed) to the limit, or to what this input can possibly hold when that is less:
    // every code is at least one bit and gives at most 258 bytes (RFC 1951 §3.2.5), so a
    // malformed stream with a large limit allocates no more than its own size allows.
    let most = data.len().saturating_mul(8 * 258);
    out.resize(limit.min(start.saturating_add(most)).max(start), 0);
    let mut o = Out {
        buf: out.as_mut_slice(),
        pos: start,
        start,
    };
    let r = blocks(&mut bits, data, &mut o);
    let written = o.pos;
    out.truncate(written);
    r
}

/// The blocks of [`deflate`], written into `out`; the number of input bytes they took.
fn blocks(bits: &mut Bits, data: &[u8], out: &mut Out) -> Result<usize, InflateError> {
    loop {
        let last = bits.take(1)? == 1;
        match bits.take(2)? {
            0 => {
                let at = bits.align();
                let [l0, l1, n0, n1]: [u8; 4] = data
                    .get(at..at + 4)
                    .and_then(|h| h.try_into().ok())
                    .ok_or(InflateError::Truncated)?;
                let len = u16::from_le_bytes([l0, l1]);
                let nlen = u16::from_le_bytes([n0, n1]);
                if len != !nlen {
                    return Err(InflateError::Corrupt("stored block length check fails"));
                }
                let len = usize::from(len);
                let block = data
                    .get(at + 4..at + 4 + len)
                    .ok_or(InflateError::Truncated)?;
                let room = out.buf.len().saturating_sub(out.pos);
                let n = len.min(room);
                if let (Some(dst), Some(src)) =
                    (out.buf.get_mut(out.pos..out.pos + n), block.get(..n))
                {
                    dst.copy_from_slice(src);
                }
                out.pos += n;
                if len > room {
                    return Err(InflateError::TooLong);
                }
                bits.pos = at + 4 + len;
            }
            1 => {
                let (lit, dist) = fixed()?;
                codes(bits, out, &lit, &dist)?;
            }
            2 => {
                let (lit, dist) = dynamic(bits)?;
                codes(bits, out, &lit, &dist)?;
            }
            _ => return Err(InflateError::Corrupt("block type 3")),
        }
        if last {
            return Ok(bits.align());
        }
    }
}

/// Adler-32 of `bytes` (RFC 1950 §8.2: two sums modulo 65521; 5552 bytes is the longest run
/// whose sums cannot overflow 32 bits, from zlib's adler32.c).
///
/// # Formula
/// A run of `n = 16K` bytes is read as 16 lanes: byte `x(k, j)` is the `j`-th (0 to 15) of
/// the `k`-th (1 to K) 16 bytes. Each lane keeps the byte-at-a-time sums `A_j = Σ_k x(k, j)`
/// and `B_j = Σ_k A_j(k)` (its `a += x; b += a` over its own bytes, independent of the other
/// lanes, so the loop is 16 sums wide). Byte `p = 16(k − 1) + j + 1` of the run counts
/// `n + 1 − p = 16(K + 1 − k) − j` times in the serial `b`, so after the run
/// `a' = a + Σ A_j` and `b' = b + n·a + 16·Σ B_j − Σ j·A_j` (summed in 64 bits, then reduced).
/// `B_j ≤ 255·K(K + 1)/2` = 15.4 million for K = 347 (5552 = 16 × 347), so the lanes fit 32 bits.
pub(crate) fn adler32(bytes: &[u8]) -> u32 {
    const LANES: usize = 16;
    let (mut a, mut b) = (1u64, 0u64);
    for run in bytes.chunks(5552) {
        let mut sixteens = run.chunks_exact(LANES);
        let (mut sa, mut sb) = ([0u32; LANES], [0u32; LANES]);
        for s in &mut sixteens {
            for ((x, sa), sb) in s.iter().zip(sa.iter_mut()).zip(sb.iter_mut()) {
                *sa += u32::from(*x);
                *sb += *sa;
            }
        }
        let n = (run.len() - sixteens.remainder().len()) as u64;
        let sum_a: u64 = sa.iter().map(|v| u64::from(*v)).sum();
        let sum_b: u64 = sb.iter().map(|v| u64::from(*v)).sum();
        let sum_ja: u64 = (0u64..)
            .zip(sa.iter())
            .map(|(j, v)| j * u64::from(*v))
            .sum();
        // The serial b' is not negative, so the subtraction comes last without underflow.
        b = (b + n * a + LANES as u64 * sum_b - sum_ja) % 65521;
        a = (a + sum_a) % 65521;
        for x in sixteens.remainder() {
            a += u64::from(*x);
            b += a;
        }
        a %= 65521;
        b %= 65521;
    }
    // OK: both sums are below 65521 < 2^16.
    #[allow(clippy::cast_possible_truncation)]
    let v = ((b << 16) | a) as u32;
    v
}

/// Inflate a zlib stream into `out` (appending), which may then hold at most `limit` bytes,
/// checking the header and the Adler-32 of what this stream wrote.
pub(crate) fn zlib(data: &[u8], out: &mut Vec<u8>, limit: usize) -> Result<(), InflateError> {
    let (cmf, flg) = match data {
        [c, f, ..] => (*c, *f),
        _ => return Err(InflateError::Truncated),
    };
    if cmf & 0x0f != 8 || cmf >> 4 > 7 || ((u16::from(cmf) << 8) | u16::from(flg)) % 31 != 0 {
        return Err(InflateError::Header);
    }
    if flg & 0x20 != 0 {
        return Err(InflateError::Dictionary);
    }
    let start = out.len();
    let body = data.get(2..).unwrap_or(&[]);
    let used = deflate(body, out, limit)?;
    let stored = body
        .get(used..used + 4)
        .and_then(|b| b.try_into().ok())
        .map(u32::from_be_bytes)
        .ok_or(InflateError::Truncated)?;
    let computed = adler32(out.get(start..).unwrap_or(&[]));
    if stored != computed {
        return Err(InflateError::Adler { stored, computed });
    }
    Ok(())
}

#[cfg(test)]
mod tests;
