// One row per figure, each beside a baseline measured in the same run: the console table and the JSON
// file `npm run bench` writes are made from these.
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';

export interface Row {
  section: string;
  name: string;
  value: number;
  unit: string;
  /** What the figure is compared with, measured in the same run. */
  baseline: string;
  baselineValue: number;
  /** value / baselineValue (for times and sizes lower is better, for rates higher is better). */
  ratio: number;
  /** The target in words, when there is one, and whether this run met it. */
  target?: string;
  met?: boolean;
  note?: string;
}

export interface Explain {
  query: string;
  sql: string;
  plan: string;
}

export class Report {
  readonly rows: Row[] = [];
  readonly explains: Explain[] = [];
  readonly notes: string[] = [];
  private readonly started = Date.now();

  add(row: Omit<Row, 'ratio'> & { ratio?: number }): Row {
    const full: Row = { ...row, ratio: row.ratio ?? (row.baselineValue ? row.value / row.baselineValue : NaN) };
    this.rows.push(full);
    console.log(`[bench] ${full.section} · ${full.name}: ${fmt(full.value)} ${full.unit} (baseline ${fmt(full.baselineValue)}, ratio ${fmt(full.ratio)})${full.met === undefined ? '' : full.met ? ' ✓' : ' ✗'}`);
    return full;
  }

  table(): string {
    const header = ['section', 'figure', 'value', 'baseline (same run)', 'ratio', 'target', 'met'];
    const body = this.rows.map((r) => [
      r.section,
      r.name,
      `${fmt(r.value)} ${r.unit}`,
      `${r.baseline}: ${fmt(r.baselineValue)}`,
      fmt(r.ratio),
      r.target ?? '',
      r.met === undefined ? '' : r.met ? 'yes' : 'NO',
    ]);
    return markdownTable(header, body);
  }

  write(dir: string): string {
    fs.mkdirSync(dir, { recursive: true });
    const file = path.join(dir, `bench-${new Date().toISOString().replaceAll(':', '-').slice(0, 19)}.json`);
    const json = {
      at: new Date().toISOString(),
      machine: { cores: os.cpus().length, model: os.cpus()[0]?.model ?? 'unknown', memoryMB: Math.round(os.totalmem() / 2 ** 20), node: process.version, loadAverage: os.loadavg() },
      durationSeconds: Math.round((Date.now() - this.started) / 1000),
      rows: this.rows,
      explains: this.explains,
      notes: this.notes,
    };
    fs.writeFileSync(file, `${JSON.stringify(json, null, 2)}\n`);
    fs.copyFileSync(file, path.join(dir, 'latest.json'));
    return file;
  }
}

export function markdownTable(header: string[], body: string[][]): string {
  const line = (cells: string[]) => `| ${cells.map((c) => c.replaceAll('|', '\\|')).join(' | ')} |`;
  return [line(header), line(header.map(() => '---')), ...body.map(line)].join('\n');
}

export function fmt(n: number): string {
  if (!Number.isFinite(n)) return String(n);
  const abs = Math.abs(n);
  if (abs >= 1000) return Math.round(n).toLocaleString('en-US');
  if (abs >= 100) return n.toFixed(0);
  if (abs >= 10) return n.toFixed(1);
  return n.toFixed(2);
}

export function percentile(values: number[], p: number): number {
  if (!values.length) return NaN;
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1))];
}

export const ms = (start: bigint) => Number(process.hrtime.bigint() - start) / 1e6;
export const now = () => process.hrtime.bigint();

/** Resident set size of a process, from /proc (Linux). */
export function rssMB(pid: number): number {
  try {
    const status = fs.readFileSync(`/proc/${pid}/status`, 'utf8');
    const kb = Number(/VmRSS:\s+(\d+)/.exec(status)?.[1] ?? NaN);
    return kb / 1024;
  } catch {
    return NaN;
  }
}
