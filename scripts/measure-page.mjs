#!/usr/bin/env node
// Measure the built page (a measurement for the closing note, not a test: nothing here
// passes or fails). Reports the single file's and the wasm's sizes (dist/sizes.json), the time
// from navigation to the first result shown next to an empty static page's load in the same
// browser run (and next to the load of the page's own HTML and style without its script: the
// floor under the first result that no engine design removes), the time an edit takes to
// update the results, over 200 edits, and the time the curves take to be computed and redrawn
// with 1000 points each.
// Usage: node scripts/measure-page.mjs [dist]   (after scripts/build-page)
import { copyFileSync, mkdtempSync, readdirSync, readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';
import { serveStatic } from './static-server.mjs';

const dist = resolve(process.argv[2] ?? 'dist');
const RUNS = 15;
const EDITS = 200;
const sizes = JSON.parse(readFileSync(join(dist, 'sizes.json'), 'utf8'));

const emptyDir = mkdtempSync(join(tmpdir(), 'noise-budget-empty-'));
writeFileSync(join(emptyDir, 'index.html'),
  '<!doctype html><html lang="en"><head><meta charset="utf-8"><link rel="icon" href="data:,"><title>empty</title></head><body><p>empty</p></body></html>');

// The page's own HTML and style without its script (served, and the single file from file://):
// what the browser takes to load and lay out the page before any of the calculator runs, the
// floor under the first result for this page.
const bareDir = mkdtempSync(join(tmpdir(), 'noise-budget-bare-'));
const noScript = (html) => html.replace(/<script\b[^>]*>[\s\S]*?<\/script>/g, '');
for (const f of readdirSync(dist)) {
  if (f.endsWith('.css')) copyFileSync(join(dist, f), join(bareDir, f));
}
writeFileSync(join(bareDir, 'index.html'), noScript(readFileSync(join(dist, 'index.html'), 'utf8')));
writeFileSync(join(bareDir, 'noise-budget.html'), noScript(readFileSync(join(dist, 'noise-budget.html'), 'utf8')));

const page$ = await serveStatic(dist, 0);
const empty$ = await serveStatic(emptyDir, 0);
const bare$ = await serveStatic(bareDir, 0);
const bareServedUrl = `${bare$.origin}/`;
const bareSingleUrl = pathToFileURL(join(bareDir, 'noise-budget.html')).href;
const browser = await chromium.launch({
  executablePath: '/usr/bin/chromium', headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update',
    '--disable-sync', '--no-first-run', '--disable-dev-shm-usage'],
});

const median = (xs) => { const s = [...xs].sort((a, b) => a - b); const m = s.length >> 1; return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2; };
const pct = (xs, p) => { const s = [...xs].sort((a, b) => a - b); return s[Math.min(s.length - 1, Math.floor(p * s.length))]; };

async function loadTimes(url, firstResult) {
  const out = [];
  for (let i = 0; i < RUNS; i++) {
    const ctx = await browser.newContext();
    // When the first result is on screen: once the page says it is ready (html[data-ready], set
    // in the same task as the first result), the next animation frame, then a message task,
    // which runs after that frame's paint. Injected by the browser (not subject to the page's
    // CSP) and cheap: one observer, one frame callback.
    if (firstResult) {
      await ctx.addInitScript(() => {
        new MutationObserver((_, obs) => {
          if (!document.documentElement?.hasAttribute('data-ready')) return;
          obs.disconnect();
          requestAnimationFrame(() => {
            const ch = new MessageChannel();
            ch.port1.onmessage = () => { window.noiseBudgetResultPainted = performance.now(); };
            ch.port2.postMessage(0);
          });
        }).observe(document, { attributes: true, subtree: true, attributeFilter: ['data-ready'] });
      });
    }
    const page = await ctx.newPage();
    await page.goto(url);
    await page.waitForLoadState('load');
    // Wait for the first result by reading the page's marks, not with waitForSelector: that
    // injects Playwright's selector script into the page, about 17 ms of the main thread
    // during the page's start (seen in a Chromium trace), which the empty page never pays.
    while (firstResult && !(await page.evaluate(() => performance.getEntriesByName('noise-budget:first-result').length > 0))) {
      await new Promise((r) => setTimeout(r, 20));
    }
    // The first paint with content (Paint Timing): for the page, the one that shows the first
    // result when the calculator starts before the browser's first layout; waited for a moment
    // since the entry is queued after the paint.
    let fcp = NaN;
    for (let k = 0; k < 50 && Number.isNaN(fcp); k++) {
      fcp = await page.evaluate(() => performance.getEntriesByName('first-contentful-paint')[0]?.startTime ?? NaN);
      if (Number.isNaN(fcp)) await new Promise((r) => setTimeout(r, 20));
    }
    (loadTimes.fcp ??= {})[url] = [...(loadTimes.fcp[url] ?? []), fcp];
    const t = await page.evaluate((fr) => {
      const at = (name) => performance.getEntriesByName(name)[0]?.startTime ?? NaN;
      if (!fr) return { total: performance.getEntriesByType('navigation')[0].loadEventEnd };
      // Where the time goes: the script starts (HTML and script parsed), the wasm unpacked,
      // the wasm instantiated (mount starts), the first result written.
      return {
        painted: window.noiseBudgetResultPainted ?? NaN,
        total: at('noise-budget:first-result'),
        parts: [at('noise-budget:script-start'), at('noise-budget:wasm-unpacked'), at('noise-budget:mount-start'), at('noise-budget:first-result')],
      };
    }, firstResult);
    out.push(t.total);
    if (firstResult) {
      let painted = t.painted;
      for (let k = 0; k < 50 && Number.isNaN(painted); k++) {
        await new Promise((r) => setTimeout(r, 20));
        painted = await page.evaluate(() => window.noiseBudgetResultPainted ?? NaN);
      }
      (loadTimes.painted ??= {})[url] = [...(loadTimes.painted[url] ?? []), painted];
    }
    if (t.parts) (loadTimes.parts ??= {})[url] = [...(loadTimes.parts[url] ?? []), t.parts];
    await ctx.close();
  }
  return out;
}

