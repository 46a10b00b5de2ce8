#!/usr/bin/env node
// Finish Trunk's dist/ so the page needs no network at all, and write the self-contained file.
//
// Trunk's own loader fetches the wasm, which a `connect-src 'none'` policy forbids. This script
// replaces it: the wasm-bindgen glue (exports removed) and the wasm (as base64) become one
// module script, app-<hash>.js. Then:
//   dist/index.html        the served page: CSP meta, style and app script from its own origin;
//   dist/noise-budget.html one file with the style and the script inline, allowed by hash,
//                          which works opened from file:// with no server and no network.
// The app script also starts the frame worker: run as a (classic) worker (given the page's own
// WebAssembly.Module, see crate/web/src/frames_ui/run.rs) it skips the page's start-up and runs
// crate/frames-worker/boot.js, so the page and the worker run one compiled engine.
// Sizes go to dist/sizes.json (a measurement; nothing checks them here).
// Usage: node scripts/single-file.mjs DIST SINGLE_DIR UNPACKER_WASM
//   SINGLE_DIR: wasm-bindgen's output (target web) of the self-contained file's own build
//   (scripts/build-page: opt-level "z"; the calculator alone, or the one engine with the frame
//   analysis, found from its glue); UNPACKER_WASM: crate/unpack's wasm.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { gzipSync } from 'node:zlib';
import { transformSync } from 'esbuild';

const dist = process.argv[2] ?? 'dist';
const singleDir = process.argv[3];
const files = readdirSync(dist);
const fail = (msg) => { console.error(`single-file: ${msg}`); process.exit(1); };

const wasmName = files.find((f) => /^noise-budget-web-[0-9a-f]+_bg\.wasm$/.test(f));
if (!wasmName) fail(`no noise-budget-web-*_bg.wasm in ${dist}; run trunk build first`);
const glueName = wasmName.replace(/_bg\.wasm$/, '.js');
if (!files.includes(glueName)) fail(`no ${glueName} in ${dist}`);
const cssName = files.find((f) => /^style-[0-9a-f]+\.css$/.test(f));
if (!cssName) fail(`no style-*.css in ${dist}`);

// The wasm is packed with LZMA (raw LZMA1 by Python's lzma module, that is liblzma: 18 %
// smaller than zopfli's deflate on this wasm, 301 336 against 365 000 B, measured), which the
// self-contained file's 300 KB budget needs, and unpacked synchronously by crate/unpack, a
// wasm of about 3 KB with no imports (SINGLE-FILE's third argument; tests/e2e/unpack.test.mjs),
// so that the engine starts and the first result is written inside the script's own run,
// before the browser's first layout of the page (with DecompressionStream, asynchronous, the
// first layout and paint of the page's form, about 80 ms in Chromium, traced, came between).
// Unpacked in JavaScript it took 66 ms of the single file's start in Chromium (most of it
// before the JavaScript engine optimised it); the wasm takes about 20 ms in node.
// lc 4 and nice_len 64: 0.5 KB smaller than xz's defaults for this wasm (measured over a grid).
const LZMA = { lc: 4, lp: 0, pb: 0, nice: 64 };
function lzmaPack(bytes) {
  const python = process.env.PYTHON ?? 'python3';
  const program = `import lzma, sys
f = [{"id": lzma.FILTER_LZMA1, "preset": 9 | lzma.PRESET_EXTREME, "dict_size": 1 << 22, "lc": ${LZMA.lc}, "lp": ${LZMA.lp}, "pb": ${LZMA.pb}, "nice_len": ${LZMA.nice}}]
sys.stdout.buffer.write(lzma.compress(sys.stdin.buffer.read(), format=lzma.FORMAT_RAW, filters=f))`;
  try {
    return execFileSync(python, ['-c', program], { input: bytes, maxBuffer: 64 << 20 });
  } catch (err) {
    return fail(`could not pack the wasm with ${python}'s lzma module (${err.message.split('\n')[0]})`);
  }
}
const unpackerPath = process.argv[4];
if (!unpackerPath) fail('no unpacker wasm given (crate/unpack; scripts/build-page builds it)');
const unpacker = readFileSync(unpackerPath);
if (!WebAssembly.validate(unpacker)) fail(`${unpackerPath} is not a valid wasm`);
{
  const m = new WebAssembly.Module(unpacker);
  const names = WebAssembly.Module.exports(m).map((e) => e.name);
  if (WebAssembly.Module.imports(m).length !== 0) fail(`${unpackerPath} imports something; the unpacker must stand alone`);
  for (const want of ['memory', 'unlzma', 'unlzma_probs']) if (!names.includes(want)) fail(`${unpackerPath} does not export ${want}`);
}
// The script's unpacking: the unpacker's memory holds its probabilities, the packed bytes and
// the wasm, in that order past what it uses itself. Its error codes are crate/unpack's Error.
const UNPACK = `const NOISE_BUDGET_UNPACKER = "${unpacker.toString('base64')}";
const NOISE_BUDGET_UNPACK_ERRORS = ["", "its settings are out of range", "it does not start as LZMA data", "it ends early", "a match reaches before the start", "a match runs past the end", "it ends before the whole wasm", "too little room"];
function noiseBudgetUnpack(packed, size) {
  const { memory, unlzma, unlzma_probs } = new WebAssembly.Instance(new WebAssembly.Module(noiseBudgetBytes(NOISE_BUDGET_UNPACKER)), {}).exports;
  const probs = unlzma_probs(${LZMA.lc}, ${LZMA.lp});
  const at = (memory.buffer.byteLength + 7) & ~7;
  const from = at + probs * 2;
  const to = from + packed.length;
  memory.grow(Math.ceil((to + size - memory.buffer.byteLength) / 65536));
  new Uint8Array(memory.buffer, from, packed.length).set(packed);
  const code = unlzma(from, packed.length, to, size, at, probs, ${LZMA.lc | (LZMA.lp << 8) | (LZMA.pb << 16)});
  if (code !== 0) throw new Error(\`bad LZMA data: \${NOISE_BUDGET_UNPACK_ERRORS[code] ?? code}\`);
  return new Uint8Array(memory.buffer, to, size);
}
`;
const boot = readFileSync(join(dirname(fileURLToPath(import.meta.url)), '../crate/frames-worker/boot.js'), 'utf8');
if (!/\bnoiseBudgetEngineArrived\b/.test(boot)) fail('crate/frames-worker/boot.js does not wait for the engine (noiseBudgetEngineArrived)');
const css = readFileSync(join(dist, cssName), 'utf8');
let html = readFileSync(join(dist, 'index.html'), 'utf8');

