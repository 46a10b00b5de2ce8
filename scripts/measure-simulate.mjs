#!/usr/bin/env node
// Measure (not a test: nothing passes or fails) the simulator in wasm: its size cost in a
// page's wasm, and a 12-megapixel test-scene frame in wasm (node's V8, the engine of Chromium)
// against the same call natively, side by side in this run.
//
// Builds tests/wasm-simulate (a bare wrapper outside the workspace, so CI never builds it) in
// its own target folder: for size, at the page's settings (opt-level "z", wasm-opt -Oz, gzip
// -9), once exporting only `evaluate` and once also the simulator's frame and series, so the
// difference is what the simulator adds; for speed, at opt-level 3 (the release default), and
// its native binary as the baseline (both: demo "global-shutter-machine-vision", seed 1,
// 4000 × 3000, best of 3). Usage: node scripts/measure-simulate.mjs
import { execFileSync } from 'node:child_process';
import { copyFileSync, mkdirSync, readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { performance } from 'node:perf_hooks';
import { gzipSync } from 'node:zlib';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const CRATE = join(ROOT, 'tests/wasm-simulate');
const TARGET = join(ROOT, 'target/wasm-simulate');
const OUT = join(TARGET, 'measured');
const WASM_OPT = join(ROOT, 'node_modules/.bin/wasm-opt');
const SCENARIO = join(ROOT, 'www/demos/global-shutter-machine-vision.json');
const [WIDTH, HEIGHT, REPEATS] = [4000, 3000, 3];
mkdirSync(OUT, { recursive: true });

function cargo(args, optLevel) {
  execFileSync('cargo', [...args, '--manifest-path', join(CRATE, 'Cargo.toml'), '--target-dir', TARGET],
    { stdio: ['ignore', 'ignore', 'inherit'], env: { ...process.env, CARGO_PROFILE_RELEASE_OPT_LEVEL: optLevel } });
}

function wasmBuild(features, optLevel, name) {
  cargo(['build', '--release', '--lib', '--target', 'wasm32-unknown-unknown', ...features], optLevel);
  const file = join(OUT, name);
  copyFileSync(join(TARGET, 'wasm32-unknown-unknown/release/noise_budget_wasm_simulate.wasm'), file);
  return file;
}

function sizes(file) {
  execFileSync(WASM_OPT, ['-Oz', '--enable-bulk-memory', '--enable-nontrapping-float-to-int', '--enable-sign-ext', '--enable-mutable-globals', '-o', file, file]);
  const bytes = readFileSync(file);
  return { raw: bytes.length, gzip: gzipSync(bytes, { level: 9 }).length };
}

const base = sizes(wasmBuild([], 'z', 'evaluate-only.wasm'));
const withSim = sizes(wasmBuild(['--features', 'simulate'], 'z', 'with-simulate.wasm'));
const kb = (n) => (n / 1000).toFixed(1);
console.log('size at the page\'s settings (opt-level z, wasm-opt -Oz):');
console.log(`  evaluate only           ${kb(base.raw)} KB raw, ${kb(base.gzip)} KB gzip`);
console.log(`  with frame and series   ${kb(withSim.raw)} KB raw, ${kb(withSim.gzip)} KB gzip`);
console.log(`  the simulator adds      ${kb(withSim.raw - base.raw)} KB raw, ${kb(withSim.gzip - base.gzip)} KB gzip`);

const speedFile = wasmBuild(['--features', 'simulate'], '3', 'speed.wasm');
const { instance } = await WebAssembly.instantiate(readFileSync(speedFile), {});
const x = instance.exports;
const json = readFileSync(SCENARIO);
const ptr = x.alloc(json.length);
new Uint8Array(x.memory.buffer, ptr, json.length).set(json);
let best = Infinity;
let mean;
for (let i = 0; i < REPEATS; i++) {
  const t = performance.now();
  mean = x.simulate_frame(ptr, json.length, WIDTH, HEIGHT, 1n);
  best = Math.min(best, performance.now() - t);
}

cargo(['build', '--release', '--bin', 'simulate-native'], '3');
const native = execFileSync(join(TARGET, 'release/simulate-native'),
  [SCENARIO, String(WIDTH), String(HEIGHT), String(REPEATS)]).toString();
const [, nativeMs, , nativeMean] = native.trim().split(/\s+/);
console.log(`\n12 MP test-scene frame, best of ${REPEATS} (same scenario, seed and size):`);
console.log(`  wasm (node ${process.version})  ${best.toFixed(1)} ms (mean ${mean.toFixed(6)} DN)`);
console.log(`  native                ${Number(nativeMs).toFixed(1)} ms (mean ${Number(nativeMean).toFixed(6)} DN)`);
console.log(`  wasm / native         ${(best / Number(nativeMs)).toFixed(2)}`);
console.log(`  same frame            ${mean === Number(nativeMean) ? 'yes (equal means)' : 'means differ'}`);
