// The page's synchronous inflater (scripts/inflate.js) against node's zlib (a general-purpose
// library computing the same thing): raw deflate streams of varied data at every zlib level
// and strategy (fixed and dynamic Huffman blocks, stored blocks, long and overlapping
// matches), zopfli's stream of this build's wasm as the page embeds it, and damaged streams,
// which must throw, never hang or return wrong bytes silently. Node only, no browser.
import assert from 'node:assert/strict';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { test } from 'node:test';
import vm from 'node:vm';
import zlib from 'node:zlib';
import { ROOT } from './helpers.mjs';

const inflate = vm.runInNewContext(`${readFileSync(join(ROOT, 'scripts/inflate.js'), 'utf8')}\nnoiseBudgetInflate`,
  { Uint8Array, Uint16Array, Int32Array, Error });

let seed = 12345;
const random = () => { seed = (seed * 1103515245 + 12345) >>> 0; return seed >>> 8; };
function sample(kind, n) {
  const b = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    if (kind === 'noise') b[i] = random() & 255;
    else if (kind === 'text') b[i] = 'the photon transfer curve of a sensor '.charCodeAt(random() % 38);
    else if (kind === 'runs') b[i] = (i >> 9) & 3;
    else b[i] = i < 7 ? i : b[i - 1 - (random() % 7)] ^ (random() % 50 === 0 ? 1 : 0); // matches
  }
  return b;
}

test('inflates what zlib deflates, byte for byte', () => {
  let streams = 0;
  for (const kind of ['noise', 'text', 'runs', 'matches']) {
    for (const n of [0, 1, 2, 258, 32768, 100003]) {
      const data = sample(kind, n);
      for (const level of [0, 1, 6, 9]) {
        for (const strategy of [zlib.constants.Z_DEFAULT_STRATEGY, zlib.constants.Z_FIXED, zlib.constants.Z_HUFFMAN_ONLY, zlib.constants.Z_RLE]) {
          const packed = zlib.deflateRawSync(data, { level, strategy });
          const got = inflate(new Uint8Array(packed), new Uint8Array(n));
          assert.equal(Buffer.compare(Buffer.from(got), Buffer.from(data)), 0, `${kind} ${n} B, level ${level}, strategy ${strategy}`);
          streams++;
        }
      }
    }
  }
  assert.equal(streams, 4 * 6 * 4 * 4);
});

test("inflates the page's own embedded wasm (zopfli's stream) to the wasm", () => {
  const dist = join(ROOT, process.env.NOISE_BUDGET_DIST ?? 'dist');
  const app = readdirSync(dist).find((f) => /^app-[0-9a-f]+\.js$/.test(f));
  assert.ok(app, 'a built page (scripts/build-page)');
  const text = readFileSync(join(dist, app), 'utf8');
  const b64 = text.match(/const NOISE_BUDGET_WASM_PACKED = "([^"]+)"/)[1];
  const size = Number(text.match(/const NOISE_BUDGET_WASM_BYTES = (\d+);/)[1]);
  const packed = Buffer.from(b64, 'base64');
  const got = inflate(new Uint8Array(packed), new Uint8Array(size));
  assert.equal(Buffer.compare(Buffer.from(got), zlib.inflateRawSync(packed)), 0);
  assert.ok(WebAssembly.validate(got), 'a valid wasm module');
});

// Raw deflate has no checksum, so a flipped bit may decode to other bytes (the page's script
// is protected by its CSP hash, and the wasm's compile and length are checked after): what is
// checked here is that damage never hangs, never throws anything but the inflater's own error,
// and that truncated input and too little room are named.
test("damaged streams end with the inflater's own error or other bytes, never a hang", () => {
  const data = sample('text', 50000);
  const packed = new Uint8Array(zlib.deflateRawSync(data, { level: 9 }));
  let threw = 0;
  for (let k = 0; k < 500; k++) {
    const bad = packed.slice();
    for (let flips = 1 + (k % 3); flips > 0; flips--) bad[random() % bad.length] ^= 1 << (random() % 8);
    try {
      const got = inflate(bad, new Uint8Array(data.length));
      assert.ok(got.length <= data.length);
    } catch (err) {
      assert.match(String(err), /^Error: bad deflate data: /);
      threw++;
    }
  }
  assert.ok(threw > 0, 'some damaged streams are refused');
  assert.throws(() => inflate(packed.subarray(0, packed.length >> 1), new Uint8Array(data.length)), /bad deflate data: it ends early/);
  assert.throws(() => inflate(packed, new Uint8Array(data.length - 1)), /more output than expected/);
  assert.throws(() => inflate(new Uint8Array([0xff, 0xff]), new Uint8Array(10)), /bad deflate data/);
});