// The glue as a plain module body: no exports (an inline module cannot be imported anyway).
function moduleBody(path) {
  let glue = readFileSync(path, 'utf8')
    .replace(/^export (function|class|const|let|async function) /gm, '$1 ')
    .replace(/^export \{[^}]*\};?[ \t]*$/gm, '')
    .replace(/^export default [^;\n]+;?[ \t]*$/gm, '');
  if (/^\s*export\b/m.test(glue)) fail(`an export the script does not handle is left in ${path}`);
  // The same text also runs as the frame worker's classic script (a module worker from a
  // Blob URL fails in a page opened from file://: its opaque origin makes the Blob URL
  // cross-origin for a module fetch, seen in Chromium), where `import.meta` does not parse. The
  // glue uses it only for the wasm's default URL, which initSync never reads.
  glue = glue.replace(/\bimport\.meta\.url\b/g, 'self.location.href');
  if (/\bimport\.meta\b/.test(glue)) fail(`${path} uses import.meta otherwise than for its URL`);
  if (!/\bfunction initSync\b/.test(glue)) fail(`${path} has no initSync`);
  return glue;
}

// Short import names. wasm-bindgen names each import the module needs from its glue
// `__wbg_<name>_<16 hex digits>`, under a module named after the wasm's file; the hex digits
// do not compress and each name is written twice, in the wasm and in the glue. Both get a
// short name instead (the glue's import object and the wasm's import section rewritten
// together; the wasm must still validate and the glue hold every name exactly once), 2-3 KB
// less of the self-contained file's budget.
function leb(bytes, at) {
  let value = 0;
  let shift = 0;
  for (;;) {
    const b = bytes[at++];
    value += (b & 0x7f) * 2 ** shift;
    shift += 7;
    if (b < 0x80) return [value, at];
  }
}
function lebBytes(n) {
  const out = [];
  do {
    let b = n & 0x7f;
    n = Math.floor(n / 128);
    if (n > 0) b |= 0x80;
    out.push(b);
  } while (n > 0);
  return out;
}
function shortenImports(wasm, glue) {
  const utf8 = new TextDecoder();
  const modules = [...glue.matchAll(/^\s+"([^"]+)": import0,$/gm)];
  if (modules.length !== 1) fail(`the glue names ${modules.length} modules for its import object, not one`);
  const GLUE_MODULE = modules[0][1];
  const chunks = [wasm.subarray(0, 8)];
  const renamed = new Map();
  let at = 8;
  while (at < wasm.length) {
    const id = wasm[at];
    const [size, body] = leb(wasm, at + 1);
    const end = body + size;
    if (id !== 2) {
      chunks.push(wasm.subarray(at, end));
      at = end;
      continue;
    }
    let [count, p] = leb(wasm, body);
    const out = [...lebBytes(count)];
    const name = (q) => { const [n, from] = leb(wasm, q); return [utf8.decode(wasm.subarray(from, from + n)), from + n]; };
    for (; count > 0; count--) {
      let module;
      let field;
      [module, p] = name(p);
      [field, p] = name(p);
      const kind = wasm[p];
      // The import's description: a function's type index; a table, memory or global's limits.
      let q = p + 1;
      if (kind === 0) [, q] = leb(wasm, q);
      else if (kind === 1) { q += 1; const flags = wasm[q]; [, q] = leb(wasm, q + 1); if (flags & 1) [, q] = leb(wasm, q); }
      else if (kind === 2) { const flags = wasm[q]; [, q] = leb(wasm, q + 1); if (flags & 1) [, q] = leb(wasm, q); }
      else if (kind === 3) q += 2;
      else fail(`an import of kind ${kind} the renaming does not know`);
      let newModule = module;
      let newField = field;
      if (module === GLUE_MODULE) {
        newModule = 'g';
        if (!renamed.has(field)) renamed.set(field, renamed.size.toString(36));
        newField = `_${renamed.get(field)}`;
      }
      for (const text of [newModule, newField]) {
        const bytes = Buffer.from(text, 'utf8');
        out.push(...lebBytes(bytes.length), ...bytes);
      }
      out.push(...wasm.subarray(p, q));
      p = q;
    }
    if (p !== end) fail('the import section does not end where its size says');
    chunks.push(Uint8Array.from([2, ...lebBytes(out.length), ...out]));
    at = end;
  }
  const shortWasm = Buffer.concat(chunks);
  if (!WebAssembly.validate(shortWasm)) fail('the wasm with short import names does not validate');
  let shortGlue = glue;
  for (const [field, short] of renamed) {
    const key = new RegExp(`^(\\s+)${field.replace(/[$]/g, '\\$&')}(: function)`, 'm');
    if (!key.test(shortGlue)) fail(`the glue does not define the import ${field}`);
    shortGlue = shortGlue.replace(key, `$1_${short}$2`);
  }
  shortGlue = shortGlue.replace(`"${GLUE_MODULE}": import0`, '"g": import0');
  return { wasm: shortWasm, glue: shortGlue };
}

