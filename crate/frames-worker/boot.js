// ---- noise-budget frame worker start-up (crate/frames-worker/boot.js) ----
// scripts/single-file.mjs puts this in the page's app script, after the wasm-bindgen glue, in a
// block that runs only where there is no document: the page starts the same script as a classic
// worker (from its file, or from a Blob URL of its text in the self-contained file), so nothing
// is fetched, and posts it the page's own compiled WebAssembly.Module first. `wasm_bindgen` is
// the glue's exports. This script only starts the engine, reads the files (the next ones while
// Rust analyses the current one) and posts messages; the analysis is Rust's (src/bindings.rs).
//
// Messages in:  { engine: WebAssembly.Module }       first, from the page: its compiled engine
//               { manifest: "<manifest JSON text>", files: [File | ArrayBuffer, …] }
//               { bench: { width, height, repeats } }
//               { simulate: { id, scenario: "<scenario JSON>", seed: "<u64 as text>" } }
//               { series: { id, scenario, seed, zip: true | false } }
// Messages out: { type: 'progress', index, frame }  after each file (frame: "W × H, B-bit" or null)
//               { type: 'done', result }            result: the JSON text of job::run
//               { type: 'bench', ms }
//               { type: 'frame', id, result, rgba } result: the JSON of sim::frame, rgba its pixels
//               { type: 'series', id, result, buffers } the zip, or the files in manifest order
//               { type: 'failed', message, id }     the worker itself could not work

// Settled once the page's engine has been instantiated here (or could not be).
let noiseBudgetEngineArrived;
const noiseBudgetReady = new Promise((resolve, reject) => {
  noiseBudgetEngineArrived = { resolve, reject };
});
// A failure is reported to each request that waits for the engine, not as an unhandled rejection.
noiseBudgetReady.catch(() => {});

// How many files are read ahead of the one being analysed: the frames the engine's stack
// accumulator sums at once (engine::ptc::FRAMES_SUMMED_AT_ONCE), so the next ones are read while
// those are summed; with one ahead the reads waited through every burst of summing.
const NOISE_BUDGET_READ_AHEAD = 4;

// Reads the files: in a second worker when this browser lets a worker start one (its reads then
// go on while this worker analyses), else here. read(i) gives a promise of { bytes } or
// { why }, never rejected; close() stops the second worker.
const NOISE_BUDGET_READER_SOURCE = `self.onmessage = (e) => {
  const { id, file } = e.data;
  try {
    const buffer = new FileReaderSync().readAsArrayBuffer(file);
    self.postMessage({ id, buffer }, [buffer]);
  } catch (err) {
    self.postMessage({ id, why: String((err && err.message) || err) });
  }
};`;
function noiseBudgetReader(files) {
  const why = (err) => String((err && err.message) || err || 'no reason given');
  const here = (i) => {
    const f = files[i];
    try {
      if (f instanceof Blob) return { bytes: new Uint8Array(new FileReaderSync().readAsArrayBuffer(f)) };
      if (f instanceof ArrayBuffer) return { bytes: new Uint8Array(f) };
      return { why: 'no such file was sent to the worker' };
    } catch (err) {
      return { why: why(err) };
    }
  };
  let helper = null;
  let url = '';
  const waiting = new Map();
  let next = 0;
  if (typeof Worker === 'function' && files.some((f) => f instanceof Blob)) {
    try {
      url = URL.createObjectURL(new Blob([NOISE_BUDGET_READER_SOURCE], { type: 'text/javascript' }));
      helper = new Worker(url);
    } catch {
      helper = null;
    }
  }
  const stop = () => {
    if (helper) helper.terminate();
    helper = null;
    if (url) URL.revokeObjectURL(url);
    url = '';
  };
  if (helper) {
    helper.onmessage = (e) => {
      const w = waiting.get(e.data.id);
      if (!w) return;
      waiting.delete(e.data.id);
      w.resolve(e.data.buffer ? { bytes: new Uint8Array(e.data.buffer) } : { why: e.data.why });
    };
    // A second worker that cannot run (a policy, a browser without FileReaderSync there):
    // the reads it was given, and all later ones, are made here.
    helper.onerror = (e) => {
      e.preventDefault();
      stop();
      for (const w of waiting.values()) w.resolve(here(w.index));
      waiting.clear();
    };
  }
  return {
    read(i) {
      if (!helper || !(files[i] instanceof Blob)) return Promise.resolve(here(i));
      return new Promise((resolve) => {
        const id = next++;
        waiting.set(id, { resolve, index: i });
        helper.postMessage({ id, file: files[i] });
      });
    },
    close: stop,
  };
}

