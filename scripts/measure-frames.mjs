#!/usr/bin/env node
// Measure (not a test: nothing passes or fails) the frame-pair statistics of two 12-megapixel
// 16-bit frames in wasm in Chromium, against the same pass natively, and print the ratio.
//
// wasm: the built page's exported `time_pair_stats_ms(4000, 3000, repeats)` (crate/web), which
// makes the two frames in wasm memory and times only `engine::ptc::pair_sums` with
// performance.now (best of the repeats). native: the criterion bench
// crate/engine/benches/frame_stats.rs ("pair_sums (engine)", best of 15, same engine function,
// which natively picks its AVX2 build when the processor has it), unless --no-native.
// Needs scripts/build-page first. Usage: node scripts/measure-frames.mjs [--no-native]
import { execFileSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const DIST = resolve(ROOT, process.env.NOISE_BUDGET_DIST ?? 'dist');
const file = join(DIST, 'noise-budget.html');
if (!existsSync(file)) {
  console.error('measure-frames: no dist/noise-budget.html; run scripts/build-page first');
  process.exit(1);
}
const REPEATS = 15;

const browser = await chromium.launch({
  executablePath: process.env.CHROMIUM ?? '/usr/bin/chromium',
  headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking',
    '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-dev-shm-usage'],
});
let wasmMs;
try {
  const page = await browser.newPage();
  await page.goto(pathToFileURL(file).href);
  await page.waitForFunction(() => typeof window.wasmBindings?.time_pair_stats_ms === 'function', null, { timeout: 15000 });
  wasmMs = await page.evaluate((r) => window.wasmBindings.time_pair_stats_ms(4000, 3000, r), REPEATS);
} finally {
  await browser.close();
}
console.log(`wasm in Chromium: pair_sums, 12 MP 16-bit, best of ${REPEATS}: ${wasmMs.toFixed(2)} ms`);

if (process.argv.includes('--no-native')) process.exit(0);
const out = execFileSync('cargo', ['bench', '--locked', '-p', 'noise-budget-engine', '--bench', 'frame_stats', '--', '--noplot'],
  { cwd: ROOT, encoding: 'utf8', maxBuffer: 64 << 20, stdio: ['ignore', 'pipe', 'inherit'] });
const m = /pair_sums \(engine\)\s+([0-9.]+) ms/.exec(out);
if (!m) {
  console.error('measure-frames: the bench printed no "pair_sums (engine)" line');
  process.exit(1);
}
const nativeMs = Number(m[1]);
console.log(`native:           pair_sums, 12 MP 16-bit, best of 15: ${nativeMs.toFixed(2)} ms`);
console.log(`wasm / native:    ${(wasmMs / nativeMs).toFixed(2)} ×  (goal: within 2 ×)`);
const sizes = JSON.parse(readFileSync(join(DIST, 'sizes.json'), 'utf8'));
console.log(`single file:      ${(sizes.single_file.raw / 1024).toFixed(1)} KiB raw, ${(sizes.single_file.gzip / 1024).toFixed(1)} KiB gzip`);
