#!/usr/bin/env node
// Measure (not a test: nothing passes or fails) `characterize` over a 12-megapixel colour series
// with L = 16 frames per stack, against a plain read of the same files, natively and in the
// page's frame worker in Chromium, and print the ratios (issue 10, item 6).
//
// The series (invented data, written to a temporary folder): an RGGB sensor (red and blue at
// 0.55 and 0.40 of green) writing 12-bit samples at the top of 16-bit PGM files, one dark stack
// of 16 frames, one flat stack of 16 frames near half of saturation and one of 2 frames
// (the gain needs two levels): 34 files of 24 MB. Noise is uniform with the variance of the
// Poisson–Gaussian model (not a physical draw; only the timing matters here).
// native: `noise-budget characterize` (release build) timed against reading every file once
// (node's readFileSync), same session. worker: the served page (dist/index.html on a local
// server), the files chosen and analysed as a person does (time from Analyse to the answer),
// against reading the same File objects once with arrayBuffer() in the page. same code: the
// worker's analysis natively and its wasm in node, files read before each is given (below).
// Needs scripts/build-page first.
// Usage: node scripts/measure-series.mjs [--keep] [--rounds N] [--baseline OTHER_DIST_DIR]
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';
import { serveStatic } from './static-server.mjs';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const DIST = resolve(ROOT, 'dist');
const [W, H] = [4000, 3000];
const dir = mkdtempSync(join(tmpdir(), 'noise-budget-series-'));
const K = 0.25; const OFFSET = 100; const READ_E = 3;
const RESPONSE = [0.55, 1, 0.98, 0.4];
let state = 0x9e3779b9;
const u = () => { state ^= state << 13; state >>>= 0; state ^= state >>> 17; state ^= state << 5; state >>>= 0; return state / 4294967296; };
function frame(e) {
  const header = Buffer.from(`P5\n${W} ${H}\n65535\n`);
  const data = Buffer.alloc(W * H * 2);
  const sd = [0, 1, 2, 3].map((p) => Math.sqrt(12 * (e * RESPONSE[p] + READ_E * READ_E)));
  for (let y = 0; y < H; y++) {
    for (let x = 0; x < W; x++) {
      const p = (y & 1) * 2 + (x & 1);
      const dn = Math.round(OFFSET + K * (e * RESPONSE[p] + sd[p] * (u() - 0.5)));
      data.writeUInt16BE(Math.min(4095, Math.max(0, dn)) << 4, 2 * (y * W + x));
    }
  }
  return Buffer.concat([header, data]);
}
const frames = [];
const plan = [['dark', 'd', 0, 16], ['flat', 'half', 6000, 16], ['flat', 'low', 2000, 2]];
for (const [kind, level, e, n] of plan) {
  for (let j = 0; j < n; j++) {
    const path = `${level}${j}.pgm`;
    writeFileSync(join(dir, path), frame(e));
    frames.push({ path, kind, exposure_time_s: 0.01, level });
  }
}
const manifest = join(dir, 'manifest.json');
writeFileSync(manifest, JSON.stringify({ version: 1, cfa: 'RGGB', frames }));
const files = [manifest, ...frames.map((f) => join(dir, f.path))];
console.log(`series: ${frames.length} files of ${W} × ${H} 16-bit PGM (${(frames.length * W * H * 2 / 1e9).toFixed(2)} GB), RGGB, L = 16`);

const ms = (t) => Number(process.hrtime.bigint() - t) / 1e6;
const arg = (name) => { const i = process.argv.indexOf(name); return i > 0 ? process.argv[i + 1] : undefined; };
const rounds = Math.max(1, Number(arg('--rounds') ?? 1));
const median = (xs) => { const s = [...xs].sort((a, b) => a - b); const m = s.length >> 1; return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2; };
execFileSync('cargo', ['build', '--quiet', '--release', '--locked', '-p', 'noise-budget'], { cwd: ROOT, stdio: 'inherit' });
const exe = join(ROOT, 'target/release/noise-budget');
// The plain read and the command alternated, --rounds N times (medians).
const reads = []; const runs = [];
let sum = 0; let c;
for (let r = 0; r < rounds; r++) {
  let t = process.hrtime.bigint();
  sum = 0;
  for (const f of files) sum += readFileSync(f).length;
  reads.push(ms(t));
  t = process.hrtime.bigint();
  const out = execFileSync(exe, ['characterize', manifest], { encoding: 'utf8', maxBuffer: 1 << 28 });
  runs.push(ms(t));
  c = JSON.parse(out);
}
const readMs = median(reads); const nativeMs = median(runs);
console.log(`native: plain read ${readMs.toFixed(0)} ms (${sum} bytes), characterize ${nativeMs.toFixed(0)} ms = ${(nativeMs / readMs).toFixed(2)} × the read` +
  ` (K green ${c.sensor.system_gain_dn_per_e.toFixed(4)} DN/e⁻, adc_bits ${c.sensor.adc_bits})` +
  (rounds > 1 ? ` (medians of ${rounds}, alternated; reads ${reads.map((x) => x.toFixed(0)).join(', ')}; runs ${runs.map((x) => x.toFixed(0)).join(', ')} ms)` : ''));