self.onmessage = async (event) => {
  const data = event.data ?? {};
  if (data.engine !== undefined) {
    try {
      if (!(data.engine instanceof WebAssembly.Module)) throw new Error('the page sent no compiled engine');
      wasm_bindgen.initSync({ module: data.engine });
      noiseBudgetEngineArrived.resolve();
    } catch (err) {
      noiseBudgetEngineArrived.reject(err);
    }
    return;
  }
  try {
    await noiseBudgetReady;
  } catch (err) {
    self.postMessage({ type: 'failed', id: data.simulate?.id ?? data.series?.id, message: `the frame analysis could not start in this browser: ${err}` });
    return;
  }
  // The page's simulations (src/sim.rs): answers carry the request's id, buffers transferred.
  if (data.simulate || data.series) {
    const job = data.simulate ?? data.series;
    try {
      const parts = data.simulate
        ? wasm_bindgen.simulate_frame(String(job.scenario ?? ''), String(job.seed ?? ''))
        : wasm_bindgen.simulate_series(String(job.scenario ?? ''), String(job.seed ?? ''), Boolean(job.zip));
      const [result, ...bytes] = parts;
      const buffers = bytes.map((b) => b.buffer);
      if (data.simulate) self.postMessage({ type: 'frame', id: job.id, result, rgba: buffers[0] ?? null }, buffers);
      else self.postMessage({ type: 'series', id: job.id, result, buffers }, buffers);
    } catch (err) {
      self.postMessage({ type: 'failed', id: job.id, message: `the simulation stopped: ${err}` });
    }
    return;
  }
  try {
    if (data.bench) {
      const { width, height, repeats } = data.bench;
      const ms = wasm_bindgen.pair_stats_ms(width, height, repeats, () => performance.now());
      self.postMessage({ type: 'bench', ms });
      return;
    }
    const files = Array.from(data.files ?? []);
    const reader = noiseBudgetReader(files);
    let result;
    try {
      const job = wasm_bindgen.Analysis.start(String(data.manifest ?? ''));
      // Files being read, by manifest index: the wanted one and the next ones (at most
      // NOISE_BUDGET_READ_AHEAD held besides the one Rust holds), so the next files are read
      // while this one is analysed. A file read twice (the second pass) is asked for again.
      const reading = new Map();
      let index;
      while ((index = job.wanted()) !== undefined) {
        for (const i of job.upcoming(NOISE_BUDGET_READ_AHEAD + 1)) {
          if (!reading.has(i)) reading.set(i, reader.read(i));
        }
        const got = await reading.get(index);
        reading.delete(index);
        const frame = got.bytes ? job.give(index, got.bytes) : job.unreadable(index, got.why);
        if (frame !== undefined) self.postMessage({ type: 'progress', index, frame });
      }
      result = job.answer();
    } finally {
      // The reader ends before the answer goes out, so that no worker outlives the analysis
      // once the page has its answer (and ends this worker).
      reader.close();
    }
    self.postMessage({ type: 'done', result });
  } catch (err) {
    self.postMessage({ type: 'failed', message: `the frame analysis stopped: ${err}` });
  }
};
