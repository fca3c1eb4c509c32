import type { QcOverview } from '@/lib/quality/overview';

/** What a server value looks like after JSON: dates become strings. */
export type Jsonify<T> = T extends Date
  ? string
  : T extends (infer U)[]
    ? Jsonify<U>[]
    : T extends object
      ? { [K in keyof T]: Jsonify<T[K]> }
      : T;

export type Overview = Jsonify<QcOverview>;
export type Control = Overview['controls'][number];
export type KitLotRow = Overview['kitLots'][number];
export const QC_KEY = '/api/quality/qc';
