/**
 * Node flags the web server runs with (npm start, npm run serve, the benchmarks, the browser tests).
 * A 4 MB young generation instead of V8's default 16 MB: an idle server holds about 40 MB less, at a
 * few per cent of ingest speed (`npm run bench -- uploads` and `BENCH_PARTS=ingest npm run bench -- db`).
 * Keep package.json's "serve" script in step.
 */
export const SERVER_NODE_FLAGS = ['--max-semi-space-size=4'] as const;
