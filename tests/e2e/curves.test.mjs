// End-to-end tests of the curves and the comparison (issue 5): pin two demos and check the
// table's figures and differences against the command-line tool; pins travel in the link and
// with kept scenarios; exports (SVG, PNG, sweep CSV, comparison CSV) hold what their names say,
// the CSVs read back with Python's csv module and the sweep CSV equals `noise-budget sweep`;
// charts have a title and a description and no serious accessibility violations; values are
// read by pointer and keys; a bad points field is named and nothing is lost.
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { test } from 'node:test';
import {
  ARTIFACTS, axeSeriousViolations, cli, cliReport, demoJson, demoText, loadDemo, pageFor,
  RELATIVE_TOLERANCE, ROOT, scenarioFromUrl, settledUrl, setUp, singleFileUrl
} from './helpers.mjs';

const env = setUp();

const A = 'global-shutter-machine-vision';
const B = 'cooled-scientific';
const CHARTS = ['signal', 'exposure', 'light', 'temperature', 'budget', 'contrast'];
const scratch = mkdtempSync(join(tmpdir(), 'noise-budget-curves-'));


const close = (got, want) => got === want ||
  Math.abs(got - want) <= RELATIVE_TOLERANCE * Math.max(Math.abs(got), Math.abs(want));

function at(obj, path) {
  return path.split('.').reduce((v, k) => (v === null || v === undefined ? v : v[k]), obj);
}

/** A CSV file read by Python's csv module (a general-purpose reader), as rows of strings. */
function pythonCsv(file) {
  const py = join(ROOT, '.venv/bin/python');
  const out = execFileSync(py, ['-c',
    'import csv, json, sys\nwith open(sys.argv[1], newline="") as f:\n    print(json.dumps(list(csv.reader(f, strict=True))))',
    file], { encoding: 'utf8' });
  return JSON.parse(out);
}

async function download(page, selector) {
  const [d] = await Promise.all([page.waitForEvent('download'), page.click(selector)]);
  const path = join(scratch, d.suggestedFilename());
  await d.saveAs(path);
  return { name: d.suggestedFilename(), path };
}

/** Rows of the comparison table: { key: [{ value, difference, ratio }] }. */
const tableRows = (page) => page.$$eval('#compare-body tr', (trs) => Object.fromEntries(trs.map((tr) => [
  tr.dataset.figure,
  [...tr.querySelectorAll('td')].map((td) => ({
    value: td.dataset.value,
    difference: td.querySelector('[data-difference]')?.dataset.difference ?? null,
    ratio: td.querySelector('[data-ratio]')?.dataset.ratio ?? null,
  })),
])));

