// Inflate (RFC 1951 DEFLATE, raw: no zlib or gzip wrapper), synchronously, into a buffer of
// the known output size. scripts/single-file.mjs puts this text into the page's start-up
// script, which inflates the embedded wasm with it and starts the calculator in the same run
// (DecompressionStream is asynchronous, and let the browser lay out the bare page first).
// Table-driven: each Huffman code is decoded with one lookup of the next `bits` input bits;
// tests/e2e/inflate.test.mjs checks it against node's zlib. Throws an Error on bad data.
// noiseBudgetInflate(src: Uint8Array, out: Uint8Array) → out.subarray(0, bytes written)
const noiseBudgetInflate = (() => {
  const LENGTH_BASE = [3, 4, 5, 6, 7, 8, 9, 10, 11, 13, 15, 17, 19, 23, 27, 31, 35, 43, 51, 59, 67, 83, 99, 115, 131, 163, 195, 227, 258];
  const LENGTH_EXTRA = [0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 3, 3, 3, 3, 4, 4, 4, 4, 5, 5, 5, 5, 0];
  const DIST_BASE = [1, 2, 3, 4, 5, 7, 9, 13, 17, 25, 33, 49, 65, 97, 129, 193, 257, 385, 513, 769, 1025, 1537,
    2049, 3073, 4097, 6145, 8193, 12289, 16385, 24577];
  const DIST_EXTRA = [0, 0, 0, 0, 1, 1, 2, 2, 3, 3, 4, 4, 5, 5, 6, 6, 7, 7, 8, 8, 9, 9, 10, 10, 11, 11, 12, 12, 13, 13];
  const CODE_LENGTH_ORDER = [16, 17, 18, 0, 8, 7, 9, 6, 10, 5, 11, 4, 12, 3, 13, 2, 14, 1, 15];
  const bad = (what) => new Error(`bad deflate data: ${what}`);

  // The decoding table of a canonical Huffman code with code lengths `lengths` (RFC 1951
  // §3.2.2): indexed by the next `bits` input bits (first bit lowest), each entry is
  // symbol << 4 | code length, or -1 where no code starts.
  function table(lengths) {
    const count = new Uint16Array(16);
    let bits = 0;
    for (const l of lengths) {
      count[l]++;
      if (l > bits) bits = l;
    }
    count[0] = 0;
    const next = new Uint16Array(16);
    for (let l = 1, code = 0; l <= 15; l++) {
      code = (code + count[l - 1]) << 1;
      next[l] = code;
    }
    const entries = new Int32Array(1 << bits).fill(-1);
    for (let symbol = 0; symbol < lengths.length; symbol++) {
      const l = lengths[symbol];
      if (l === 0) continue;
      let code = next[l]++;
      let reversed = 0;
      for (let k = 0; k < l; k++) {
        reversed = (reversed << 1) | (code & 1);
        code >>= 1;
      }
      if (reversed >= entries.length) throw bad('a code longer than the table');
      for (let j = reversed; j < entries.length; j += 1 << l) entries[j] = (symbol << 4) | l;
    }
    return { entries, bits };
  }

  const fixedLengths = new Uint8Array(288);
  fixedLengths.fill(8, 0, 144).fill(9, 144, 256).fill(7, 256, 280).fill(8, 280, 288);
  const FIXED_LITERALS = table(fixedLengths);
  const FIXED_DISTANCES = table(new Uint8Array(30).fill(5));

  // One block's compressed data, up to its end-of-block code: the hot loop, a function of its
  // own with the bit reader written out and everything in locals (the page runs this once,
  // mostly before the JavaScript engine has optimised it, where calls and closures cost most).
  // `state` is [input position, bit buffer, bits held, bytes written], read and written back.
  function blockData(src, out, state, literals, distances) {
    let [pos, buffer, held, o] = state;
    const n = src.length;
    const lt = literals.entries;
    const lbits = literals.bits;
    const lmask = (1 << lbits) - 1;
    const dt = distances.entries;
    const dbits = distances.bits;
    const dmask = (1 << dbits) - 1;
    for (;;) {
      while (held < 16) {
        if (pos > n + 4) throw bad('it ends early');
        buffer |= (pos < n ? src[pos] : 0) << held;
        pos++;
        held += 8;
      }
      const e = lt[buffer & lmask];
      if (e < 0) throw bad('an unknown code');
      buffer >>>= e & 15;
      held -= e & 15;
      let symbol = e >> 4;
      if (symbol < 256) {
        if (o >= out.length) throw bad('more output than expected');
        out[o++] = symbol;
        continue;
      }
      if (symbol === 256) break;
      symbol -= 257;
      if (symbol >= 29) throw bad('an unknown length code');
      let extra = LENGTH_EXTRA[symbol];
      while (held < extra) {
        if (pos > n + 4) throw bad('it ends early');
        buffer |= (pos < n ? src[pos] : 0) << held;
        pos++;
        held += 8;
      }
      const len = LENGTH_BASE[symbol] + (buffer & ((1 << extra) - 1));
      buffer >>>= extra;
      held -= extra;
      while (held < dbits) {
        buffer |= (pos < n ? src[pos] : 0) << held;
        pos++;
        held += 8;
      }
      const f = dt[buffer & dmask];
      if (f < 0) throw bad('an unknown code');
      buffer >>>= f & 15;
      held -= f & 15;
      const d = f >> 4;
      if (d >= 30) throw bad('an unknown distance code');
      extra = DIST_EXTRA[d];
      while (held < extra) {
        buffer |= (pos < n ? src[pos] : 0) << held;
        pos++;
        held += 8;
      }
      const dist = DIST_BASE[d] + (buffer & ((1 << extra) - 1));
      buffer >>>= extra;
      held -= extra;
      if (dist > o) throw bad('a distance before the start');
      if (o + len > out.length) throw bad('more output than expected');
      if (dist >= len) {
        out.copyWithin(o, o - dist, o - dist + len);
        o += len;
      } else {
        for (let k = 0; k < len; k++, o++) out[o] = out[o - dist];
      }
    }
    state[0] = pos;
    state[1] = buffer;
    state[2] = held;
    state[3] = o;
  }

  return function inflate(src, out) {
    let pos = 0; // next input byte
    let buffer = 0; // input bits not yet used, first bit lowest
    let held = 0; // how many
    let o = 0; // bytes written
    const need = (n) => {
      while (held < n) {
        if (pos > src.length + 4) throw bad('it ends early');
        buffer |= (pos < src.length ? src[pos] : 0) << held;
        pos++;
        held += 8;
      }
    };
    const take = (n) => {
      need(n);
      const v = buffer & ((1 << n) - 1);
      buffer >>>= n;
      held -= n;
      return v;
    };
    const decode = (t) => {
      need(t.bits);
      const e = t.entries[buffer & ((1 << t.bits) - 1)];
      if (e < 0) throw bad('an unknown code');
      const l = e & 15;
      buffer >>>= l;
      held -= l;
      return e >> 4;
    };
    let last;
    do {
      last = take(1);
      const type = take(2);
      if (type === 0) {
        // Stored: drop the rest of this byte; the whole bytes held go back to the input.
        pos -= held >> 3;
        buffer = 0;
        held = 0;
        if (pos + 4 > src.length) throw bad('it ends early');
        const len = src[pos] | (src[pos + 1] << 8);
        const nlen = src[pos + 2] | (src[pos + 3] << 8);
        if ((len ^ 0xffff) !== nlen) throw bad('a stored block length and its complement differ');
        pos += 4;
        if (pos + len > src.length) throw bad('it ends early');
        if (o + len > out.length) throw bad('more output than expected');
        out.set(src.subarray(pos, pos + len), o);
        pos += len;
        o += len;
        continue;
      }
      let literals = FIXED_LITERALS;
      let distances = FIXED_DISTANCES;
      if (type === 2) {
        const nlit = take(5) + 257;
        const ndist = take(5) + 1;
        const ncode = take(4) + 4;
        const codeLengths = new Uint8Array(19);
        for (let i = 0; i < ncode; i++) codeLengths[CODE_LENGTH_ORDER[i]] = take(3);
        const codes = table(codeLengths);
        const lengths = new Uint8Array(nlit + ndist);
        for (let i = 0; i < lengths.length;) {
          const symbol = decode(codes);
          if (symbol < 16) {
            lengths[i++] = symbol;
            continue;
          }
          let repeat;
          let value = 0;
          if (symbol === 16) {
            if (i === 0) throw bad('a repeat with nothing before it');
            value = lengths[i - 1];
            repeat = 3 + take(2);
          } else if (symbol === 17) {
            repeat = 3 + take(3);
          } else {
            repeat = 11 + take(7);
          }
          if (i + repeat > lengths.length) throw bad('code lengths beyond the count');
          lengths.fill(value, i, i + repeat);
          i += repeat;
        }
        if (lengths[256] === 0) throw bad('no end-of-block code');
        literals = table(lengths.subarray(0, nlit));
        distances = table(lengths.subarray(nlit));
      } else if (type !== 1) {
        throw bad('a block of unknown type');
      }
      const state = [pos, buffer, held, o];
      blockData(src, out, state, literals, distances);
      [pos, buffer, held, o] = state;
    } while (!last);
    if (pos - (held >> 3) > src.length) throw bad('it ends early');
    return out.subarray(0, o);
  };
})();
