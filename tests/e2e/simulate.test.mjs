// End-to-end tests of the simulated frame and series in the page (issue 14, items 2 and 3), in
// Debian's Chromium: the frame is computed in the frame worker and its patches' figures equal
// `noise-budget simulate --frame` for the same scenario, seed and size; a pinned scenario is
// shown beside it; the seed field names a bad seed and keeps it; the series downloads as a zip
// and, handed to Measure a camera, gives the figures `noise-budget characterize` gives on the
// command's own series with the same seed; the single file without the worker says so.
// No request is made, no time is asserted. Run by scripts/test after the page is built.
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { after, before, describe, test } from 'node:test';
import { DIST, ROOT, analysisEnded, cli, launch, loadDemo, openPage, singleFileUrl, startServer } from './helpers.mjs';

const DEMO = 'global-shutter-machine-vision';
const DEMO_PATH = join(ROOT, 'www/demos', `${DEMO}.json`);
const SINGLE_FILE_HAS_WORKER = readFileSync(join(DIST, 'noise-budget.html'), 'utf8').includes('id="noise-budget-app" data-frames');

let browser;
let server;
before(async () => {
  browser = await launch();
  server = await startServer();
});
after(async () => {
  await browser?.close();
  server?.server.close();
});

/** The command's summary of a simulated frame of a scenario file. */
function cliFrame(path, seed, size) {
  const dir = mkdtempSync(join(tmpdir(), 'noise-budget-sim-'));
  const out = execFileSync(cli(), ['simulate', path, '--frame', join(dir, 'f.pgm'), '--seed', String(seed), '--size', size], { encoding: 'utf8' });
  return JSON.parse(out).frame;
}

const shownPatches = (page, slot) => page.$$eval(`#frame-views .sim-frame[data-slot="${slot}"] td[data-sim]`,
  (tds) => tds.map((td) => [td.dataset.sim, Number(td.dataset.value)]));