test('pin two demos: the table shows the tool’s figures and the differences from the first', async (t) => {
  const { page, requests, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
  assert.ok(await page.isHidden('#compare-table'), 'no table before anything is pinned');
  await loadDemo(page, A);
  await page.click('#pin-scenario');
  await loadDemo(page, B);
  await page.click('#pin-scenario');
  await page.waitForFunction(() => document.querySelectorAll('#compare-head th').length === 3);
  const heads = await page.$$eval('#compare-head th', (ths) => ths.map((t) => t.firstChild.textContent.trim()));
  assert.deepEqual(heads, ['figure', `A: ${demoJson(A).title}`, `B: ${demoJson(B).title}`]);
  const ra = cliReport(demoText(A));
  const rb = cliReport(demoText(B));
  const rows = await tableRows(page);
  assert.ok(Object.keys(rows).length >= 10, 'the key figures');
  for (const [key, [a, b]] of Object.entries(rows)) {
    const [wa, wb] = [at(ra, key), at(rb, key)];
    assert.ok(wa !== undefined && wb !== undefined, `${key} is a report figure`);
    if (wa === null) { assert.equal(a.value, 'null', key); continue; }
    assert.ok(close(Number(a.value), wa), `${key}: A shown ${a.value}, tool ${wa}`);
    if (wb === null) { assert.equal(b.value, 'null', key); continue; }
    assert.ok(close(Number(b.value), wb), `${key}: B shown ${b.value}, tool ${wb}`);
    // Each figure changes by a ratio, or (dB and fractions) by a difference.
    if (b.ratio !== null) assert.ok(close(Number(b.ratio), wb / wa), `${key}: ratio ${b.ratio}, want ${wb / wa}`);
    else assert.ok(close(Number(b.difference), wb - wa), `${key}: difference ${b.difference}, want ${wb - wa}`);
    assert.equal(a.ratio ?? a.difference, null, `${key}: no change shown for the first column`);
  }
  assert.ok(rows['snr.total_db'][1].difference !== null, 'SNR in dB changes by a difference');

  // Both pins are drawn on the SNR-against-signal chart, in their own colours.
  await page.waitForSelector('#curves[data-drawn-pins="2"]');
  const legend = await page.textContent('#svg-signal');
  assert.ok(legend.includes('A: 3.45') && legend.includes('B: '), 'pins in the legend');

  // The link carries the pins; opened elsewhere it shows the same comparison.
  const url = await settledUrl(page);
  const linked = scenarioFromUrl(url);
  assert.equal(linked.x_pinned.length, 2);
  assert.ok(close(cliReport(linked.x_pinned[0]).snr.total, ra.snr.total));
  assert.ok(close(cliReport(linked.x_pinned[1]).snr.total, rb.snr.total));
  const other = await pageFor(t, env.browser, url);
  await other.page.waitForFunction(() => document.querySelectorAll('#compare-head th').length === 3);
  assert.deepEqual(await tableRows(other.page), rows, 'the same table from the link');

  // Saved with a saved file: the file carries both pins.
  const [saved] = await Promise.all([page.waitForEvent('download'), page.click('#save-file')]);
  const savedJson = JSON.parse(readFileSync(await saved.path(), 'utf8'));
  assert.deepEqual(savedJson.x_pinned.map((p) => p.title), [demoJson(A).title, demoJson(B).title]);
  assert.equal(savedJson.x_pinned[0].x_pinned, undefined, 'a pin carries no pins of its own');

  // Printed: the comparison and the curves follow the results.
  await page.emulateMedia({ media: 'print' });
  assert.ok(await page.isVisible('#compare-table'), 'the comparison is printed');
  assert.ok(await page.isVisible('#svg-signal'), 'the curves are printed');
  assert.ok(!(await page.isVisible('#pin-scenario')), 'buttons are not printed');
  await page.emulateMedia({ media: 'screen' });

  // Kept with a kept scenario: keep, unpin both, load the kept one, and the pins are back.
  await page.fill('#saved-name', 'with two pins');
  await page.click('#keep-scenario');
  await page.click('[data-pin-drop="0"]');
  await page.waitForFunction(() => document.querySelectorAll('#compare-head th').length === 2);
  const afterUnpin = await page.$$eval('#compare-head th', (ths) => ths.map((t) => t.firstChild.textContent.trim()));
  assert.deepEqual(afterUnpin, ['figure', `A: ${demoJson(B).title}`], 'B moves up to A');
  await page.click('[data-pin-drop="0"]');
  await page.waitForFunction(() => document.getElementById('compare-table').hidden);
  await page.selectOption('#saved-list', 'with two pins');
  await page.click('#load-saved');
  await page.waitForFunction(() => document.querySelectorAll('#compare-head th').length === 3);
  assert.deepEqual(await tableRows(page), rows, 'the kept scenario brought its pins back');

  assert.deepEqual(errors, []);
  assert.deepEqual(requests.filter((u) => !u.startsWith(`${env.server.origin}/`) && !u.startsWith('blob:')), []);
});

test('exports: SVG and PNG of a chart, the sweep and the comparison as CSV (single file)', async (t) => {
  const { page, requests, errors } = await pageFor(t, env.browser, singleFileUrl());
  await loadDemo(page, A);
  await page.click('#pin-scenario');
  await loadDemo(page, B);
  await page.click('#pin-scenario');
  await page.waitForSelector('#curves[data-drawn-pins="2"]');

  const svg = await download(page, '[data-chart="signal"] [data-export="svg"]');
  assert.match(svg.name, /^noise-budget_.+_snr-vs-signal\.svg$/);
  const svgText = readFileSync(svg.path, 'utf8');
  assert.match(svgText, /^<svg xmlns="http:\/\/www\.w3\.org\/2000\/svg"/);
  assert.match(svgText, /<title id="svg-signal-t">SNR against signal<\/title><desc id="svg-signal-d">[^<]+<\/desc>/);
  // The regimes are in the file: named where there is room, the saturated one at least shaded
  // (its fill; with these two pins it is too narrow for its name).
  assert.ok(svgText.includes('read-noise limited') && svgText.includes('fill="#f8e9e9"'), 'regimes in the file');

  const png = await download(page, '[data-chart="budget"] [data-export="png"]');
  assert.match(png.name, /^noise-budget_.+_noise-budget-along\.png$/);
  const bytes = readFileSync(png.path);
  assert.deepEqual([...bytes.subarray(0, 8)], [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a], 'PNG signature');
  assert.equal(bytes.toString('latin1', 12, 16), 'IHDR');
  assert.deepEqual([bytes.readUInt32BE(16), bytes.readUInt32BE(20)], [1280, 800], 'twice the chart’s size');
  assert.ok(bytes.length > 10000, 'a picture, not an empty canvas');

  // The sweep CSV equals `noise-budget sweep` over the same points, and reads back with Python's csv.
  const csv = await download(page, '[data-chart="exposure"] [data-export="csv"]');
  assert.match(csv.name, /^noise-budget_.+_snr-vs-exposure-time_sweep-exposure\.time_s\.csv$/);
  const rows = pythonCsv(csv.path);
  assert.equal(rows[0][0], 'exposure.time_s [s]');
  const points = rows.length - 1;
  assert.equal(points, 200, 'the page’s default points per curve');
  const scenarioFile = join(scratch, 'b.json');
  writeFileSync(scenarioFile, demoText(B));
  const toolFile = join(scratch, 'tool-sweep.csv');
  writeFileSync(toolFile, execFileSync(cli(), ['sweep', '--vary', 'exposure.time_s', '--from', rows[1][0], '--to', rows[points][0],
    '--points', String(points), '--log', scenarioFile], { encoding: 'utf8' }));
  const toolRows = pythonCsv(toolFile);
  assert.deepEqual(rows[0], toolRows[0], 'same header');
  assert.equal(rows.length, toolRows.length);
  for (let i = 1; i < rows.length; i++) {
    rows[i].forEach((cell, j) => {
      const want = toolRows[i][j];
      const same = cell === want || (cell !== '' && want !== '' && close(Number(cell), Number(want)));
      assert.ok(same, `row ${i}, ${rows[0][j]}: page ${cell}, tool ${want}`);
    });
  }
  assert.ok(readFileSync(csv.path, 'utf8').includes('\r\n'), 'RFC 4180 line ends');

  const cmp = await download(page, '#compare-csv');
  assert.match(cmp.name, /^noise-budget_comparison_.+_vs_.+\.csv$/);
  const table = pythonCsv(cmp.path);
  assert.deepEqual(table[0].slice(0, 5), ['figure', 'label', 'unit', `A: ${demoJson(A).title}`, `B: ${demoJson(B).title}`]);
  const shown = await tableRows(page);
  for (const row of table.slice(1)) {
    const [a, b] = shown[row[0]];
    assert.equal(row[3], a.value === 'null' ? '' : a.value, `${row[0]}: A in the CSV as on the page`);
    assert.equal(row[4], b.value === 'null' ? '' : b.value, `${row[0]}: B in the CSV as on the page`);
  }
  assert.deepEqual(errors, []);
  assert.deepEqual(requests.filter((u) => u.split('#')[0] !== singleFileUrl() && !u.startsWith('blob:')), [],
    'exports make no request');
});

test('charts: labelled, accessible, values by pointer and keys, bad points named', async (t) => {
  const { page, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
  await loadDemo(page, A);
  for (const name of CHARTS) {
    const [title, desc] = await page.$eval(`#svg-${name}`, (s) => [s.querySelector('title')?.textContent, s.querySelector('desc')?.textContent]);
    assert.ok(title && desc && desc.length > 40, `${name}: title and description`);
  }
  assert.deepEqual(await axeSeriousViolations(page, '#curves'), []);
  await page.click('#pin-scenario');
  await page.waitForSelector('#curves[data-drawn-pins="1"]');
  assert.deepEqual(await axeSeriousViolations(page, '#compare'), []);

  // Pointer: the middle of the exposure chart reads a point.
  await page.locator('#svg-exposure').scrollIntoViewIfNeeded();
  const box = await page.locator('#svg-exposure').boundingBox();
  await page.mouse.move(box.x + box.width * 0.5, box.y + box.height * 0.4);
  assert.match(await page.textContent('#readout-exposure'), /^exposure time .+: SNR total .+, temporal .+$/);
  // Keys: focus starts at the scenario's own point; End goes to the last.
  await page.focus('#chart-signal');
  const first = await page.textContent('#readout-signal');
  assert.match(first, /^signal .+e⁻: SNR total/);
  await page.keyboard.press('End');
  const last = await page.textContent('#readout-signal');
  assert.notEqual(last, first);
  await page.keyboard.press('ArrowLeft');
  assert.notEqual(await page.textContent('#readout-signal'), last);
  // The contrast detection chart reads its probability in percent at each light level.
  await page.focus('#chart-contrast');
  assert.match(await page.textContent('#readout-contrast'), /^.+: contrast detection probability [\d.]+ ?% \(contrast [\d.]+ %, interval ± [\d.]+ % of it\)$/);

  // A bad points field is named, kept as typed, and the charts stay.
  await page.fill('#curve-points', '2.5k');
  assert.match(await page.textContent('#curve-points-problem'), /points per curve: must be a whole number from 2 to 2000/);
  assert.ok(await page.isVisible('#curve-points-problem'));
  assert.equal(await page.inputValue('#curve-points'), '2.5k');
  assert.ok(await page.isVisible('#svg-signal'), 'the charts drawn before are kept');
  await page.fill('#curve-points', '1000');
  assert.ok(await page.isHidden('#curve-points-problem'));
  await page.waitForSelector('#chart-exposure[data-points="1000"]');
  // On screen is pinned as A, so it is drawn once, in A's colour.
  const nowLines = await page.$$eval('#svg-exposure path[stroke="#1d5fa8"]', (ps) => ps.length);
  assert.equal(nowLines, 0, 'the scenario on screen is drawn as its pin');
  // The readout walks all 1000 points: End, then 999 steps left reach the first.
  await page.focus('#chart-exposure');
  await page.keyboard.press('Home');
  const home = await page.textContent('#readout-exposure');
  await page.keyboard.press('End');
  for (let i = 0; i < 998; i++) await page.keyboard.press('ArrowLeft');
  assert.notEqual(await page.textContent('#readout-exposure'), home, '998 steps left of the end is not the first point');
  await page.keyboard.press('ArrowLeft');
  assert.equal(await page.textContent('#readout-exposure'), home, '999 steps left of the end is the first point');
  await page.screenshot({ path: join(ARTIFACTS, 'curves.png'), fullPage: true });
  assert.deepEqual(errors, []);
});
