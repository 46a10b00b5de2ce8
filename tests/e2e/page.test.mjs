// End-to-end tests of the built page (served from 127.0.0.1) and of the single file (file://),
// in Debian's Chromium: figures equal the command-line tool's, links round-trip, bad input and
// bad links give messages, no request leaves the page's own files, no serious accessibility
// violations. Run by scripts/test after the page is built (node --test tests/e2e/).
import assert from 'node:assert/strict';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, test } from 'node:test';
import {
  ARTIFACTS, axeSeriousViolations, cliReport, compareWithReport, DEMO_NAMES, demoJson, demoText,
  linkFor, loadDemo, pageFor, scenarioFromUrl, settledUrl, setUp, shownIfProblems, shownValues, singleFileUrl
} from './helpers.mjs';


const env = setUp();

const TARGETS = [
  { slug: 'served', name: 'the served page', url: () => `${env.server.origin}/` },
  { slug: 'file', name: 'the single file from file://', url: () => singleFileUrl() },
];

/** Every request stayed within the page's own files (for the single file: the file only). */
function assertOwnRequests(target, requests, errors) {
  assert.deepEqual(errors, [], 'no page errors or console errors');
  if (target.slug === 'file') {
    const file = singleFileUrl();
    const others = requests.filter((u) => u.split('#')[0] !== file);
    assert.deepEqual(others, [], 'the single file requests nothing but itself');
  } else {
    const others = requests.filter((u) => !u.startsWith(`${env.server.origin}/`) && !u.startsWith(`blob:${env.server.origin}/`));
    assert.deepEqual(others, [], 'the page requests only its own files');
  }
}

/** The text of every scenario control, by name (plus the light kind); `shownOnly` leaves out
 * the fields of the light kinds not chosen (which a loaded scenario does not fill). */
const formState = (page, shownOnly = false) => page.$$eval('#scenario-form input, #scenario-form select',
  (els, only) => Object.fromEntries(els.filter((e) => !only || e.offsetParent !== null).map((e) => [e.name || e.id, e.value])), shownOnly);


