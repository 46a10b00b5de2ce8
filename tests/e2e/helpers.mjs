// Shared helpers for the page tests: a suite's set-up (the browser, Debian's Chromium through
// playwright-core, and the static server, closed after the suite however it ends), pages
// closed after their test, passed or failed, the command-line tool as the reference, and
// reading the page's figures.
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { createRequire } from 'node:module';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { after, before } from 'node:test';
import { chromium } from 'playwright-core';
import { serveStatic } from '../../scripts/static-server.mjs';

export const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../..');
export const DIST = resolve(ROOT, process.env.NOISE_BUDGET_DIST ?? 'dist');
export const ARTIFACTS = join(ROOT, 'tests/artifacts');
mkdirSync(ARTIFACTS, { recursive: true });

// Every demo in www/demos/, the first-visit one first (as the page lists them).
const FIRST_DEMO = 'global-shutter-machine-vision';
export const DEMO_NAMES = [FIRST_DEMO, ...readdirSync(join(ROOT, 'www/demos'))
  .filter((f) => f.endsWith('.json')).map((f) => f.slice(0, -5)).filter((n) => n !== FIRST_DEMO).sort()];
export const demoText = (name) => readFileSync(join(ROOT, 'www/demos', `${name}.json`), 'utf8');
export const demoJson = (name) => JSON.parse(demoText(name));

export function launch() {
  return chromium.launch({
    executablePath: process.env.CHROMIUM ?? '/usr/bin/chromium',
    headless: true,
    args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking',
      '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-dev-shm-usage'],
  });
}

export const startServer = () => serveStatic(DIST, 0);
export const singleFileUrl = () => pathToFileURL(join(DIST, 'noise-budget.html')).href;

/** A page that records its requests and its errors (a wasm panic shows up as a page error). */
export async function openPage(browser, url, { viewport = { width: 1280, height: 900 }, context } = {}) {
  const ctx = context ?? await browser.newContext({ viewport, acceptDownloads: true });
  const page = await ctx.newPage();
  const requests = [];
  const errors = [];
  page.on('request', (r) => requests.push(r.url()));
  page.on('pageerror', (e) => errors.push(`pageerror: ${e.message}`));
  page.on('console', (m) => { if (m.type() === 'error') errors.push(`console: ${m.text()}`); });
  await page.goto(url);
  await page.waitForSelector('html[data-ready]', { timeout: 15000 });
  return { ctx, page, requests, errors };
}

/**
 * The browser and the static server of a suite: started before its first test (with the
 * reference tool built first, before any timing-sensitive step), closed after its last one
 * whatever happened (node:test runs `after` hooks when tests fail too). Read `env.browser` and
 * `env.server` inside tests.
 */
export function setUp({ serve = true } = {}) {
  const env = { browser: undefined, server: undefined };
  before(async () => {
    cli();
    env.browser = await launch();
    if (serve) env.server = await startServer();
  });
  after(async () => {
    await env.browser?.close();
    env.server?.server.close();
  });
  return env;
}

/** A page as `openPage` opens it, whose browser context is closed when test `t` ends, whether
 * its assertions passed or not. */
export async function pageFor(t, browser, url, options) {
  const opened = await openPage(browser, url, options);
  t.after(() => opened.ctx.close());
  return opened;
}

/** Wait until Measure a camera's analysis has ended (its status says analysed or not). */
export async function analysisEnded(page, timeout = 30000) {
  await page.waitForFunction(() => {
    const s = document.getElementById('measure-status')?.textContent ?? '';
    return /^Analysed|could not be analysed/.test(s);
  }, null, { timeout });
}

/** Load a demo with its button and wait until the form shows it. */
export async function loadDemo(page, name) {
  await page.click(`button[data-demo="${name}"]`);
  await page.waitForFunction((t) => document.querySelector('[name="title"]').value === t, demoJson(name).title);
}

let cliPath;
/** The command-line tool, built once with cargo (the same engine, natively); NOISE_BUDGET_CLI
 * may name an already built one. */
export function cli() {
  if (cliPath) return cliPath;
  if (process.env.NOISE_BUDGET_CLI) return (cliPath = process.env.NOISE_BUDGET_CLI);
  const out = execFileSync('cargo', ['build', '--quiet', '--locked', '-p', 'noise-budget', '--message-format=json'],
    { cwd: ROOT, encoding: 'utf8', maxBuffer: 64 << 20 });
  for (const line of out.split('\n')) {
    if (!line.startsWith('{')) continue;
    const msg = JSON.parse(line);
    if (msg.reason === 'compiler-artifact' && msg.executable && msg.target?.name === 'noise-budget') cliPath = msg.executable;
  }
  if (!cliPath) throw new Error('cargo built no noise-budget executable');
  return cliPath;
}