// The exports boot.js calls, as wasm-bindgen's no-modules glue would name them.
const WORKER_EXPORTS = ['Analysis', 'simulate_frame', 'simulate_series', 'pair_stats_ms'];

/** The app script for a glue (its path) and a wasm; `frames`: it holds the frame worker's
 * exports, so the script also runs as the frame worker; `squeeze`: the self-contained file's
 * script, its code squeezed and its wasm packed with LZMA for the file's size budget. The
 * served page's script holds its wasm as plain base64 instead: no unpacking at its start (the
 * unpacking took 49 of its 209 ms to the first result in Chromium, against 2 ms to decode the
 * plain base64, measured side by side), for a larger file (1.1 MB against 0.4 MB; about 365
 * against 305 KB where the server sends it gzip'd), which the served page has no budget for. */
async function appScript(gluePath, fullWasm, frames, squeeze) {
  const { wasm, glue } = shortenImports(fullWasm, moduleBody(gluePath));
  for (const name of frames ? WORKER_EXPORTS : []) {
    if (!new RegExp(`\\b(function|class) ${name}\\b`).test(glue)) fail(`${gluePath} has no ${name}: build crate/web with its frames feature`);
  }
  const packed = squeeze ? lzmaPack(wasm) : null;
  const worker = frames ? `
// ---- the frame worker (crate/frames-worker/boot.js): this script run as a worker ----
if (typeof document === 'undefined') {
const wasm_bindgen = { initSync, ${WORKER_EXPORTS.join(', ')} };
${boot}
}
` : '';
  // The code before the start-up: the glue, the unpacker and the worker's start. In the single
  // file it is squeezed by esbuild (white space, comments, shorter syntax; names kept), 5.4 KB
  // less gzip (15.4 -> 10.0 KB, measured) for its size budget; the served page keeps it legible.
  let code = `${glue}
${worker}`;
  if (squeeze) {
    try {
      code = transformSync(code, { loader: 'js', minifyWhitespace: true, minifySyntax: true, charset: 'utf8' }).code;
    } catch (err) {
      fail(`esbuild could not squeeze the single file's script: ${err.message.split('\n')[0]}`);
    }
  }
  // How the wasm is embedded so the page makes no request for it (the CSP forbids fetching):
  // in the single file as the base64 of it packed (LZMA; base64 of raw wasm compresses badly),
  // in the served page as plain base64. Either way it is turned back into the wasm, compiled
  // and started synchronously (initSync), so the first result is written before the browser
  // first lays out the page.
  const embed = packed
    ? { name: 'NOISE_BUDGET_WASM_PACKED', base64: packed.toString('base64'), how: 'packed (LZMA)',
      bytes: 'noiseBudgetUnpack(noiseBudgetBytes(NOISE_BUDGET_WASM_PACKED), NOISE_BUDGET_WASM_BYTES)',
      verb: ['could not be unpacked', 'unpacked to'], advice: 'the file may be damaged: download it again' }
    : { name: 'NOISE_BUDGET_WASM', base64: wasm.toString('base64'), how: 'plain',
      bytes: 'noiseBudgetBytes(NOISE_BUDGET_WASM)',
      verb: ['could not be decoded', 'decoded to'], advice: "the page's files may be damaged: load it again" };
  return `${code}
// ---- noise-budget start-up (scripts/single-file.mjs) ----
// The wasm, embedded as base64 (${embed.how}); see scripts/single-file.mjs.
const ${embed.name} = "${embed.base64}";
const NOISE_BUDGET_WASM_BYTES = ${wasm.length};
function noiseBudgetBytes(b64) {
  if (typeof Uint8Array.fromBase64 === 'function') return Uint8Array.fromBase64(b64);
  const text = atob(b64);
  const bytes = new Uint8Array(text.length);
  for (let i = 0; i < text.length; i++) bytes[i] = text.charCodeAt(i);
  return bytes;
}
${packed ? UNPACK : ''}if (typeof document !== 'undefined') {
performance.mark('noise-budget:script-start');
try {
  let wasmBytes;
  try {
    wasmBytes = ${embed.bytes};
  } catch (err) {
    throw new Error(\`its embedded code ${embed.verb[0]} (\${err}); ${embed.advice}\`);
  }
  if (wasmBytes.length !== NOISE_BUDGET_WASM_BYTES) {
    throw new Error(\`its embedded code ${embed.verb[1]} \${wasmBytes.length} bytes, not \${NOISE_BUDGET_WASM_BYTES}; ${embed.advice}\`);
  }
  performance.mark('noise-budget:wasm-unpacked');
  let module;
  try {
    module = new WebAssembly.Module(wasmBytes);
  } catch (err) {
    throw new Error(\`its embedded code does not compile (\${err}): the file may be damaged (download it again), or this browser is older than WebAssembly's 2020 features\`);
  }
  initSync({ module });
  // For scripts and tests: the evaluation, the version, and the compiled engine the worker is given.
  window.wasmBindings = { evaluate, version, module };
} catch (err) {
  document.getElementById('boot-waiting')?.remove();
  const el = document.getElementById('boot-status');
  if (el) {
    el.hidden = false;
    el.textContent = 'The calculator could not start in this browser: ' + err;
  }
}
}
`;
}

