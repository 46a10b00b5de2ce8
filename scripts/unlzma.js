// Decode LZMA (the LZMA1 stream of the 7-Zip/xz format family: a range coder over adaptive
// binary probabilities, with literals, matches and four repeated distances), synchronously,
// into a buffer of the known output size. scripts/single-file.mjs embeds the self-contained
// file's wasm packed so (by Python's lzma module, raw LZMA1, lc = 3, lp = 0, pb = 0), about
// 18 % smaller than zopfli's deflate, which that file's 300 KB budget needs.
// Written from the format's description in the LZMA SDK (Igor Pavlov, public domain:
// DOC/lzma-specification.txt, "LzmaSpec.cpp"); tests/e2e/unlzma.test.mjs checks it against
// Python's lzma (liblzma) and with damaged streams. Throws an Error on bad data, never hangs:
// every step writes at least one byte or ends the loop.
// noiseBudgetUnlzma(src: Uint8Array, lc, lp, pb, out: Uint8Array) → out (all of it written)
const noiseBudgetUnlzma = (() => {
  const bad = (what) => new Error(`bad LZMA data: ${what}`);
  const PROB_INIT = 1024; // 0.5 in 11-bit probabilities
  const STATES = 12;
  const POS_STATES_MAX = 16;
  const END_POS_MODEL = 14;
  const FULL_DISTANCES = 128;
  const MATCH_MIN = 2;
  // Probability array layout (one Uint16Array): offsets of each model.
  const IS_MATCH = 0;
  const IS_REP = IS_MATCH + STATES * POS_STATES_MAX;
  const IS_REP_G0 = IS_REP + STATES;
  const IS_REP_G1 = IS_REP_G0 + STATES;
  const IS_REP_G2 = IS_REP_G1 + STATES;
  const IS_REP0_LONG = IS_REP_G2 + STATES;
  const POS_SLOT = IS_REP0_LONG + STATES * POS_STATES_MAX; // 4 trees of 64
  const SPEC_POS = POS_SLOT + 4 * 64; // 1 + FULL_DISTANCES - END_POS_MODEL
  const ALIGN = SPEC_POS + 1 + FULL_DISTANCES - END_POS_MODEL; // 16
  // A length coder: choice, choice 2, low[16][8], mid[16][8], high[256].
  const LEN_SIZE = 2 + 2 * POS_STATES_MAX * 8 + 256;
  const MATCH_LEN = ALIGN + 16;
  const REP_LEN = MATCH_LEN + LEN_SIZE;
  const LITERAL = REP_LEN + LEN_SIZE;

  return function noiseBudgetUnlzma(src, lc, lp, pb, out) {
    if (!(lc >= 0 && lc <= 8 && lp >= 0 && lp <= 4 && pb >= 0 && pb <= 4)) throw bad('properties out of range');
    const probs = new Uint16Array(LITERAL + (0x300 << (lc + lp))).fill(PROB_INIT);
    const size = out.length;
    const n = src.length;
    if (n < 5 || src[0] !== 0) throw bad('no range coder start');
    let pos = 5;
    // The range coder: `range` and `code` as unsigned 32-bit values held in doubles.
    let range = 0xffffffff;
    let code = ((src[1] << 24) | (src[2] << 16) | (src[3] << 8) | src[4]) >>> 0;
    if (code === range) throw bad('range coder start');
    // One bit with the adaptive probability at probs[i].
    const bit = (i) => {
      const p = probs[i];
      const bound = (range >>> 11) * p;
      let b;
      if (code < bound) {
        range = bound;
        probs[i] = p + ((2048 - p) >>> 5);
        b = 0;
      } else {
        range -= bound;
        code -= bound;
        probs[i] = p - (p >>> 5);
        b = 1;
      }
      if (range < 0x1000000) {
        if (pos >= n) throw bad('the data ends early');
        range = (range * 256) >>> 0;
        code = ((code * 256) + src[pos++]) >>> 0;
      }
      return b;
    };
    const tree = (base, bits) => {
      let m = 1;
      for (let k = 0; k < bits; k++) m = (m << 1) | bit(base + m);
      return m - (1 << bits);
    };
    const reverseTree = (base, bits) => {
      let m = 1;
      let symbol = 0;
      for (let k = 0; k < bits; k++) {
        const b = bit(base + m);
        m = (m << 1) | b;
        symbol |= b << k;
      }
      return symbol;
    };
    const length = (base, posState) => {
      if (bit(base) === 0) return tree(base + 2 + posState * 8, 3);
      if (bit(base + 1) === 0) return 8 + tree(base + 2 + POS_STATES_MAX * 8 + posState * 8, 3);
      return 16 + tree(base + 2 + 2 * POS_STATES_MAX * 8, 8);
    };
    const direct = (bits) => {
      let result = 0;
      for (let k = 0; k < bits; k++) {
        range = range >>> 1;
        let b = 0;
        if (code >= range) {
          code -= range;
          b = 1;
        }
        result = ((result << 1) | b) >>> 0;
        if (range < 0x1000000) {
          if (pos >= n) throw bad('the data ends early');
          range = (range * 256) >>> 0;
          code = ((code * 256) + src[pos++]) >>> 0;
        }
      }
      return result;
    };

    const pbMask = (1 << pb) - 1;
    const lpMask = (1 << lp) - 1;
    let state = 0;
    let rep0 = 0;
    let rep1 = 0;
    let rep2 = 0;
    let rep3 = 0;
    let o = 0;
    while (o < size) {
      const posState = o & pbMask;
      if (bit(IS_MATCH + state * POS_STATES_MAX + posState) === 0) {
        const prev = o > 0 ? out[o - 1] : 0;
        const base = LITERAL + 0x300 * (((o & lpMask) << lc) + (prev >>> (8 - lc)));
        let symbol = 1;
        if (state >= 7) {
          // After a match: the byte at the match distance steers the first bits.
          if (rep0 >= o) throw bad('a distance before the start');
          let matchByte = out[o - rep0 - 1];
          while (symbol < 0x100) {
            const matchBit = (matchByte >>> 7) & 1;
            matchByte <<= 1;
            const b = bit(base + ((1 + matchBit) << 8) + symbol);
            symbol = (symbol << 1) | b;
            if (matchBit !== b) break;
          }
        }
        // The plain literal's eight bits, the commonest step, with the range coder's state in
        // locals (the closures above share it through their context, slower to reach).
        let r = range;
        let c = code;
        while (symbol < 0x100) {
          const i = base + symbol;
          const p = probs[i];
          const bound = (r >>> 11) * p;
          if (c < bound) {
            r = bound;
            probs[i] = p + ((2048 - p) >>> 5);
            symbol <<= 1;
          } else {
            r -= bound;
            c -= bound;
            probs[i] = p - (p >>> 5);
            symbol = (symbol << 1) | 1;
          }
          if (r < 0x1000000) {
            if (pos >= n) throw bad('the data ends early');
            r = (r * 256) >>> 0;
            c = ((c * 256) + src[pos++]) >>> 0;
          }
        }
        range = r;
        code = c;
        out[o++] = symbol & 0xff;
        state = state < 4 ? 0 : state < 10 ? state - 3 : state - 6;
        continue;
      }
      let len;
      if (bit(IS_REP + state) !== 0) {
        if (o === 0) throw bad('a repeated match at the start');
        if (bit(IS_REP_G0 + state) === 0) {
          if (bit(IS_REP0_LONG + state * POS_STATES_MAX + posState) === 0) {
            // One byte at the last distance.
            state = state < 7 ? 9 : 11;
            out[o] = out[o - rep0 - 1];
            o++;
            continue;
          }
        } else {
          let dist;
          if (bit(IS_REP_G1 + state) === 0) {
            dist = rep1;
          } else {
            if (bit(IS_REP_G2 + state) === 0) {
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
        len = length(REP_LEN, posState);
        state = state < 7 ? 8 : 11;
      } else {
        rep3 = rep2;
        rep2 = rep1;
        rep1 = rep0;
        len = length(MATCH_LEN, posState);
        state = state < 7 ? 7 : 10;
        const slot = tree(POS_SLOT + (len < 3 ? len : 3) * 64, 6);
        if (slot < 4) {
          rep0 = slot;
        } else {
          const bits = (slot >>> 1) - 1;
          let dist = ((2 | (slot & 1)) << bits) >>> 0;
          if (slot < END_POS_MODEL) {
            dist += reverseTree(SPEC_POS + dist - slot, bits);
          } else {
            dist += direct(bits - 4) * 16;
            dist += reverseTree(ALIGN, 4);
          }
          rep0 = dist >>> 0;
        }
        // The end marker (distance 2^32 − 1) before every byte is written: the stream is
        // shorter than it should be.
        if (rep0 === 0xffffffff) throw bad(`it ends after ${o} of ${size} bytes`);
      }
      len += MATCH_MIN;
      if (rep0 >= o) throw bad('a distance before the start');
      if (len > size - o) throw bad('a match past the end');
      let from = o - rep0 - 1;
      for (const end = o + len; o < end;) out[o++] = out[from++];
    }
    return out;
  };
})();
