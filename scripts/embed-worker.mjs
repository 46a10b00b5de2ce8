#!/usr/bin/env node
// Embed the frame worker (crate/frames-worker) in a built page, after scripts/single-file.mjs.
//
// The worker's script is the wasm-bindgen glue (target no-modules), the wasm as base64 of its
// gzip (inflated in the worker with DecompressionStream), and crate/frames-worker/boot.js. It
// goes into the page (dist/index.html or dist/noise-budget.html) as a data block,
//   <script type="text/plain" id="frames-worker-script">…</script>,
// which the browser never runs: the page (crate/web/src/frames_ui/run.rs) starts it from a Blob URL
// only when frames are analysed (the CSP's `worker-src blob:`), so no request is ever made for
// it. The served page (index.html) gets the same script as a file of its own beside it, which
// the data block names (data-src) and the page starts only when frames are analysed. Sizes are added to sizes.json next to the page.
// Usage: node scripts/embed-worker.mjs PAGE.html WORKER_DIR   (WORKER_DIR: wasm-bindgen's output)
import { createHash } from 'node:crypto';
import { readFileSync, writeFileSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';
import { gzipAsync } from '@gfx/zopfli';

const [pagePath, workerDir] = process.argv.slice(2);
const fail = (msg) => { console.error(`embed-worker: ${msg}`); process.exit(1); };
if (!pagePath || !workerDir) fail('usage: embed-worker.mjs PAGE.html WORKER_DIR');

const here = dirname(fileURLToPath(import.meta.url));
const glue = readFileSync(join(workerDir, 'noise_budget_frames_worker.js'), 'utf8');
const wasm = readFileSync(join(workerDir, 'noise_budget_frames_worker_bg.wasm'));
const boot = readFileSync(join(here, '../crate/frames-worker/boot.js'), 'utf8');
if (!/\bwasm_bindgen\b/.test(glue)) fail('the glue defines no wasm_bindgen (build it with --target no-modules)');

// Zopfli's gzip, as for the page's wasm (scripts/single-file.mjs): smaller, inflated the same.
const wasmGz = Buffer.from(await gzipAsync(wasm, { numiterations: 15 }));
const script = `${glue}\nconst NOISE_BUDGET_FRAMES_WASM = "${wasmGz.toString('base64')}";\n${boot}`;
// Inside a data block only `</script` and `<!--` could end or confuse it; neither may appear.
if (/<\/script|<!--/i.test(script)) fail('the worker script contains </script or <!--, which a data block cannot hold');

const ID = 'frames-worker-script';
const name = basename(pagePath);
let html = readFileSync(pagePath, 'utf8');
if (html.includes(`id="${ID}"`)) fail(`${name} already has the worker`);
if (!html.includes('</body>')) fail(`${name} has no </body>`);
if (!/worker-src blob:/.test(html)) fail(`${name}'s CSP does not allow workers from blob: URLs`);
let block;
if (name === 'index.html') {
  // The served page: the worker is a file of its own beside the page, named by its hash, and
  // the data block only points at it (data-src). Its 300-odd KB then stay out of the HTML the
  // browser must parse before the calculator starts (measured: the script started 135 ms
  // later with them inline). The CSP gains worker-src 'self' for it.
  const file = `frames-worker-${createHash('sha256').update(script).digest('hex').slice(0, 16)}.js`;
  writeFileSync(join(dirname(pagePath), file), script);
  html = html.replace('worker-src blob:', "worker-src 'self' blob:");
  block = `<script type="text/plain" id="${ID}" data-src="./${file}"></script>\n`;
} else {
  block = `<script type="text/plain" id="${ID}">${script}</script>\n`;
}
html = html.replace('</body>', () => `${block}</body>`);
writeFileSync(pagePath, html);

const size = (buf) => ({ raw: buf.length, gzip: gzipSync(buf, { level: 9 }).length });
const dist = dirname(pagePath);
const sizesPath = join(dist, 'sizes.json');
const sizes = JSON.parse(readFileSync(sizesPath, 'utf8'));
if (name === 'noise-budget.html') sizes.single_file = size(Buffer.from(html));
sizes.frames_worker = { ...sizes.frames_worker, [name]: { wasm: size(wasm), script: size(Buffer.from(script)) } };
writeFileSync(sizesPath, `${JSON.stringify(sizes, null, 2)}\n`);
const kb = (n) => `${(n / 1024).toFixed(1)} KiB`;
console.log(`embed-worker: ${name}: frame worker wasm ${kb(wasm.length)} raw, ` +
  `${kb(sizes.frames_worker[name].wasm.gzip)} gzip; page ${kb(html.length)} raw, ` +
  `${kb(size(Buffer.from(html)).gzip)} gzip`);