const wasm = readFileSync(join(dist, wasmName));
const app = await appScript(join(dist, glueName), wasm, true, false);
const singleWasm = singleDir ? readFileSync(join(singleDir, 'noise_budget_web_bg.wasm')) : wasm;
const singleGlue = singleDir ? join(singleDir, 'noise_budget_web.js') : join(dist, glueName);
// The single file holds the frame analysis when its wasm was built with crate/web's `frames`.
const singleFrames = /\bclass Analysis\b/.test(readFileSync(singleGlue, 'utf8'));
const singleApp = await appScript(singleGlue, singleWasm, singleFrames, true);

const sha256 = (text) => createHash('sha256').update(text, 'utf8').digest('base64');
const short = (text) => createHash('sha256').update(text, 'utf8').digest('hex').slice(0, 16);
const escapeScript = (text) => text.replace(/<\/(script)/gi, '<\\/$1');
const escapeStyle = (text) => text.replace(/<\/(style)/gi, '<\\/$1');

// Remove Trunk's loader and preloads; keep everything else as Trunk wrote it.
const scriptCount = (html.match(/<script\b/g) ?? []).length;
html = html
  .replace(/<script type="module"[^>]*>[\s\S]*?<\/script>\s*/g, '')
  .replace(/<link rel="(?:modulepreload|preload)"[^>]*>\s*/g, '');