for (const target of TARGETS) {
  describe(target.name, () => {
    test('each demo loads with one action and shows the tool’s figures and warnings', async (t) => {
      const { page, requests, errors } = await pageFor(t, env.browser, target.url());
      for (const name of DEMO_NAMES) {
        await loadDemo(page, name);
        const report = cliReport(demoText(name));
        assert.deepEqual(compareWithReport(await shownValues(page), report), [], name);
        // The colour and HDR results are shown exactly when the tool reports them.
        assert.deepEqual(await shownIfProblems(page, report), [], name);
        // Each warning of the tool is shown as its sentence, in a group holding a figure it concerns.
        const shown = await page.$$eval('[data-warning]', (els) => els.map((e) => ({
          code: e.dataset.warning,
          text: e.textContent,
          figures: [...e.closest('[data-warn-host], #results').querySelectorAll('[data-report]')].map((f) => f.dataset.report),
        })));
        for (const w of report.warnings) {
          const places = shown.filter((s) => s.code === w.code && s.text === w.message);
          assert.ok(places.length > 0, `${name}: warning ${w.code} shown`);
          const onPage = w.concerns.filter((c) => places.some((p) => p.figures.includes(c)));
          assert.ok(onPage.length > 0 || w.concerns.length === 0, `${name}: ${w.code} beside ${w.concerns}`);
        }
        assert.equal(shown.filter((s) => !report.warnings.some((w) => w.code === s.code)).length, 0,
          `${name}: no warning the tool does not give`);
        if (target.slug === 'served') {
          await page.screenshot({ path: join(ARTIFACTS, `demo-${name}.png`), fullPage: true });
        }
      }
      assertOwnRequests(target, requests, errors);
    });

    test('fields filled by name give the tool’s figures for the same scenario; the link round-trips', async (t) => {
      const { page, requests, errors } = await pageFor(t, env.browser, target.url());
      await loadDemo(page, 'global-shutter-machine-vision');
      await page.fill('[name="title"]', 'Edited by the page test');
      await page.fill('[name="sensor.read_noise_e"]', '3.1');
      await page.selectOption('[name="sensor.readout"]', 'single');
      await page.fill('[name="sensor.sense_node_capacitance_ff"]', '');
      await page.selectOption('#light-kind', 'photons_per_pixel');
      await page.fill('[name="light.photons_per_pixel"]', '1500');
      await page.fill('[name="exposure.binning"]', '2');
      await page.selectOption('[name="exposure.binning_mode"]', 'charge');
      await page.fill('[name="exposure.frames_averaged"]', '3');
      await page.fill('[name="temperature_c"]', '55');
      await page.fill('[name="snr_threshold"]', '10');

      const expected = demoJson('global-shutter-machine-vision');
      expected.title = 'Edited by the page test';
      expected.sensor.read_noise_e = 3.1;
      expected.sensor.readout = 'single';
      delete expected.sensor.sense_node_capacitance_ff;
      expected.light = { photons_per_pixel: 1500 };
      Object.assign(expected.exposure, { binning: 2, binning_mode: 'charge', frames_averaged: 3 });
      expected.temperature_c = 55;
      expected.snr_threshold = 10;

      const shown = await shownValues(page);
      const report = cliReport(expected);
      assert.deepEqual(compareWithReport(shown, report), []);
      // The capacitance left empty is shown as derived from the conversion gain.
      assert.ok(await page.isVisible('#d-sense-node-capacitance'), 'derived capacitance visible');
      assert.equal(Number(shown.sense_node_capacitance_ff), report.sense_node_capacitance_ff);

      // The address carries exactly this scenario, and opening it shows the same.
      const url = await settledUrl(page);
      assert.deepEqual(scenarioFromUrl(url), expected);
      const before = await formState(page, true);
      const second = await pageFor(t, env.browser, url);
      assert.deepEqual(await shownValues(second.page), shown);
      assert.deepEqual(await formState(second.page, true), before);
      assertOwnRequests(target, second.requests, second.errors);
      assertOwnRequests(target, requests, errors);
    });

    test('malformed, newer-version and unknown-key links are refused with a message; the scenario stays', async (t) => {
      const demo = demoJson('cooled-scientific');
      const { page, requests, errors } = await pageFor(t, env.browser, target.url() + linkFor(demo));
      const values = await shownValues(page);
      const fields = await formState(page);
      assert.deepEqual(compareWithReport(values, cliReport(demo)), []);
      const cases = [
        ['#scenario=%%%', /not base64url/],
        ['#scenario=__4', /UTF-8/],
        [linkFor('{"version":1,'), /scenario: not valid JSON/],
        [linkFor([1, 2]), /must be a JSON object/],
        [linkFor({ ...demo, version: 2 }), /version: this scenario is format version 2, newer than this calculator reads/],
        [linkFor({ ...demo, sensor: { ...demo.sensor, colour_depth: 8 } }), /sensor\.colour_depth: unknown key/],
        [linkFor({ ...demo, sensor: { ...demo.sensor, full_well_e: -5 } }), /sensor\.full_well_e: must be > 0, got -5/],
      ];
      for (const [hash, message] of cases) {
        await page.evaluate((h) => { location.hash = h; }, hash);
        await page.waitForSelector('#load-problems:not([hidden])');
        const text = await page.textContent('#load-problems');
        assert.match(text, message, hash);
        assert.match(text, /scenario on screen is unchanged/);
        assert.deepEqual(await shownValues(page), values, `${hash}: figures unchanged`);
        assert.deepEqual(await formState(page), fields, `${hash}: fields unchanged`);
        // The address is put back to the scenario on screen.
        assert.deepEqual(scenarioFromUrl(await settledUrl(page)), demo);
        await page.evaluate(() => document.getElementById('load-problems').setAttribute('hidden', ''));
      }
      // A bad link on arrival: a message, and the page still shows a valid scenario.
      const fresh = await pageFor(t, env.browser, `${target.url()}#scenario=%%%`);
      assert.match(await fresh.page.textContent('#load-problems'), /not base64url/);
      const first = demoJson(DEMO_NAMES[0]);
      assert.deepEqual(compareWithReport(await shownValues(fresh.page), cliReport(first)), []);
      assertOwnRequests(target, fresh.requests, fresh.errors);
      assertOwnRequests(target, requests, errors);
    });

    test('an invalid field is marked with the engine’s message; results stay, marked stale; typing is kept', async (t) => {
      const { page, requests, errors } = await pageFor(t, env.browser, target.url());
      await loadDemo(page, 'three-transistor-no-cds');
      const before = await shownValues(page);
      const problemOf = (name) => page.$eval(`[name="${name}"]`, (e) => e.closest('.field').querySelector('.problem').textContent);
      const invalid = (name) => page.getAttribute(`[name="${name}"]`, 'aria-invalid');

      await page.fill('[name="sensor.full_well_e"]', '-5');
      assert.equal(await invalid('sensor.full_well_e'), 'true');
      assert.equal(await problemOf('sensor.full_well_e'), 'must be > 0, got -5');
      assert.ok(await page.$eval('#results', (e) => e.classList.contains('stale')));
      assert.ok(await page.isVisible('#stale-note'));
      assert.deepEqual(await shownValues(page), before, 'last valid figures stay');

      await page.fill('[name="sensor.adc_bits"]', '12.5');
      await page.fill('[name="sensor.quantum_efficiency"]', 'abc');
      await page.fill('[name="sensor.read_noise_e"]', '');
      assert.match(await problemOf('sensor.adc_bits'), /must be a whole number/);
      assert.match(await problemOf('sensor.quantum_efficiency'), /must be a number, got "abc"/);
      assert.match(await problemOf('sensor.read_noise_e'), /required/);
      assert.equal(await invalid('sensor.full_well_e'), 'true', 'earlier problem still marked');
      assert.equal(await page.inputValue('[name="sensor.quantum_efficiency"]'), 'abc', 'typed text kept');
      assert.equal(await page.inputValue('[name="sensor.full_well_e"]'), '-5', 'typed text kept');
      assert.deepEqual(await shownValues(page), before);
      // The description of an invalid field includes its message.
      const described = await page.$eval('[name="sensor.full_well_e"]', (e) =>
        e.getAttribute('aria-describedby').split(' ').map((id) => document.getElementById(id)?.textContent ?? '').join(' '));
      assert.match(described, /must be > 0/);
      assert.deepEqual(await axeSeriousViolations(page), [], 'accessible while invalid');

      // A reset readout without a capacitance or conversion gain: the rule is named at the field.
      await page.fill('[name="sensor.sense_node_capacitance_ff"]', '');
      assert.match(await problemOf('sensor.sense_node_capacitance_ff'), /required when sensor\.readout is "dds"/);

      // Fixing every field brings live, matching results back.
      await page.fill('[name="sensor.full_well_e"]', '20000');
      await page.fill('[name="sensor.adc_bits"]', '12');
      await page.fill('[name="sensor.quantum_efficiency"]', '0.45');
      await page.fill('[name="sensor.read_noise_e"]', '6.0');
      await page.fill('[name="sensor.sense_node_capacitance_ff"]', '4.5');
      assert.equal(await page.$$eval('[aria-invalid]', (els) => els.length), 0);
      assert.ok(!(await page.$eval('#results', (e) => e.classList.contains('stale'))));
      const fixed = demoJson('three-transistor-no-cds');
      fixed.sensor.full_well_e = 20000;
      assert.deepEqual(compareWithReport(await shownValues(page), cliReport(fixed)), []);
      assertOwnRequests(target, requests, errors);
    });

    test('nonsense in every field never breaks the page', async (t) => {
      const { page, requests, errors } = await pageFor(t, env.browser, target.url());
      const names = await page.$$eval('#scenario-form input[name]', (els) => els.filter((e) => e.offsetParent !== null).map((e) => e.name));
      for (const junk of ['1e999', '-', '💥', '0x10', '1,5', 'NaN', '9'.repeat(400), '-0', '1e-400']) {
        for (const name of names) await page.fill(`[name="${name}"]`, junk);
        assert.ok(await page.isVisible('[data-report="snr.temporal"]'));
      }
      assert.ok(await page.$eval('#results', (e) => e.classList.contains('stale')));
      await loadDemo(page, 'small-pixel-rolling-shutter');
      assert.deepEqual(compareWithReport(await shownValues(page), cliReport(demoText('small-pixel-rolling-shutter'))), []);
      assertOwnRequests(target, requests, errors);
    });

    test('a strict Content-Security-Policy is in force: no fetch, no unhashed script', async (t) => {
      const { page, requests, errors } = await pageFor(t, env.browser, target.url());
      const csp = await page.getAttribute('meta[http-equiv="Content-Security-Policy"]', 'content');
      assert.match(csp, /default-src 'none'/);
      assert.match(csp, /connect-src 'none'/);
      assert.doesNotMatch(csp, /'unsafe-inline'|'unsafe-eval'/);
      // The policy is enforced, not only written: a fetch of the page's own file and an inline
      // script without the page's hash are refused. (The test's own page.evaluate is exempt,
      // as the browser's developer protocol is.)
      const fetched = await page.evaluate(() => fetch(location.href.split('#')[0]).then(() => 'allowed', () => 'refused'));
      assert.equal(fetched, 'refused');
      const injected = await page.evaluate(async () => {
        const s = document.createElement('script');
        s.textContent = 'window.injectedScriptRan = true;';
        document.head.appendChild(s);
        await new Promise((r) => setTimeout(r, 50));
        return window.injectedScriptRan ? 'allowed' : 'refused';
      });
      assert.equal(injected, 'refused');
      // Those refusals are the only errors, and the refused fetch made no request.
      assert.ok(errors.every((e) => /Content Security Policy/.test(e)), errors.join('\n'));
      assertOwnRequests(target, requests, []);
    });

    test('no serious or critical accessibility violations (axe-core), for each demo', async (t) => {
      const { page, requests, errors } = await pageFor(t, env.browser, target.url());
      for (const name of DEMO_NAMES) {
        await loadDemo(page, name);
        assert.deepEqual(await axeSeriousViolations(page), [], name);
      }
      assertOwnRequests(target, requests, errors);
    });
  });
}

