#!/usr/bin/env node
// Measure (not a test: nothing passes or fails) the frame-pair statistics of two 12-megapixel
// 16-bit frames in wasm, in the page's frame worker in Chromium, against the same pass natively
// in this session, and print the ratio; then the page's sizes from dist/sizes.json.
//
// wasm: the worker embedded in the served page (dist/index.html, on a local server; the single
// file has none by default), started from its Blob URL as the page does, asked for
// `pair_stats_ms(4000, 3000, repeats)` (crate/frames-worker/src/bindings.rs):
// two synthetic frames made in wasm memory, only `engine::ptc::pair_sums` timed with the
// worker's performance.now, best of the repeats. native: the example
// crate/frames-worker/examples/pair_stats_native.rs (same frames, same engine function, which
// natively picks its AVX2 build when the processor has it; also the read-only floor), release
// build. Needs scripts/build-page first. Usage: node scripts/measure-frames.mjs [--no-native]
import { execFileSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';
import { serveStatic } from './static-server.mjs';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const DIST = resolve(ROOT, process.env.NOISE_BUDGET_DIST ?? 'dist');
if (!existsSync(join(DIST, 'index.html'))) {
  console.error('measure-frames: no dist/index.html; run scripts/build-page first');
  process.exit(1);
}
const [WIDTH, HEIGHT, REPEATS] = [4000, 3000, 20];

const browser = await chromium.launch({
  executablePath: process.env.CHROMIUM ?? '/usr/bin/chromium',
  headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking',
    '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-dev-shm-usage'],
});
const server = await serveStatic(DIST, 0);
let wasmMs;
try {
  const page = await browser.newPage();
  await page.goto(`${server.origin}/`);
  await page.waitForSelector('html[data-ready]', { timeout: 15000 });
  wasmMs = await page.evaluate((bench) => new Promise((resolvePromise, reject) => {
    // The frame worker as the page starts it: its app script as a classic worker, given the
    // page's compiled engine (crate/web/src/frames_ui/run.rs).
    const app = document.getElementById('noise-budget-app');
    if (!app?.hasAttribute('data-frames')) { reject(new Error('no frame worker in the page')); return; }
    const url = app.getAttribute('src') || URL.createObjectURL(new Blob([app.textContent], { type: 'text/javascript' }));
    const worker = new Worker(url);
    worker.postMessage({ engine: window.wasmBindings.module });
    worker.onmessage = (e) => {
      worker.terminate();
      URL.revokeObjectURL(url);
      if (e.data?.type === 'bench') resolvePromise(e.data.ms); else reject(new Error(JSON.stringify(e.data)));
    };
    worker.onerror = (e) => reject(new Error(e.message));
    worker.postMessage({ bench });
  }), { width: WIDTH, height: HEIGHT, repeats: REPEATS });
} finally {
  await browser.close();
  server.server.close();
}
const simd = /simd128/.test(readFileSync(join(ROOT, 'scripts/build-page'), 'utf8')) ? ' (simd128 build)' : '';
console.log(`wasm, frame worker in Chromium${simd}: pair_sums 12 MP 16-bit, best of ${REPEATS}: ${wasmMs.toFixed(2)} ms`);

if (!process.argv.includes('--no-native')) {
  const out = execFileSync('cargo', ['run', '--quiet', '--release', '--locked', '-p', 'noise-budget-frames-worker',
    '--example', 'pair_stats_native', '--', String(WIDTH), String(HEIGHT), String(REPEATS)],
  { cwd: ROOT, encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'] });
  const native = JSON.parse(out.trim().split('\n').pop());
  console.log(`native (same session):   pair_sums 12 MP 16-bit, best of ${REPEATS}: ${native.pair_stats_ms.toFixed(2)} ms` +
    `  (read-only floor ${native.read_only_ms.toFixed(2)} ms)`);
  console.log(`wasm / native:           ${(wasmMs / native.pair_stats_ms).toFixed(2)} ×  (goal: within 2 ×)`);
}
const sizes = JSON.parse(readFileSync(join(DIST, 'sizes.json'), 'utf8'));
const kb = (s) => `${(s.raw / 1024).toFixed(1)} KiB raw, ${(s.gzip / 1024).toFixed(1)} KiB gzip`;
console.log(`single file:             ${kb(sizes.single_file)}  (budget 300 KB gzip)`);
console.log(`page wasm (one engine):  ${kb(sizes.wasm)}`);
if (sizes.single_file_wasm) console.log(`single file's wasm:      ${kb(sizes.single_file_wasm)}${sizes.single_file_frames ? '' : ' (the calculator alone)'}`);
