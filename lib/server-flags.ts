/**
 * Node flags the web server runs with (npm start, npm run serve, the benchmarks, the browser tests).
 * - A 4 MB young generation instead of V8's default 16 MB: an idle server holds about 40 MB less, at a
 *   few per cent of ingest speed (`npm run bench -- uploads` and `BENCH_PARTS=ingest npm run bench -- db`).
 * - The old generation may grow to 1.2× what survived the last full collection before the next one
 *   (V8 lets a large machine's heap grow up to 4× first). A request's rows outlive two young collections,
 *   so read paths fill the old generation with garbage: 40 requests to each read path took the server
 *   to 450–480 MB without this, 390–405 MB at 1.5× and 365–385 MB at 1.2×, with read latency and HTTP
 *   ingest the same within the run-to-run noise (`BENCH_PARTS=reads` and `BENCH_PARTS=ingest npm run bench -- server`).
 * package.json's "serve" script carries the same flags (tests/unit/server-flags.test.ts checks).
 */
export const SERVER_NODE_FLAGS = ['--max-semi-space-size=4', '--heap-growing-percent=20'] as const;