describe('the simulated frame and series in the served page', () => {
  test('the frame is the command\'s for the same seed; a pin is shown beside it; a bad seed is named', async () => {
    const { ctx, page, requests, errors } = await openPage(browser, `${server.origin}/`);
    try {
      await loadDemo(page, DEMO);
      const workers = [];
      page.on('worker', (w) => workers.push(w.url()));
      assert.equal(await page.$$eval('#frame-views canvas', (c) => c.length), 0, 'nothing is simulated before it is asked for');
      await page.fill('#frame-seed', '7');
      await page.click('#frame-run');
      await page.waitForSelector('#frame-views .sim-frame[data-slot="0"] canvas');
      await page.waitForFunction(() => /^Simulated with seed 7/.test(document.getElementById('frame-status')?.textContent ?? ''));
      assert.equal(workers.length, 1, 'one worker computes the frames');
      const size = await page.$eval('#frame-views canvas', (c) => [c.width, c.height]);
      // Source: the command line's own simulation of the same scenario, seed and size.
      const ref = cliFrame(DEMO_PATH, 7, `${size[0]}x${size[1]}`);
      assert.deepEqual(size, [ref.width, ref.height]);
      const expected = [];
      for (const p of ref.patches) {
        if (p.measured?.snr != null) expected.push(['measured', p.measured.snr]);
        if (p.model?.snr_total != null) expected.push(['model', p.model.snr_total]);
      }
      assert.deepEqual(await shownPatches(page, 0), expected, 'each patch: measured on the frame and the model, as the command');
      assert.match(await page.textContent('#frame-views figcaption'), new RegExp(`^${ref.width} × ${ref.height} output pixels, seed 7\\.`));
      // The picture is drawn: not one flat grey.
      const distinct = await page.$eval('#frame-views canvas', (c) => {
        const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
        return new Set(Array.from({ length: 4096 }, (_, i) => d[4 * Math.floor((i * (d.length / 4)) / 4096)])).size;
      });
      assert.ok(distinct > 20, `${distinct} grey levels`);

      // A pin: its frame beside this one, after an edit that changes the scenario on screen.
      await page.click('#pin-scenario');
      await page.fill('input[name="sensor.read_noise_e"]', '12');
      await page.waitForSelector('#frame-views .sim-frame[data-slot="1"] canvas');
      await page.waitForFunction(() => /this scenario and the first pinned one/.test(document.getElementById('frame-status')?.textContent ?? ''));
      const [now, pinned] = [await shownPatches(page, 0), await shownPatches(page, 1)];
      assert.deepEqual(pinned, expected, 'the pinned scenario is the demo, the same frame');
      assert.notDeepEqual(now, expected, 'more read noise, other figures');

      // A bad seed: named beside the field, kept as typed, the frames shown stay.
      await page.fill('#frame-seed', '-3');
      assert.match(await page.textContent('#frame-seed-problem'), /seed: a whole number from 0 to 18446744073709551615, got “-3”/);
      assert.equal(await page.inputValue('#frame-seed'), '-3');
      assert.equal(await page.$$eval('#frame-views canvas', (c) => c.length), 2);
      assert.deepEqual(requests.filter((r) => !r.startsWith(server.origin)), [], 'no request leaves the machine');
      assert.deepEqual(errors, []);
    } finally {
      await ctx.close();
    }
  });

  test('the series downloads as a zip, and Measure a camera finds in it what characterize finds in the command\'s series', async () => {
    const { ctx, page, errors } = await openPage(browser, `${server.origin}/`);
    try {
      await loadDemo(page, DEMO);
      await page.fill('#frame-seed', '5');
      const [download] = await Promise.all([page.waitForEvent('download', { timeout: 60000 }), page.click('#series-download')]);
      assert.equal(download.suggestedFilename(), 'noise-budget-series-seed-5.zip');
      const zip = readFileSync(await download.path());
      assert.equal(zip.subarray(0, 4).toString('latin1'), 'PK\u0003\u0004', 'a zip file');
      assert.ok(zip.includes(Buffer.from('noise-budget-series-seed-5/manifest.json')));

      await page.click('#series-measure');
      await analysisEnded(page, 120000);
      assert.match(await page.textContent('#measure-status'), /^Analysed \d+ frame files/);
      // Source: the command line writes the same series (seed 5, its default 256 × 256) and
      // characterizes it.
      const dir = mkdtempSync(join(tmpdir(), 'noise-budget-series-'));
      execFileSync(cli(), ['simulate', DEMO_PATH, '--series', dir, '--seed', '5'], { encoding: 'utf8' });
      const ref = JSON.parse(execFileSync(cli(), ['characterize', join(dir, 'manifest.json')], { encoding: 'utf8' }));
      const shown = await page.$$eval('[data-measure]', (els) => Object.fromEntries(els.map((e) => [e.dataset.measure, Number(e.dataset.value)])));
      for (const key of ['system_gain_dn_per_e', 'read_noise_e', 'full_well_e']) {
        const want = ref.sensor[key];
        assert.ok(Number.isFinite(shown[key]), `${key} shown`);
        assert.ok(Math.abs(shown[key] - want) <= 1e-12 * Math.abs(want), `${key}: page ${shown[key]}, characterize ${want}`);
      }
      assert.deepEqual(errors, []);
    } finally {
      await ctx.close();
    }
  });
});

if (!SINGLE_FILE_HAS_WORKER) {
  test('the single file without the worker says the simulation is not in this copy', async () => {
    const { ctx, page, requests, errors } = await openPage(browser, singleFileUrl());
    try {
      assert.match(await page.textContent('#frame-status'), /no frame simulation and analysis/);
      assert.equal(await page.$eval('#frame-run', (b) => b.disabled), true);
      assert.equal(await page.$eval('#series-measure', (b) => b.disabled), true);
      assert.deepEqual(requests.filter((r) => r !== singleFileUrl()), [], 'nothing but the file itself');
      assert.deepEqual(errors, []);
    } finally {
      await ctx.close();
    }
  });
}