if (/<script\b/.test(html)) {
  fail(`a script tag other than Trunk's loader is left in index.html (${scriptCount} before)`);
}
const cssLink = html.match(/<link rel="stylesheet"[^>]*href="\.?\/?(style-[0-9a-f]+\.css)"[^>]*>/);
if (!cssLink) fail('no stylesheet link for the Trunk-built CSS in index.html');
const charset = '<meta charset="utf-8">';
if (!html.includes(charset)) fail(`index.html has no ${charset}`);

// worker-src: the frame worker is the app script itself, started from its file ('self', the
// served page) or from a Blob URL of its text (the self-contained file); the worker's file
// reader is a second worker from a Blob URL.
const common = "default-src 'none'; img-src data:; connect-src 'none'; base-uri 'none'; form-action 'none'";
const csp = (scripts, styles, workers) =>
  `<meta http-equiv="Content-Security-Policy" content="${common}; worker-src ${workers}; script-src ${scripts} 'wasm-unsafe-eval'; style-src ${styles}">`;
// The app script's element: crate/web/src/frames_ui/run.rs starts the frame worker from it
// (data-frames: it holds the frame worker).
const APP_ID = 'noise-budget-app';

// The served page: style and script from its own origin.
const appName = `app-${short(app)}.js`;
writeFileSync(join(dist, appName), app);
const served = html
  .replace(charset, `${charset}\n  ${csp("'self'", "'self'", "'self' blob:")}`)
  // blocking="render": the browser does not lay out and paint the page's form before the app
  // script has run (it arrives after the HTML is parsed, and Chromium painted the bare form in
  // between, about 90 ms, traced); the script writes the first result in its own run, so the
  // first paint has it. Browsers that do not know the attribute ignore it.
  .replace('</head>', `  <script type="module" id="${APP_ID}" data-frames src="./${appName}" blocking="render" integrity="sha384-${createHash('sha384').update(app, 'utf8').digest('base64')}"></script>\n</head>`);
writeFileSync(join(dist, 'index.html'), served);

// The single file: everything inline, allowed by hash.
const inlineApp = escapeScript(singleApp);
// The single file's style minified by esbuild (1 KB less gzip, measured); the served page
// keeps the legible file.
let minCss;
try {
  minCss = transformSync(css, { loader: 'css', minify: true, charset: 'utf8' }).code;
} catch (err) {
  fail(`esbuild could not minify the style: ${err.message.split('\n')[0]}`);
}
const inlineCss = escapeStyle(minCss);
const single = html
  .replace(charset, `${charset}\n  ${csp(`'sha256-${sha256(inlineApp)}'`, `'sha256-${sha256(inlineCss)}'`, 'blob:')}`)
  .replace(cssLink[0], () => `<style>${inlineCss}</style>`)
  // blocking="render" as in the served page: an inline module script runs after the parse, and
  // without it Chromium painted the bare form first in 11 of 48 loads (none with it; the first
  // result 156 -> 146 ms, the paint with it 275 -> 282 ms, medians side by side).
  .replace('</head>', () => `  <script type="module" id="${APP_ID}"${singleFrames ? ' data-frames' : ''} blocking="render">${inlineApp}</script>\n</head>`);
writeFileSync(join(dist, 'noise-budget.html'), single);

// The glue and the wasm now live inside the app script: drop the loose copies.
rmSync(join(dist, glueName));
rmSync(join(dist, wasmName));

const size = (buf) => ({ raw: buf.length, gzip: gzipSync(buf, { level: 9 }).length });
const sizes = {
  single_file: size(Buffer.from(single)),
  single_file_frames: singleFrames,
  wasm: size(wasm),
  single_file_wasm: size(singleWasm),
  app_script: size(Buffer.from(app)),
  css: size(Buffer.from(css)),
};
writeFileSync(join(dist, 'sizes.json'), `${JSON.stringify(sizes, null, 2)}\n`);
const kb = (n) => `${(n / 1024).toFixed(1)} KiB`;
console.log(`single-file: ${dist}/index.html (+ ${appName}, ${cssName}) and ${dist}/noise-budget.html`);
console.log(`single-file: noise-budget.html ${kb(sizes.single_file.raw)} raw, ${kb(sizes.single_file.gzip)} gzip; ` +
  `wasm ${kb(sizes.wasm.raw)} raw, ${kb(sizes.wasm.gzip)} gzip`);
