// End-to-end tests of the light fields (issue 4, item 6): every light kind, spectra, the QE
// curve and background light are typed into named fields, not JSON; figures equal the
// command-line tool's for the same scenario; pasted pairs get line-numbered messages beside
// their box; the light demos load into the fields. Run by scripts/test after the page is built.
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { test } from 'node:test';
import {
  ARTIFACTS, axeSeriousViolations, cliReport, compareWithReport, DEMO_NAMES, demoJson, loadDemo,
  pageFor, scenarioFromUrl, settledUrl, setUp, shownValues
} from './helpers.mjs';


const env = setUp();


const problemOf = (page, name) =>
  page.$eval(`[name="${name}"]`, (e) => e.closest('.field').querySelector('.problem').textContent);

test('every demo round-trips through the fields; the light demos need no JSON box', async (t) => {
  const { page, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
  for (const name of DEMO_NAMES) {
    await loadDemo(page, name);
    // The scenario the page builds from its fields (carried by the address) is the demo's.
    assert.deepEqual(scenarioFromUrl(await settledUrl(page)), demoJson(name), name);
    assert.equal(await page.inputValue('#extra-json'), '', `${name}: nothing left for the JSON box`);
  }
  assert.deepEqual(errors, []);
});

test('the lux-and-lens scene typed into the fields gives the tool’s figures, light units included', async (t) => {
  const { page, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
  await loadDemo(page, 'global-shutter-machine-vision');
  await page.selectOption('#light-kind', 'scene_illuminance_lux');
  await page.fill('[name="light.scene_illuminance_lux"]', '250');
  await page.fill('[name="light.reflectance"]', '0.18');
  await page.selectOption('[name="light.spectrum.kind"]', 'blackbody');
  await page.fill('[name="light.spectrum.temperature_k"]', '4000');
  await page.fill('[name="light.f_number"]', '2.8');
  await page.fill('[name="light.lens_transmission"]', '0.9');
  await page.fill('[name="light.field_angle_deg"]', '10');
  await page.selectOption('#bg-kind', 'illuminance_lux');
  await page.fill('[name="background_light.illuminance_lux"]', '0.5');
  await page.selectOption('[name="background_light.spectrum.kind"]', 'cie_d65');

  const expected = demoJson('global-shutter-machine-vision');
  expected.light = {
    scene_illuminance_lux: 250, reflectance: 0.18, spectrum: { kind: 'blackbody', temperature_k: 4000 },
    f_number: 2.8, lens_transmission: 0.9, field_angle_deg: 10,
  };
  expected.background_light = { illuminance_lux: 0.5, spectrum: { kind: 'cie_d65' } };
  assert.deepEqual(scenarioFromUrl(await settledUrl(page)), expected);
  const shown = await shownValues(page);
  // Source of every expected figure: the command-line tool's report for the same scenario.
  const report = cliReport(expected);
  assert.deepEqual(compareWithReport(shown, report), []);
  for (const key of ['min_detectable.light_units.scene_illuminance_lux', 'saturation.light_units.scene_illuminance_lux',
    'light.sensor_illuminance_lux', 'light.camera_equation', 'light.effective_quantum_efficiency', 'light.band_nm',
    'background_e', 'noise_e.background_shot']) {
    assert.ok(key in shown, `${key} shown`);
  }
  assert.match(await page.textContent('[data-units-of="min_detectable.light_units"]'), /faintest detectable illuminance on the scene/);
  assert.match(await page.textContent('[data-units-of="saturation.light_units"]'), /saturates at illuminance on the scene/);
  // The spectrum is drawn, with a title and a description.
  assert.match(await page.textContent('#plot-light svg title'), /blackbody/);
  assert.ok((await page.textContent('#plot-light svg desc')).length > 20);

  // A QE curve and a response band typed in the sensor group.
  // (D65, a table, ends at 830 nm: the band stays inside it.)
  await page.fill('[name="sensor.quantum_efficiency_curve"]', '380\t0.3\n500, 0.6\n700; 0.5\n820 0.1');
  await page.fill('[name="sensor.response_from_nm"]', '400');
  await page.fill('[name="sensor.response_to_nm"]', '800');
  expected.sensor.quantum_efficiency_curve = [[380, 0.3], [500, 0.6], [700, 0.5], [820, 0.1]];
  expected.sensor.response_from_nm = 400;
  expected.sensor.response_to_nm = 800;
  assert.ok(!(await page.$eval('#results', (e) => e.classList.contains('stale'))), 'a valid scenario');
  assert.deepEqual(scenarioFromUrl(await settledUrl(page)), expected);
  assert.deepEqual(compareWithReport(await shownValues(page), cliReport(expected)), []);
  assert.match(await page.textContent('#plot-qe svg title'), /Quantum efficiency/);
  assert.deepEqual(errors, []);
});

test('a pasted spectrum with a bad line and a wavelength going back: both named by line; results kept, stale', async (t) => {
  const { page, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
  await loadDemo(page, 'conveyor-lux-and-lens');
  const before = await shownValues(page);
  const typed = '400\t0.05\n440\t0.6\nabc\n455\t1.0\n430\t0.4\n500\t0.25';
  await page.fill('[name="light.spectrum.points"]', typed);
  const message = await problemOf(page, 'light.spectrum.points');
  // Line 3 is not two numbers (the page's own split); line 5 goes back in wavelength (the
  // engine's rule, its point [3] shown as the line it came from).
  assert.match(message, /line 3: expected two numbers, got 'abc'/);
  assert.match(message, /line 5: wavelengths must increase, got 430 nm after 455 nm/);
  assert.equal(await page.getAttribute('[name="light.spectrum.points"]', 'aria-invalid'), 'true');
  assert.ok(await page.$eval('#results', (e) => e.classList.contains('stale')));
  assert.deepEqual(await shownValues(page), before, 'last valid figures stay');
  assert.equal(await page.inputValue('[name="light.spectrum.points"]'), typed, 'typed text kept');

  // Only the bad line left: still refused (the results stay stale), with its message alone.
  await page.fill('[name="light.spectrum.points"]', '400\t0.05\n440\t0.6\nabc\n455\t1.0');
  assert.equal(await problemOf(page, 'light.spectrum.points'), "line 3: expected two numbers, got 'abc'");
  assert.ok(await page.$eval('#results', (e) => e.classList.contains('stale')));

  // Reflectance above 1 and an f-number below 0.5: the engine's messages beside their fields.
  await page.fill('[name="light.spectrum.points"]', '400\t0.05\n440\t0.6\n455\t1.0');
  assert.ok(!(await page.$eval('#results', (e) => e.classList.contains('stale'))), 'fixed: live again');
  const fixed = await shownValues(page);
  await page.fill('[name="light.reflectance"]', '1.2');
  await page.fill('[name="light.f_number"]', '0.3');
  assert.equal(await problemOf(page, 'light.reflectance'), 'must be ≤ 1, got 1.2');
  assert.equal(await problemOf(page, 'light.f_number'), 'must be ≥ 0.5, got 0.3');
  assert.equal(await problemOf(page, 'light.spectrum.points'), '');
  assert.deepEqual(await shownValues(page), fixed);
  assert.deepEqual(await axeSeriousViolations(page), [], 'accessible while invalid');
  assert.deepEqual(errors, []);
});

test('the light demos are accessible, and screenshots of them are kept', async (t) => {
  const { page, errors } = await pageFor(t, env.browser, `${env.server.origin}/`);
  for (const name of ['conveyor-lux-and-lens', 'nir-illuminator-daylight']) {
    await loadDemo(page, name);
    assert.deepEqual(await axeSeriousViolations(page), [], name);
    await page.screenshot({ path: join(ARTIFACTS, `light-form-${name}.png`), fullPage: true });
  }
  assert.deepEqual(errors, []);
});
