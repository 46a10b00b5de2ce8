// The pages' LZMA unpacker (crate/unpack's wasm, as the built single file embeds it) against
// Python's lzma module (liblzma, a general-purpose library computing the same thing): raw
// LZMA1 streams of varied data at several presets and literal/position settings (liblzma
// takes lc + lp at most 4), the single file's own embedded wasm (the served page's is plain
// base64, checked here too), and damaged streams, which must end
// with the unpacker's own error or other bytes, never a hang or a trap. Node only, no browser;
// needs python3 (as the page build does).
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { test } from 'node:test';
import { ROOT } from './helpers.mjs';

const DIST = join(ROOT, process.env.NOISE_BUDGET_DIST ?? 'dist');
const SINGLE = readFileSync(join(DIST, 'noise-budget.html'), 'utf8');
const UNPACKER = new WebAssembly.Module(Buffer.from(SINGLE.match(/const NOISE_BUDGET_UNPACKER = "([^"]+)"/)[1], 'base64'));

/** The unpacker's code (0: the output is whole) and output, run as the page's script runs it. */
function unlzma(packed, lc, lp, pb, size) {
  const { memory, unlzma: run, unlzma_probs } = new WebAssembly.Instance(UNPACKER, {}).exports;
  const probs = unlzma_probs(lc, lp);
  const at = (memory.buffer.byteLength + 7) & ~7;
  const from = at + probs * 2;
  const to = from + packed.length;
  memory.grow(Math.ceil((to + size - memory.buffer.byteLength) / 65536));
  new Uint8Array(memory.buffer, from, packed.length).set(packed);
  const code = run(from, packed.length, to, size, at, probs, lc | (lp << 8) | (pb << 16));
  return { code, out: new Uint8Array(memory.buffer, to, size) };
}

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
        const { code, out } = unlzma(pack(data, preset, lc, lp, pb), lc, lp, pb, n);
        assert.equal(code, 0, `${kind} ${n} B, preset ${preset}, lc ${lc} lp ${lp} pb ${pb}`);
        assert.equal(Buffer.compare(Buffer.from(out), Buffer.from(data)), 0, `${kind} ${n} B, preset ${preset}, lc ${lc} lp ${lp} pb ${pb}`);
        streams++;
      }
    }
  }
  assert.equal(streams, 4 * 4 * 5);
});

test("unpacks the single file's own embedded wasm to a valid module", () => {
  const b64 = SINGLE.match(/const NOISE_BUDGET_WASM_PACKED = "([^"]+)"/)[1];
  const size = Number(SINGLE.match(/const NOISE_BUDGET_WASM_BYTES = (\d+);/)[1]);
  const call = SINGLE.match(/unlzma\(from, packed\.length, to, size, at, probs, (\d+)\)/);
  assert.ok(call, 'the script unpacks with the unpacker');
  const props = Number(call[1]);
  const { code, out } = unlzma(Buffer.from(b64, 'base64'), props & 255, (props >> 8) & 255, (props >> 16) & 255, size);
  assert.equal(code, 0);
  assert.ok(WebAssembly.validate(out), 'a valid wasm module');
});

// The served page has no size budget and holds its wasm as plain base64 (no unpacking at its
// start): no unpacker in its script, and the base64 is the whole module.
test("the served page's embedded wasm is plain base64 of a valid module", () => {
  const text = readFileSync(join(DIST, readdirSync(DIST).find((f) => /^app-[0-9a-f]+\.js$/.test(f))), 'utf8');
  assert.doesNotMatch(text, /NOISE_BUDGET_WASM_PACKED|NOISE_BUDGET_UNPACKER/, 'nothing packed');
  const wasm = Buffer.from(text.match(/const NOISE_BUDGET_WASM = "([^"]+)"/)[1], 'base64');
  assert.equal(wasm.length, Number(text.match(/const NOISE_BUDGET_WASM_BYTES = (\d+);/)[1]));
  assert.ok(WebAssembly.validate(wasm), 'a valid wasm module');
});

// Raw LZMA has no checksum, so damage may decode to other bytes (the page checks that the wasm
// compiles, and the script is protected by its CSP hash): checked here is that damage never
// hangs or traps and ends with one of the unpacker's codes.
test("damaged streams end with the unpacker's own code or other bytes, never a hang", () => {
  const data = sample('text', 30000);
  const packed = pack(data, 6, 3, 0, 0);
  let refused = 0;
  for (let k = 0; k < 400; k++) {
    const bad = packed.slice();
    for (let flips = 1 + (k % 3); flips > 0; flips--) bad[1 + (random() % (bad.length - 1))] ^= 1 << (random() % 8);
    const { code } = unlzma(bad, 3, 0, 0, data.length);
    assert.ok(code >= 0 && code <= 6, `code ${code}`);
    if (code !== 0) refused++;
  }
  assert.ok(refused > 0, 'some damaged streams are refused');
  assert.equal(unlzma(packed.subarray(0, packed.length >> 1), 3, 0, 0, data.length).code, 3, 'ends early');
  assert.equal(unlzma(packed, 3, 0, 0, data.length + 5).code, 6, 'the end marker before the whole output');
  assert.equal(unlzma(new Uint8Array([1, 0, 0, 0, 0, 0]), 3, 0, 0, 10).code, 2, 'not a range coder start');
  assert.equal(unlzma(new Uint8Array(3), 3, 0, 0, 10).code, 2, 'too short to start');
  assert.equal(unlzma(packed, 3, 0, 5, 10).code, 1, 'pb out of range');
});
