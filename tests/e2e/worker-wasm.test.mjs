// The page's one engine (crate/web's wasm with the frame worker's exports, the simd128 build
// scripts/build-page made, which the page's frame worker instantiates) run in node against the
// command line's native `characterize` on the same files: every number of the two answers
// equal (1e-12 relative, as helpers.mjs). The series exercises what the browser tests' pairs
// do not: stacks of ten and six frames (two pairs summed in one pass, then one pair; the first
// pass and the later ones), a dark stack's per-pixel squared differences with a few noisy
// pixels (L ≥ 8, so they set the high-noise counts and histograms), and a width that is no
// multiple of the SIMD lanes. Node only, no browser; needs scripts/build-page first (as the e2e suite does).
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { test } from 'node:test';
import { cli, RELATIVE_TOLERANCE, ROOT } from './helpers.mjs';

const BUILT = join(ROOT, 'target/wasm32-unknown-unknown/release/noise_budget_web.wasm');
const [W, H] = [203, 61];

/** The native build of the worker's job (its example `job_native`), built on first use. */
function jobNative() {
  const out = execFileSync('cargo', ['build', '--quiet', '--locked', '-p', 'noise-budget-frames-worker', '--example', 'job_native',
    '--message-format=json'], { cwd: ROOT, encoding: 'utf8', maxBuffer: 64 << 20 });
  for (const line of out.split('\n')) {
    if (!line.startsWith('{')) continue;
    const msg = JSON.parse(line);
    if (msg.reason === 'compiler-artifact' && msg.executable && msg.target?.name === 'job_native') return msg.executable;
  }
  throw new Error('cargo built no job_native executable');
}

// Invented data: an RGGB sensor (red and blue at 0.6 and 0.45 of green) writing 12-bit samples
// at the top of 16-bit PGM files; uniform noise with the Poisson–Gaussian variance (only the
// arithmetic is under test); in the darks every 97th pixel is twenty times as noisy.
let state = 0x2545f491;
const u = () => { state ^= state << 13; state >>>= 0; state ^= state >>> 17; state ^= state << 5; state >>>= 0; return state / 4294967296; };
function pgm(e) {
  const data = Buffer.alloc(W * H * 2);
  const response = [0.6, 1, 0.97, 0.45];
  for (let i = 0; i < W * H; i++) {
    const p = (Math.floor(i / W) % 2) * 2 + (i % W) % 2;
    const m = e * response[p];
    const loud = e === 0 && i % 97 === 0 ? 20 : 1;
    const sd = loud * Math.sqrt(12 * (m + 9));
    const dn = Math.round(64 + 0.3 * (m + sd * (u() - 0.5)));
    data.writeUInt16BE(Math.min(4095, Math.max(0, dn)) << 4, 2 * i);
  }
  return Buffer.concat([Buffer.from(`P5\n${W} ${H}\n65535\n`), data]);
}

/** Every number in `want` equals the one at the same place in `got` (relative tolerance). */
function sameNumbers(got, want, path = 'answer') {
  if (typeof want === 'number') {
    assert.equal(typeof got, 'number', path);
    assert.ok(Math.abs(got - want) <= RELATIVE_TOLERANCE * Math.abs(want), `${path}: wasm ${got}, native ${want}`);
  } else if (Array.isArray(want)) {
    assert.ok(Array.isArray(got) && got.length === want.length, `${path}: length`);
    want.forEach((w, i) => sameNumbers(got[i], w, `${path}[${i}]`));
  } else if (want && typeof want === 'object') {
    // The worker's answer also carries the page's plot series, which the command leaves out.
    for (const k of Object.keys(want)) {
      assert.ok(got && k in got, `${path}.${k}: missing from the wasm answer`);
      sameNumbers(got[k], want[k], `${path}.${k}`);
    }
  } else {
    assert.equal(got, want, path);
  }
}

test('the worker\'s wasm gives the native characterize answer, number for number', { skip: !existsSync(BUILT) && 'no worker build (scripts/build-page)' }, () => {
  const dir = mkdtempSync(join(tmpdir(), 'noise-budget-worker-wasm-'));
  try {
    const frames = [];
    for (const [kind, level, e, n] of [['dark', 'd', 0, 10], ['flat', 'half', 5000, 6], ['flat', 'low', 1500, 2], ['flat', 'high', 9000, 2]]) {
      for (let j = 0; j < n; j++) {
        const path = `${level}${j}.pgm`;
        writeFileSync(join(dir, path), pgm(e));
        frames.push({ path, kind, exposure_time_s: 0.01, level });
      }
    }
    const manifest = JSON.stringify({ version: 1, cfa: 'RGGB', frames });
    writeFileSync(join(dir, 'manifest.json'), manifest);
    const want = JSON.parse(execFileSync(cli(), ['characterize', join(dir, 'manifest.json')], { encoding: 'utf8' }));
    assert.equal(want.sensor.adc_bits, 12);
    const noisy = want.channels.map((c) => c.figures.find((f) => f.key === 'high_noise_pixels')?.value);
    assert.ok(noisy.every((v) => v > 0), `the noisy dark pixels are counted in every channel: ${noisy}`);

    execFileSync('wasm-bindgen', ['--target', 'nodejs', '--no-typescript', '--out-dir', dir, BUILT]);
    const worker = createRequire(import.meta.url)(join(dir, 'noise_budget_web.js'));
    const job = worker.Analysis.start(manifest);
    let index;
    let given = 0;
    while ((index = job.wanted()) !== undefined) {
      job.give(index, readFileSync(join(dir, frames[index].path)));
      given++;
    }
    assert.ok(given >= frames.length, 'every file given');
    const answer = JSON.parse(job.answer());
    assert.ok(answer.result, `the wasm analysis failed: ${JSON.stringify(answer).slice(0, 300)}`);
    sameNumbers(answer.result, want);
    // And the whole answer, the page's plot series included (histograms, profiles,
    // spectrograms: the command leaves them out), against the worker's own code run natively
    // (crate/frames-worker/examples/job_native.rs --answer), so the wasm-only SIMD paths of the
    // spatial summaries are checked too.
    const native = JSON.parse(execFileSync(jobNative(), [dir, '--answer'], { encoding: 'utf8', maxBuffer: 64 << 20 }));
    assert.ok(native.result, `the native job failed: ${JSON.stringify(native).slice(0, 300)}`);
    sameNumbers(answer, native, 'whole answer');
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
});