// The same code, without the browser's file reading: the worker's analysis (its Job) natively
// (crate/frames-worker/examples/job_native.rs) and in the page's one engine, the build
// scripts/build-page made, in node's V8 (target nodejs glue, wasm-opt -Oz as the build), each file read into
// memory before it is given and only the giving timed; best of 3 each, alternated. Both run on
// one thread: the worker crate builds the engine without its `threads` feature, which the CLI
// above has (so `characterize` is also faster than this native line).
function sameCode() {
  const built = join(ROOT, 'target/wasm32-unknown-unknown/release/noise_budget_web.wasm');
  if (!existsSync(built)) return console.log('same code: skipped (no page build; run scripts/build-page)');
  const glue = mkdtempSync(join(tmpdir(), 'noise-budget-worker-node-'));
  try {
    execFileSync('wasm-bindgen', ['--target', 'nodejs', '--no-typescript', '--out-dir', glue, built]);
    const wasm = join(glue, 'noise_budget_web_bg.wasm');
    execFileSync(join(ROOT, 'node_modules/binaryen/bin/wasm-opt'), ['-Oz', '--enable-simd', '--enable-bulk-memory',
      '--enable-nontrapping-float-to-int', '--enable-sign-ext', '--enable-mutable-globals', '-o', wasm, wasm]);
    const driver = join(glue, 'drive.cjs');
    writeFileSync(driver, `const w = require(${JSON.stringify(join(glue, 'noise_budget_web.js'))});
const fs = require('fs'); const dir = ${JSON.stringify(dir)};
const manifest = fs.readFileSync(dir + '/manifest.json', 'utf8'); const paths = JSON.parse(manifest).frames.map((f) => f.path);
let give = 0; const job = w.Analysis.start(manifest); let i;
while ((i = job.wanted()) !== undefined) { const b = fs.readFileSync(dir + '/' + paths[i]); const t = performance.now(); job.give(i, b); give += performance.now() - t; }
const ok = job.answer().startsWith('{"result"'); console.log(JSON.stringify({ give_ms: give, ok }));`);
    execFileSync('cargo', ['build', '--quiet', '--release', '--locked', '-p', 'noise-budget-frames-worker', '--example', 'job_native'], { cwd: ROOT, stdio: 'inherit' });
    const native = []; const wasmRuns = [];
    for (let r = 0; r < 3; r++) {
      native.push(JSON.parse(execFileSync(join(ROOT, 'target/release/examples/job_native'), [dir], { encoding: 'utf8' })));
      wasmRuns.push(JSON.parse(execFileSync(process.execPath, [driver], { encoding: 'utf8' })));
    }
    if (![...native, ...wasmRuns].every((x) => x.ok)) return console.log('same code: an analysis failed');
    const n = Math.min(...native.map((x) => x.give_ms)); const wm = Math.min(...wasmRuns.map((x) => x.give_ms));
    console.log(`same code (the worker's Job, files already read, one thread): native ${n.toFixed(0)} ms, wasm in node ${wm.toFixed(0)} ms` +
      ` = ${(wm / n).toFixed(2)} × native (best of 3 each, alternated)`);
  } finally {
    rmSync(glue, { recursive: true, force: true });
  }
}
sameCode();

const browser = await chromium.launch({
  executablePath: process.env.CHROMIUM ?? '/usr/bin/chromium', headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--disable-dev-shm-usage'],
});
// The page's worker on one built page: the same File objects read once in the page (the floor),
// then the analysis as a person starts it (time from Analyse to the answer).
async function workerRun(distDir) {
  const server = await serveStatic(distDir, 0);
  const ctx = await browser.newContext();
  try {
    const page = await ctx.newPage();
    await page.goto(`${server.origin}/`);
    await page.waitForSelector('html[data-ready]', { timeout: 15000 });
    await page.evaluate(() => { const i = document.createElement('input'); i.type = 'file'; i.multiple = true; i.id = 'bench-files'; document.body.append(i); });
    await page.setInputFiles('#bench-files', files);
    const readMs = await page.evaluate(async () => {
      const t0 = performance.now();
      let n = 0;
      for (const f of document.getElementById('bench-files').files) n += (await f.arrayBuffer()).byteLength;
      return performance.now() - t0 + n * 0;
    });
    await page.setInputFiles('#measure-files', files);
    await page.waitForFunction(() => /described/.test(document.getElementById('measure-status')?.textContent ?? ''));
    const t0 = Date.now();
    await page.click('#measure-run');
    await page.waitForFunction(() => /^Analysed|could not be analysed/.test(document.getElementById('measure-status')?.textContent ?? ''), null, { timeout: 600000 });
    const ms = Date.now() - t0;
    const k = await page.$eval('[data-measure="system_gain_dn_per_e"]', (e) => e.dataset.value);
    return { readMs, ms, k: Number(k) };
  } finally {
    await ctx.close();
    server.server.close();
  }
}
// --baseline DIR: another built page (an earlier dist/) run alternately with this one, so that
// the machine's load falls on both alike; --rounds N runs of each (medians reported).
const baseline = arg('--baseline');
try {
  const ours = []; const theirs = [];
  for (let r = 0; r < rounds; r++) {
    if (baseline) theirs.push(await workerRun(resolve(baseline)));
    ours.push(await workerRun(DIST));
  }
  const read = median(ours.map((x) => x.readMs)); const ms = median(ours.map((x) => x.ms));
  console.log(`worker: plain read in the page ${read.toFixed(0)} ms, analysis ${ms.toFixed(0)} ms = ${(ms / read).toFixed(2)} × the read` +
    ` (K green ${ours[0].k.toFixed(4)}); worker / native ${(ms / nativeMs).toFixed(2)} ×` + (rounds > 1 ? ` (medians of ${rounds})` : ''));
  if (baseline) {
    const b = median(theirs.map((x) => x.ms));
    console.log(`baseline ${baseline}: analysis ${b.toFixed(0)} ms (K green ${theirs[0].k.toFixed(4)}); this page / baseline ${(ms / b).toFixed(2)} ×` +
      ` (runs: this ${ours.map((x) => x.ms).join(', ')} ms; baseline ${theirs.map((x) => x.ms).join(', ')} ms)`);
  }
} finally {
  await browser.close();
  if (!process.argv.includes('--keep')) rmSync(dir, { recursive: true, force: true });
}
