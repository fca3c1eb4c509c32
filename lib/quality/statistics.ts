// Pure QC statistics: a control's target from the clinic's own runs, and the sigma metric.

/** Runs needed before a clinic may set a control's target from its own data (CLSI C24; from memory, verify). */
export const MIN_RUNS_TO_ESTABLISH = 20;

export interface Summary {
  n: number;
  mean: number;
  /** Sample standard deviation (n − 1 in the denominator). */
  sd: number;
  /** Coefficient of variation in percent. */
  cvPercent: number;
}

export function summarize(values: number[]): Summary {
  const n = values.length;
  if (n < 2) throw new Error('at least two values are needed for a standard deviation');
  const mean = values.reduce((s, v) => s + v, 0) / n;
  const sd = Math.sqrt(values.reduce((s, v) => s + (v - mean) ** 2, 0) / (n - 1));
  return { n, mean, sd, cvPercent: mean === 0 ? Number.NaN : (sd / Math.abs(mean)) * 100 };
}

export type EstablishResult = { ok: true; summary: Summary } | { ok: false; reason: string };

/** Target mean and SD from at least 20 in-control runs of one control lot. */
export function establishTarget(values: number[]): EstablishResult {
  if (values.length < MIN_RUNS_TO_ESTABLISH) {
    return { ok: false, reason: `${values.length} runs so far; at least ${MIN_RUNS_TO_ESTABLISH} are needed to establish a target` };
  }
  const summary = summarize(values);
  if (!(summary.sd > 0)) return { ok: false, reason: 'all runs gave the same value, so no SD can be set' };
  return { ok: true, summary };
}

export interface SigmaInput {
  /** Allowable total error, percent. */
  teaPercent: number;
  /** Bias, percent (its sign is ignored). */
  biasPercent: number;
  /** Imprecision, percent. */
  cvPercent: number;
}

/** σ = (TEa − |bias|) / CV, all in percent at the same concentration (Westgard; formula from memory, verify). */
export function sigmaMetric({ teaPercent, biasPercent, cvPercent }: SigmaInput): number {
  if (!(cvPercent > 0)) throw new Error('CV must be positive');
  if (!(teaPercent > 0)) throw new Error('TEa must be positive');
  return (teaPercent - Math.abs(biasPercent)) / cvPercent;
}

/** Bias of the observed mean against the target, in percent of the target. */
export function biasPercent(observedMean: number, targetMean: number): number {
  if (targetMean === 0) throw new Error('target mean must not be zero');
  return ((observedMean - targetMean) / targetMean) * 100;
}

/** Plain words for a sigma value (bands as commonly used in laboratory QC, common practice, no source). */
export function sigmaBand(sigma: number): string {
  if (sigma >= 6) return 'world class (≥ 6σ)';
  if (sigma >= 5) return 'excellent (5–6σ)';
  if (sigma >= 4) return 'good (4–5σ)';
  if (sigma >= 3) return 'marginal (3–4σ)';
  return 'poor (< 3σ): tighten QC and look for the cause';
}