// Alternate between targets so that machine load affects each alike.
const empty = [];
const served = [];
const single = [];
const bareServed = [];
const bareSingle = [];
for (let round = 0; round < 3; round++) {
  empty.push(...await loadTimes(`${empty$.origin}/`, false));
  bareServed.push(...await loadTimes(bareServedUrl, false));
  bareSingle.push(...await loadTimes(bareSingleUrl, false));
  served.push(...await loadTimes(`${page$.origin}/`, true));
  single.push(...await loadTimes(pathToFileURL(join(dist, 'noise-budget.html')).href, true));
}

// Edits: type a new value in a field, as the input event does; time until the results are
// written (the handler is synchronous), and until a forced style and layout of the page.
const ctx = await browser.newContext();
const page = await ctx.newPage();
await page.goto(`${page$.origin}/`);
await page.waitForSelector('html[data-ready]');
const edits = await page.evaluate(async (n) => {
  const input = document.querySelector('[name="sensor.read_noise_e"]');
  const figure = document.querySelector('[data-report="noise_e.read"]');
  const script = [];
  const layout = [];
  const curves = [];
  let changed = 0;
  const lastMark = (name) => performance.getEntriesByName(name).at(-1)?.startTime ?? NaN;
  for (let i = 0; i < n; i++) {
    const value = String(1 + (i % 50) / 10);
    const t0 = performance.now();
    input.value = value;
    input.dispatchEvent(new Event('input', { bubbles: true }));
    const t1 = performance.now();
    void document.body.offsetHeight; // force style and layout now
    const t2 = performance.now();
    if (figure.dataset.value === value) changed++;
    script.push(t1 - t0);
    layout.push(t2 - t0);
    // The curves follow at the next animation frame (200 points each by default).
    await new Promise((r) => requestAnimationFrame(() => setTimeout(r, 0)));
    curves.push(lastMark('noise-budget:curves-drawn') - t0);
  }
  return { script, layout, changed, curves };
}, EDITS);

// Curves: set the points per curve to 1000 (alternating with 999 so that every step computes
// anew), which sweeps the scenario's three views (light, exposure, temperature: 3 × 1000
// evaluations) and redraws the five charts; time until the charts are written, and until a
// forced style and layout.
const CURVE_RUNS = 40;
const curves = await page.evaluate(async (n) => {
  const input = document.getElementById('curve-points');
  // The charts in view, as a user looking at them sees them redrawn.
  document.getElementById('chart-exposure').scrollIntoView();
  const script = [];
  const layout = [];
  const sweeps = [];
  const one = [];
  let drawn = 0;
  const lastMark = (name) => performance.getEntriesByName(name).at(-1)?.startTime ?? NaN;
  for (let i = 0; i < n; i++) {
    const points = i % 2 ? 999 : 1000;
    const t0 = performance.now();
    input.value = String(points);
    input.dispatchEvent(new Event('input', { bubbles: true }));
    const t1 = performance.now();
    void document.body.offsetHeight;
    const t2 = performance.now();
    if (document.getElementById('chart-exposure').dataset.points === String(points)) drawn++;
    script.push(t1 - t0);
    layout.push(t2 - t0);
    sweeps.push(lastMark('noise-budget:curves-swept') - lastMark('noise-budget:curves-start'));
    // One 1000-point sweep with its plots: the exposure view's sweep, and its chart (SNR
    // against exposure time) built and written into the page.
    const span = (what) => lastMark(`noise-budget:${what}-end`) - lastMark(`noise-budget:${what}-start`);
    one.push(span('sweep-exposure') + span('chart-exposure'));
    await new Promise((r) => requestAnimationFrame(() => setTimeout(r, 0)));
  }
  return { script, layout, drawn, sweeps, one };
}, CURVE_RUNS);
await ctx.close();
await browser.close();
page$.server.close();
empty$.server.close();
bare$.server.close();

