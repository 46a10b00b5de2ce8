// The self-contained file's LZMA decoder (scripts/unlzma.js) against Python's lzma module
// (liblzma, a general-purpose library computing the same thing): raw LZMA1 streams of varied
// data at several presets and literal/position settings (liblzma takes lc + lp at most 4), the single file's own embedded wasm,
// and damaged streams, which must throw the decoder's own error or give other bytes, never
// hang. Node only, no browser; needs python3 (as the page build does).
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { test } from 'node:test';
import vm from 'node:vm';
import { ROOT } from './helpers.mjs';

const unlzma = vm.runInNewContext(`${readFileSync(join(ROOT, 'scripts/unlzma.js'), 'utf8')}\nnoiseBudgetUnlzma`,
  { Uint8Array, Uint16Array, Error });

/** Python's raw LZMA1 of `data` with the given preset and lc/lp/pb. */
function pack(data, preset, lc, lp, pb) {
  const program = `import lzma, sys
f = [{"id": lzma.FILTER_LZMA1, "preset": ${preset}, "lc": ${lc}, "lp": ${lp}, "pb": ${pb}}]
sys.stdout.buffer.write(lzma.compress(sys.stdin.buffer.read(), format=lzma.FORMAT_RAW, filters=f))`;
  return new Uint8Array(execFileSync(process.env.PYTHON ?? 'python3', ['-c', program], { input: data, maxBuffer: 64 << 20 }));
}

let seed = 4242;
const random = () => { seed = (seed * 1103515245 + 12345) >>> 0; return seed >>> 8; };
function sample(kind, n) {
  const b = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    if (kind === 'noise') b[i] = random() & 255;
    else if (kind === 'text') b[i] = 'the photon transfer curve of a sensor '.charCodeAt(random() % 38);
    else if (kind === 'runs') b[i] = (i >> 9) & 3;
    // Repeats at a few recent distances with rare changes: rep0..rep3, short reps, long matches.
    else b[i] = i < 7 ? i : b[i - 1 - (random() % 7)] ^ (random() % 50 === 0 ? 1 : 0);
  }
  return b;
}

test('decodes what liblzma encodes, byte for byte', () => {
  let streams = 0;
  for (const kind of ['noise', 'text', 'runs', 'matches']) {
    for (const n of [1, 2, 273, 70001]) {
      const data = sample(kind, n);
      for (const [preset, lc, lp, pb] of [[0, 3, 0, 2], [6, 3, 0, 0], [9, 0, 2, 2], [9, 4, 0, 4], [9, 1, 3, 1]]) {
        const packed = pack(data, preset, lc, lp, pb);
        const got = unlzma(packed, lc, lp, pb, new Uint8Array(n));
        assert.equal(Buffer.compare(Buffer.from(got), Buffer.from(data)), 0, `${kind} ${n} B, preset ${preset}, lc ${lc} lp ${lp} pb ${pb}`);
        streams++;
      }
    }
  }
  assert.equal(streams, 4 * 4 * 5);
});

test("decodes the single file's own embedded wasm to a valid module", () => {
  const dist = join(ROOT, process.env.NOISE_BUDGET_DIST ?? 'dist');
  const html = readFileSync(join(dist, 'noise-budget.html'), 'utf8');
  const b64 = html.match(/const NOISE_BUDGET_WASM_PACKED = "([^"]+)"/)[1];
  const size = Number(html.match(/const NOISE_BUDGET_WASM_BYTES = (\d+);/)[1]);
  const call = html.match(/noiseBudgetUnlzma\(noiseBudgetBytes\(NOISE_BUDGET_WASM_PACKED\), (\d), (\d), (\d),/);
  assert.ok(call, 'the single file unpacks its wasm with noiseBudgetUnlzma');
  const [lc, lp, pb] = call.slice(1).map(Number);
  const got = unlzma(new Uint8Array(Buffer.from(b64, 'base64')), lc, lp, pb, new Uint8Array(size));
  assert.equal(got.length, size);
  assert.ok(WebAssembly.validate(got), 'a valid wasm module');
});

// Raw LZMA has no checksum, so damage may decode to other bytes (the page checks the length
// and that the wasm compiles, and the script is protected by its CSP hash): checked here is
// that damage never hangs and never throws anything but the decoder's own error.
test("damaged streams end with the decoder's own error or other bytes, never a hang", () => {
  const data = sample('text', 30000);
  const packed = pack(data, 6, 3, 0, 0);
  let threw = 0;
  for (let k = 0; k < 400; k++) {
    const bad = packed.slice();
    for (let flips = 1 + (k % 3); flips > 0; flips--) bad[1 + (random() % (bad.length - 1))] ^= 1 << (random() % 8);
    try {
      const got = unlzma(bad, 3, 0, 0, new Uint8Array(data.length));
      assert.equal(got.length, data.length);
    } catch (err) {
      assert.match(String(err), /^Error: bad LZMA data: /);
      threw++;
    }
  }
  assert.ok(threw > 0, 'some damaged streams are refused');
  assert.throws(() => unlzma(packed.subarray(0, packed.length >> 1), 3, 0, 0, new Uint8Array(data.length)), /bad LZMA data: the data ends early/);
  assert.throws(() => unlzma(new Uint8Array([1, 0, 0, 0, 0, 0]), 3, 0, 0, new Uint8Array(10)), /no range coder start/);
  assert.throws(() => unlzma(new Uint8Array(3), 3, 0, 0, new Uint8Array(10)), /no range coder start/);
  assert.throws(() => unlzma(packed, 9, 0, 0, new Uint8Array(10)), /properties out of range/);
});