describe('the served page: keeping, sharing, keyboard, print, narrow column', () => {
  test('save as file, then open it again; the file is what the command-line tool reads', async (t) => {
    const { page, requests, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
    await loadDemo(page, 'cooled-scientific');
    await page.fill('[name="exposure.time_s"]', '0.75');
    const shown = await shownValues(page);
    const [download] = await Promise.all([page.waitForEvent('download'), page.click('#save-file')]);
    assert.match(download.suggestedFilename(), /^cooled-large-pixel-scientific-class.*\.json$/);
    const text = readFileSync(await download.path(), 'utf8');
    assert.deepEqual(JSON.parse(text), scenarioFromUrl(await settledUrl(page)));
    assert.deepEqual(compareWithReport(shown, cliReport(text)), []);

    await loadDemo(page, 'small-pixel-rolling-shutter');
    await page.setInputFiles('#open-file', { name: 'saved.json', mimeType: 'application/json', buffer: Buffer.from(text) });
    await page.waitForFunction(() => document.getElementById('status').textContent.includes('saved.json'));
    assert.deepEqual(await shownValues(page), shown);

    // A malformed file and a newer one: messages, nothing changes.
    const fields = await formState(page);
    for (const [name, body, message] of [
      ['bad.json', '{"version": 1, "sensor": ', /not valid JSON/],
      ['newer.json', JSON.stringify({ ...JSON.parse(text), version: 3 }), /newer than this calculator reads/],
      ['typo.json', JSON.stringify({ ...JSON.parse(text), temprature_c: 20 }), /temprature_c: unknown key \(did you mean "temperature_c"\?\)/],
    ]) {
      await page.setInputFiles('#open-file', { name, mimeType: 'application/json', buffer: Buffer.from(body) });
      await page.waitForSelector('#load-problems:not([hidden])');
      const problems = await page.textContent('#load-problems');
      assert.match(problems, message, name);
      assert.ok(problems.includes(`the file “${name}”`), name);
      assert.deepEqual(await formState(page), fields, name);
      assert.deepEqual(await shownValues(page), shown, name);
    }
    assertOwnRequests(TARGETS[0], requests, errors);
  });

  test('the last scenario survives a reload, and scenarios kept by name come back', async (t) => {
    const { page, requests, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
    await loadDemo(page, 'small-pixel-rolling-shutter');
    await page.fill('[name="sensor.read_noise_e"]', '0.42');
    await settledUrl(page);
    const shown = await shownValues(page);
    await page.goto(`${env.server.origin}/`); // no link: the browser's store decides
    await page.waitForSelector('html[data-ready]');
    assert.equal(await page.inputValue('[name="sensor.read_noise_e"]'), '0.42');
    assert.deepEqual(await shownValues(page), shown);

    await page.fill('#saved-name', 'bench A');
    await page.click('#keep-scenario');
    assert.match(await page.textContent('#status'), /Kept as “bench A”/);
    await loadDemo(page, 'cooled-scientific');
    await page.selectOption('#saved-list', 'bench A');
    await page.click('#load-saved');
    assert.deepEqual(await shownValues(page), shown);
    await page.click('#forget-saved');
    assert.deepEqual(await page.$$eval('#saved-list option', (o) => o.map((x) => x.value)), ['']);
    assertOwnRequests(TARGETS[0], requests, errors);
  });

  test('copy link puts the address of the scenario on the clipboard', async (t) => {
    const context = await env.browser.newContext();
    await context.grantPermissions(['clipboard-read', 'clipboard-write'], { origin: env.server.origin });
    const { page, requests, errors } = await pageFor(t, env.browser, `${env.server.origin}/`, { context });
    await page.fill('[name="exposure.time_s"]', '0.004');
    await page.click('#copy-link');
    await page.waitForFunction(() => document.getElementById('status').textContent === 'Link copied.');
    const copied = await page.evaluate(() => navigator.clipboard.readText());
    assert.equal(copied, await settledUrl(page));
    assert.equal(scenarioFromUrl(copied).exposure.time_s, 0.004);
    // With an invalid field there is no valid scenario to share: say so.
    await page.fill('[name="exposure.time_s"]', '0');
    await page.click('#copy-link');
    assert.match(await page.textContent('#status'), /fix them first/);
    assertOwnRequests(TARGETS[0], requests, errors);
  });

  test('works by keyboard alone: load a demo, edit a field', async (t) => {
    const { page, requests, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
    const want = demoJson('cooled-scientific');
    let found = false;
    for (let i = 0; i < 40 && !found; i++) {
      await page.keyboard.press('Tab');
      found = await page.evaluate(() => document.activeElement?.dataset?.demo === 'cooled-scientific');
    }
    assert.ok(found, 'the demo button is reachable with Tab');
    await page.keyboard.press('Enter');
    assert.equal(await page.inputValue('[name="title"]'), want.title);
    found = false;
    for (let i = 0; i < 60 && !found; i++) {
      await page.keyboard.press('Tab');
      found = await page.evaluate(() => document.activeElement?.name === 'sensor.read_noise_e');
    }
    assert.ok(found, 'the read noise field is reachable with Tab');
    // Its explanation shows while it has focus.
    assert.ok(await page.isVisible('#h-read-noise'));
    await page.keyboard.press('Control+A');
    await page.keyboard.type('2.5');
    want.sensor.read_noise_e = 2.5;
    assert.deepEqual(compareWithReport(await shownValues(page), cliReport(want)), []);
    assertOwnRequests(TARGETS[0], requests, errors);
  });

  test('prints inputs on the first page, results, warnings, version and date from the second, the curves on a page of their own', async (t) => {
    const { page, requests, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
    for (const name of DEMO_NAMES) {
      await loadDemo(page, name);
      await page.emulateMedia({ media: 'print' });
      assert.ok(!(await page.isVisible('.tools')), 'tools hidden in print');
      assert.match(await page.textContent('.stamp'), /noise-budget \d+\.\d+\.\d+ · printed \d{4}-\d{2}-\d{2}/);
      assert.ok(await page.isVisible('[name="sensor.full_well_e"]'), 'inputs printed');
      const warnings = await page.$$('[data-warning]');
      for (const w of warnings) assert.ok(await w.isVisible(), 'warnings printed');
      await page.screenshot({ path: join(ARTIFACTS, `print-${name}.png`), fullPage: true });
      const pdf = await page.pdf({ format: 'A4', printBackground: true });
      writeFileSync(join(ARTIFACTS, `print-${name}.pdf`), pdf);
      const pages = (pdf.toString('latin1').match(/\/Type\s*\/Page(?!s)/g) ?? []).length;
      // With the Detection group, inputs and results no longer fit one page: the inputs are on
      // page 1, the results from page 2 (two columns), the curves on a page of their own.
      // A sensor both colour and HDR has results for two pages.
      const report = cliReport(demoText(name));
      const both = Boolean(report.channels && report.hdr);
      assert.equal(pages, both ? 4 : 3, `${name} prints on ${pages} pages`);
      const layout = await page.$eval('#results', (e) => ({ breakBefore: getComputedStyle(e).breakBefore, columns: getComputedStyle(e).columnCount }));
      assert.deepEqual(layout, { breakBefore: 'page', columns: '2' }, name);
      for (const id of ['svg-signal', 'svg-exposure', 'svg-light', 'svg-temperature', 'svg-budget', 'svg-contrast']) {
        assert.ok(await page.isVisible(`#${id}`), `${name}: chart ${id} printed`);
      }
      assert.ok(!(await page.isVisible('#compare')), 'the comparison is left out of print while nothing is pinned');
      await page.emulateMedia({ media: 'screen' });
    }
    assertOwnRequests(TARGETS[0], requests, errors);
  });

  // Issue 15, item 3: the three answers in the first view, charts readable, SI prefixes.
  test('at 1366 × 768 the first view answers; chart text is 12 px or more; no E-notation', async (t) => {
    const { page, requests, errors } = await pageFor(t, env.browser, `${env.server.origin}/`, { viewport: { width: 1366, height: 768 } });
    for (const name of DEMO_NAMES) {
      await loadDemo(page, name);
      await page.evaluate(() => window.scrollTo(0, 0));
      for (const path of ['snr.temporal', 'min_detectable.signal_e', 'exposure_for_threshold_s']) {
        const box = await page.evaluate((p) => {
          const r = document.querySelector(`[data-report="${p}"]`)?.getBoundingClientRect();
          return r ? { top: r.top, bottom: r.bottom, height: r.height } : null;
        }, path);
        assert.ok(box && box.height > 0 && box.top >= 0 && box.bottom <= 768, `${name}: ${path} is not in the first view (${JSON.stringify(box)})`);
      }
      await page.waitForFunction(() => document.querySelectorAll('.charts svg text').length > 0);
      // The rendered size of chart text: its font size in the SVG's units times the SVG's scale.
      const smallest = await page.evaluate(() => Math.min(...[...document.querySelectorAll('.charts svg')].flatMap((svg) => {
        const scale = svg.getBoundingClientRect().width / svg.viewBox.baseVal.width;
        return [...svg.querySelectorAll('text')].map((el) => parseFloat(getComputedStyle(el).fontSize) * scale);
      })));
      assert.ok(smallest >= 12, `${name}: chart text rendered at ${smallest.toFixed(1)} px`);
      const text = await page.evaluate(() => ['results', 'curves'].map((id) => document.getElementById(id)?.innerText ?? '').join('\n'));
      const eNotation = text.match(/\d[eE][+-]?\d/);
      assert.equal(eNotation, null, `${name}: E-notation shown: …${eNotation ? text.slice(Math.max(0, eNotation.index - 30), eNotation.index + 30) : ''}…`);
    }
    await page.screenshot({ path: join(ARTIFACTS, 'first-view-1366x768.png') });
    assertOwnRequests(TARGETS[0], requests, errors);
  });

  test('readable in a narrow wiki column (400 px): no sideways scrolling', async (t) => {
    const { page, requests, errors } = await pageFor(t, env.browser, `${env.server.origin}/`, { viewport: { width: 400, height: 900 } });
    for (const name of ['three-transistor-no-cds', 'cooled-scientific']) {
      await loadDemo(page, name);
      const overflow = await page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);
      assert.ok(overflow <= 0, `${name}: page is ${overflow}px wider than the column`);
      await page.screenshot({ path: join(ARTIFACTS, `narrow-${name}.png`), fullPage: true });
    }
    assert.deepEqual(await axeSeriousViolations(page), []);
    assertOwnRequests(TARGETS[0], requests, errors);
  });
});

describe('a damaged single file', () => {
  // A copy of the single file whose embedded wasm lost a stretch of its bytes (as a broken
  // download or a mail gateway might leave it), its script's CSP hash written again so the
  // script runs: the page says it could not start and why, instead of staying blank.
  test('says the calculator could not start and that the file may be damaged', async () => {
    const { createHash } = await import('node:crypto');
    const { mkdtempSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { pathToFileURL } = await import('node:url');
    const html = readFileSync(new URL(singleFileUrl()), 'utf8');
    const script = html.match(/<script type="module" id="noise-budget-app"[^>]*>([\s\S]*?)<\/script>/)[1];
    const marker = 'const NOISE_BUDGET_WASM_PACKED = "';
    const start = script.indexOf(marker) + marker.length;
    assert.ok(start > marker.length, 'the embedded wasm is found');
    // Replace 4 KB in the middle of the packed wasm (LZMA) by base64 of zeros.
    const mid = start + 100000;
    const damaged = script.slice(0, mid) + 'A'.repeat(4096) + script.slice(mid + 4096);
    const sha = (t) => createHash('sha256').update(t, 'utf8').digest('base64');
    const copy = html.replace(script, () => damaged).replace(`'sha256-${sha(script)}'`, `'sha256-${sha(damaged)}'`);
    assert.notEqual(copy, html);
    const dir = mkdtempSync(join(tmpdir(), 'noise-budget-damaged-'));
    writeFileSync(join(dir, 'noise-budget.html'), copy);
    const ctx = await env.browser.newContext();
    try {
      const page = await ctx.newPage();
      const errors = [];
      page.on('pageerror', (e) => errors.push(e.message));
      await page.goto(pathToFileURL(join(dir, 'noise-budget.html')).href);
      await page.waitForSelector('#boot-status:not([hidden])', { timeout: 15000 });
      const text = await page.textContent('#boot-status');
      assert.match(text, /^The calculator could not start in this browser: Error: its embedded code (could not be unpacked|unpacked to|does not compile).*download it again/, text);
      assert.deepEqual(errors, [], 'no uncaught error besides the message');
      assert.equal(await page.$('html[data-ready]'), null, 'the page does not claim to be ready');
      assert.equal(await page.$('#boot-waiting'), null, 'one message, not two');
    } finally {
      await ctx.close();
    }
  });

  // The same damage without the hash written again: the browser refuses the script (its CSP
  // hash no longer matches), so no code of the page runs; the page's static line says so.
  test('whose script the browser refuses says, after a moment, that the calculator has not started', async () => {
    const { mkdtempSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { pathToFileURL } = await import('node:url');
    const html = readFileSync(new URL(singleFileUrl()), 'utf8');
    const at = html.indexOf('const NOISE_BUDGET_WASM_PACKED = "') + 140000;
    const copy = html.slice(0, at) + (html[at] === 'A' ? 'B' : 'A') + html.slice(at + 1);
    const dir = mkdtempSync(join(tmpdir(), 'noise-budget-refused-'));
    writeFileSync(join(dir, 'noise-budget.html'), copy);
    const ctx = await env.browser.newContext();
    try {
      const page = await ctx.newPage();
      await page.goto(pathToFileURL(join(dir, 'noise-budget.html')).href);
      assert.equal(await page.isVisible('#boot-waiting'), false, 'not shown at once');
      await page.waitForSelector('#boot-waiting', { state: 'visible', timeout: 10000 });
      assert.match(await page.textContent('#boot-waiting'), /has not started.*damaged: download it again/);
      assert.equal(await page.$('html[data-ready]'), null);
    } finally {
      await ctx.close();
    }
  });
});
