#!/usr/bin/env node
// Serve the built page (dist/) on 127.0.0.1 and print its address with a demo scenario loaded.
// Usage: node scripts/serve.mjs [dist] ; PORT=8080 by default (0 picks a free port).
import { readFileSync } from 'node:fs';
import { serveStatic } from './static-server.mjs';

const dist = process.argv[2] ?? 'dist';
const port = Number(process.env.PORT ?? 8080);
const demo = 'www/demos/global-shutter-machine-vision.json';
const link = Buffer.from(JSON.stringify(JSON.parse(readFileSync(demo, 'utf8')))).toString('base64url');

let served;
try {
  served = await serveStatic(dist, port);
} catch (e) {
  console.error(`serve: cannot listen on 127.0.0.1:${port} (${e.code ?? e}); try PORT=0 scripts/serve`);
  process.exit(1);
}
console.log(`noise-budget page: ${served.origin}/`);
console.log(`  with the demo scenario in the address: ${served.origin}/#scenario=${link}`);
console.log(`(the same page as one file, no server needed: ${dist}/noise-budget.html)`);
console.log('Press Ctrl+C to stop.');
