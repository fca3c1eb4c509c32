// `npm run bench`: the performance suite. Every figure is printed beside a baseline measured in the same
// run (the machine is shared, so absolute times vary; the ratios are what to compare), then written as a
// table to the console and as JSON (with the machine's core count) to .bench/results/. Not part of npm test.
//
//   BENCH_DATASET=dir     the loaded data set (default .bench/dataset; built when missing, ~3–4 min)
//   BENCH_PARSER_MB=n     corpus per dialect (default 12.5: 50 MB over the four dialects)
//   BENCH_QUICK=1         fewer batches and slips (a smoke run)
import { spawnSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { buildIfNeeded } from './build-if-needed';
import { benchInProcess } from '../tests/bench/suite/database';
import { benchDurability } from '../tests/bench/suite/durability';
import { buildDataset, datasetReady } from '../tests/bench/suite/dataset';
import { benchParsers } from '../tests/bench/suite/parsers';
import { Report } from '../tests/bench/suite/report';
import { benchServer } from '../tests/bench/suite/server';
import { benchUploads } from '../tests/bench/suite/uploads';

const root = process.cwd();
const quick = process.env.BENCH_QUICK === '1';
const datasetDir = path.resolve(process.env.BENCH_DATASET ?? path.join(root, '.bench', 'dataset'));
const resultsDir = path.join(root, '.bench', 'results');
const only = process.argv.slice(2);
const wanted = (section: string) => only.length === 0 || only.includes(section);

const report = new Report();
const started = Date.now();
const step = (what: string) => console.log(`\n[bench] ── ${what} (${Math.round((Date.now() - started) / 1000)} s in)`);

try {
  if (wanted('db') || wanted('server')) {
    if (!datasetReady(datasetDir)) {
      step(`building the data set into ${datasetDir} (once; npm run bench:data rebuilds it)`);
      await buildDataset(datasetDir);
    }
    // Each section works on its own copy, so each starts from the data set as built: the in-process ingest
    // leaves thousands more readings waiting in Intake (its batches and the raw baselines), which the
    // server's read paths would otherwise be measured on.
    const copies: string[] = [];
    const freshCopy = () => {
      const work = fs.mkdtempSync(path.join(os.tmpdir(), 'benchwire-bench-'));
      copies.push(work);
      fs.cpSync(datasetDir, work, { recursive: true });
      return work;
    };
    try {
      let rawRate = NaN;
      let sameRowsRate = NaN;
      if (wanted('db')) {
        step('in-process: read-path SQL with EXPLAIN, ingest against raw INSERT');
        ({ rawRate, sameRowsRate } = await benchInProcess(report, freshCopy(), quick ? 3 : 10));
        fs.rmSync(copies.pop()!, { recursive: true, force: true });
      }
      if (wanted('server')) {
        step('production build (only when sources changed)');
        buildIfNeeded(process.env, '[bench]');
        step('the real server on the loaded data set');
        await benchServer(report, freshCopy(), { rawRate, sameRowsRate, batches: quick ? 4 : 20, fanOutBatches: quick ? 2 : 10, slips: quick ? 20 : 60 });
      }
    } finally {
      for (const work of copies) fs.rmSync(work, { recursive: true, force: true });
    }
  }

  if (wanted('durable')) {
    step('durability: a batch answered after its fsync against answered at COMMIT');
    await benchDurability(report, quick ? 5 : 25);
  }

  if (wanted('uploads')) {
    step('hostile uploads: server RSS while 100 MB bodies stream in');
    buildIfNeeded(process.env, '[bench]');
    await benchUploads(report, quick ? 20 : 100);
  }

  if (wanted('parser')) {
    step('parsers');
    await benchParsers(report, quick ? 2 : Number(process.env.BENCH_PARSER_MB ?? 12.5));
  }
} catch (error) {
  // Whatever was measured is still printed and written, with the failure noted.
  console.error('[bench] a section failed:', error);
  report.notes.push(`a section failed: ${error instanceof Error ? error.message : String(error)}`);
  process.exitCode = 1;
}

if (wanted('vitest')) {
  step('micro-benchmarks (tests/bench/*.bench.ts)');
  const result = spawnSync(path.join(root, 'node_modules', '.bin', 'vitest'), ['bench', '--run', '--outputJson', path.join(resultsDir, 'vitest-bench.json')], { stdio: 'inherit' });
  if (result.status !== 0) report.notes.push(`vitest bench exited with ${result.status}`);
}

console.log('\n## Benchwire benchmarks\n');
console.log(`${os.cpus().length} cores (${os.cpus()[0]?.model ?? 'unknown'}), load average ${os.loadavg().map((l) => l.toFixed(1)).join(' ')}, node ${process.version}\n`);
console.log(report.table());
for (const n of report.notes) console.log(`\nNote: ${n}`);
for (const e of report.explains) console.log(`\n### EXPLAIN ANALYZE — ${e.query}\n${e.sql}\n${e.plan}`);
const file = report.write(resultsDir);
console.log(`\n[bench] done in ${Math.round((Date.now() - started) / 1000)} s; JSON: ${path.relative(root, file)}`);
const missed = report.rows.filter((r) => r.met === false);
if (missed.length) console.log(`[bench] targets not met: ${missed.map((r) => `${r.section} · ${r.name}`).join('; ')}`);