const scratch = mkdtempSync(join(tmpdir(), 'noise-budget-e2e-'));
let scratchCount = 0;
/** `noise-budget eval FILE` on a scenario: the reference report. */
export function cliReport(scenario) {
  const file = join(scratch, `s${scratchCount++}.json`);
  writeFileSync(file, typeof scenario === 'string' ? scenario : JSON.stringify(scenario));
  return JSON.parse(execFileSync(cli(), ['eval', file], { encoding: 'utf8' }));
}

/** Every shown figure: { path: data-value }. A table's rows (`data-rows`, named by their
 * list's path for the warnings about it) are not a figure: their cells are. Figures in a box
 * hidden because the report has no such object (`data-shown-if`, colour and HDR of a plain
 * sensor) are left out; `shownIfProblems` checks those boxes. */
export function shownValues(page) {
  return page.$$eval('[data-report]:not([data-rows])', (els) => Object.fromEntries(els
    .filter((e) => !e.closest('[data-shown-if][hidden]'))
    .map((e) => [e.dataset.report, e.dataset.value])));
}

/** Boxes shown only for a report object (`data-shown-if="hdr"`) that are hidden while the
 * report has it, or shown while it has not. */
export async function shownIfProblems(page, report) {
  const boxes = await page.$$eval('[data-shown-if]', (els) => els.map((e) => ({ path: e.dataset.shownIf, hidden: e.hidden })));
  const has = (path) => { const v = at(report, path); return v !== undefined && v !== null; };
  return boxes.filter((b) => b.hidden === has(b.path))
    .map((b) => `${b.path}: ${b.hidden ? 'hidden, but the tool reports it' : 'shown, but the tool has none'}`);
}

function at(obj, path) {
  let v = obj;
  for (const k of path.split('.')) {
    if (v === null || v === undefined) return undefined;
    v = v[k];
  }
  return v;
}

// The page runs the engine compiled to wasm, the tool runs it natively: +, ×, ÷ and √ are
// exact in both (IEEE 754), but log10, powf and exp2 come from different maths libraries
// (Rust's libm port in wasm, the C library natively), which may differ in the last bit.
// Twelve significant digits is far below anything shown and far above that difference.
export const RELATIVE_TOLERANCE = 1e-12;

/** Differences between shown figures and a report, as readable lines (empty when they agree). */
export function compareWithReport(shown, report) {
  const problems = [];
  for (const [path, value] of Object.entries(shown)) {
    const want = at(report, path);
    if (want === undefined) { problems.push(`${path}: not in the tool's report`); continue; }
    if (want === null) { if (value !== 'null') problems.push(`${path}: shown ${value}, tool null`); continue; }
    if (typeof want === 'number') {
      const got = Number(value);
      const ok = value !== '' && Number.isFinite(got) &&
        (got === want || Math.abs(got - want) <= RELATIVE_TOLERANCE * Math.max(Math.abs(got), Math.abs(want)));
      if (!ok) problems.push(`${path}: shown ${value}, tool ${want}`);
      continue;
    }
    if (String(want) !== value) problems.push(`${path}: shown ${value}, tool ${want}`);
  }
  return problems;
}

/** The scenario carried by a page address, decoded in node (independently of the page). */
export function scenarioFromUrl(url) {
  const hash = new URL(url).hash;
  const m = /^#scenario=([A-Za-z0-9_-]*)$/.exec(hash);
  if (!m) throw new Error(`no #scenario= in ${url}`);
  return JSON.parse(Buffer.from(m[1], 'base64url').toString('utf8'));
}

export const linkFor = (scenario) =>
  `#scenario=${Buffer.from(typeof scenario === 'string' ? scenario : JSON.stringify(scenario)).toString('base64url')}`;

/** Wait until the address carries the scenario on screen (it follows edits after a short delay). */
export async function settledUrl(page) {
  await page.waitForFunction(() => {
    const link = document.getElementById('share-link')?.value ?? '';
    return link !== '' && location.href === link;
  }, null, { timeout: 5000 });
  return page.url();
}

const axeSource = readFileSync(createRequire(import.meta.url).resolve('axe-core/axe.min.js'), 'utf8');

/** axe-core's serious and critical violations on the page (all of it, or under `selector`). */
export async function axeSeriousViolations(page, selector = undefined) {
  await page.evaluate(axeSource);
  const result = await page.evaluate((sel) => window.axe.run(sel ? document.querySelector(sel) : document,
    { resultTypes: ['violations'] }), selector);
  return result.violations
    .filter((v) => v.impact === 'serious' || v.impact === 'critical')
    .map((v) => `${v.id} (${v.impact}): ${v.nodes.map((n) => n.target.join(' ')).join(', ')}`);
}