const ms = (x) => `${x.toFixed(1)} ms`;
const kb = (n) => `${(n / 1024).toFixed(1)} KiB (${n} B)`;
const result = {
  sizes,
  navigation_to_first_result_ms: { served_median: median(served), single_file_median: median(single), runs: served.length },
  empty_static_page_load_ms: { median: median(empty), runs: empty.length },
  page_without_its_script_load_ms: { served_median: median(bareServed), single_file_median: median(bareSingle), runs: bareServed.length },
  edit_to_updated_results_ms: {
    edits: EDITS, results_followed: edits.changed,
    script_median: median(edits.script), script_p95: pct(edits.script, 0.95),
    with_layout_median: median(edits.layout), with_layout_p95: pct(edits.layout, 0.95),
    curves_200_points_drawn_after_median: median(edits.curves),
  },
  curves_1000_points_ms: {
    runs: CURVE_RUNS, redraws_checked: curves.drawn, sweeps_only_median: median(curves.sweeps),
    one_sweep_and_its_chart_script_median: median(curves.one),
    script_median: median(curves.script), script_p95: pct(curves.script, 0.95),
    with_layout_median: median(curves.layout), with_layout_p95: pct(curves.layout, 0.95),
    fraction_of_frame_median: median(curves.layout) / (1000 / 60),
  },
  frame_budget_ms: 1000 / 60,
};
const out = resolve('tests/artifacts');
mkdirSync(out, { recursive: true });
writeFileSync(join(out, 'measurements.json'), `${JSON.stringify(result, null, 2)}\n`);
console.log(`single file   ${kb(sizes.single_file.raw)} raw, ${kb(sizes.single_file.gzip)} gzip (budget 300 KB gzip)`);
console.log(`wasm          ${kb(sizes.wasm.raw)} raw, ${kb(sizes.wasm.gzip)} gzip (the served page's one engine)`);
if (sizes.single_file_wasm) console.log(`single's wasm ${kb(sizes.single_file_wasm.raw)} raw, ${kb(sizes.single_file_wasm.gzip)} gzip${sizes.single_file_frames ? ' (the one engine)' : ' (the calculator alone)'}`);
console.log(`first result  served ${ms(median(served))}, single file ${ms(median(single))} (median of ${served.length}); ` +
  `empty static page load ${ms(median(empty))} (median of ${empty.length}); ` +
  `= ${(median(served) / median(empty)).toFixed(2)} × and ${(median(single) / median(empty)).toFixed(2)} × the empty page`);
{
  const [bv, bf] = [bareServedUrl, bareSingleUrl].map((url) => median(loadTimes.fcp[url]));
  console.log(`no script     the page's HTML and style alone: loaded served ${ms(median(bareServed))}, single file ${ms(median(bareSingle))} ` +
    `= ${(median(bareServed) / median(empty)).toFixed(2)} × and ${(median(bareSingle) / median(empty)).toFixed(2)} × the empty page; ` +
    `first paint ${ms(bv)} and ${ms(bf)} (medians)`);
}
{
  const fcp = (url) => median(loadTimes.fcp[url]);
  const [e, sv, sf] = [`${empty$.origin}/`, `${page$.origin}/`, pathToFileURL(join(dist, 'noise-budget.html')).href].map(fcp);
  console.log(`first paint   (first-contentful-paint) served ${ms(sv)}, single file ${ms(sf)}, empty page ${ms(e)} ` +
    `= ${(sv / e).toFixed(2)} × and ${(sf / e).toFixed(2)} × (medians)`);
  const painted = (url) => median(loadTimes.painted[url]);
  const [pv, pf] = [`${page$.origin}/`, pathToFileURL(join(dist, 'noise-budget.html')).href].map(painted);
  console.log(`result shown  (the paint after the first result) served ${ms(pv)}, single file ${ms(pf)} ` +
    `= ${(pv / median(empty)).toFixed(2)} × and ${(pf / median(empty)).toFixed(2)} × the empty page's load (medians)`);
}
for (const [url, runs] of Object.entries(loadTimes.parts ?? {})) {
  const step = (i) => ms(median(runs.map((r) => (i === 0 ? r[0] : r[i] - r[i - 1]))));
  console.log(`  ${url.startsWith('file:') ? 'single file' : 'served    '}  to script start ${step(0)}, unpack ${step(1)}, ` +
    `wasm start ${step(2)}, mount to first result ${step(3)} (medians)`);
}
console.log(`edit→results  median ${ms(median(edits.script))} script, ${ms(median(edits.layout))} with layout ` +
  `(p95 ${ms(pct(edits.layout, 0.95))}) over ${EDITS} edits, ${edits.changed} followed; one frame is ${ms(1000 / 60)}; ` +
  `curves (200 points) drawn ${ms(median(edits.curves))} after the edit`);
console.log(`curves       1000 points: median ${ms(median(curves.script))} script, ${ms(median(curves.layout))} with layout ` +
  `(p95 ${ms(pct(curves.layout, 0.95))}) = ${(median(curves.layout) / (1000 / 60)).toFixed(2)} of a frame, ` +
  `of which the three sweeps ${ms(median(curves.sweeps))}; one sweep (exposure) and its chart ${ms(median(curves.one))} script, ` +
  `over ${CURVE_RUNS} redraws, ${curves.drawn} checked`);
