// ---- noise-budget frame worker start-up (crate/frames-worker/boot.js) ----
// scripts/embed-worker.mjs puts this after the wasm-bindgen glue (target no-modules, which
// defines `wasm_bindgen`) and the wasm as base64 of its gzip (NOISE_BUDGET_FRAMES_WASM), and
// embeds the whole script in the page; the page starts it from a Blob URL, so nothing is
// fetched. This script only inflates the wasm, reads the files one at a time and posts
// messages; the analysis is Rust's (src/bindings.rs).
//
// Messages in:  { manifest: "<manifest JSON text>", files: [File | ArrayBuffer, …] }
//               { bench: { width, height, repeats } }
//               { simulate: { id, scenario: "<scenario JSON>", seed: "<u64 as text>" } }
//               { series: { id, scenario, seed, zip: true | false } }
// Messages out: { type: 'progress', index, frame }  after each file (frame: "W × H, B-bit" or null)
//               { type: 'done', result }            result: the JSON text of job::run
//               { type: 'bench', ms }
//               { type: 'frame', id, result, rgba } result: the JSON of sim::frame, rgba its pixels
//               { type: 'series', id, result, buffers } the zip, or the files in manifest order
//               { type: 'failed', message, id }     the worker itself could not work
function noiseBudgetBase64(b64) {
  if (typeof Uint8Array.fromBase64 === 'function') return Uint8Array.fromBase64(b64);
  const text = atob(b64);
  const bytes = new Uint8Array(text.length);
  for (let i = 0; i < text.length; i++) bytes[i] = text.charCodeAt(i);
  return bytes;
}

const noiseBudgetReady = (async () => {
  const gz = noiseBudgetBase64(NOISE_BUDGET_FRAMES_WASM);
  const stream = new Blob([gz]).stream().pipeThrough(new DecompressionStream('gzip'));
  const bytes = await new Response(stream).arrayBuffer();
  await wasm_bindgen({ module_or_path: bytes });
})();

self.onmessage = async (event) => {
  const data = event.data ?? {};
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
    const reader = new FileReaderSync();
    // One file at a time: its bytes live only until Rust has copied and decoded them.
    const read = (i) => {
      const f = files[i];
      if (f instanceof Blob) return new Uint8Array(reader.readAsArrayBuffer(f));
      if (f instanceof ArrayBuffer) return new Uint8Array(f);
      throw new Error('no such file was sent to the worker');
    };
    const seen = (index, frame) => self.postMessage({ type: 'progress', index, frame });
    const result = wasm_bindgen.analyse(String(data.manifest ?? ''), read, seen);
    self.postMessage({ type: 'done', result });
  } catch (err) {
    self.postMessage({ type: 'failed', message: `the frame analysis stopped: ${err}` });
  }
};
