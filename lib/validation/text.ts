import { z } from 'zod';

// The one rule for text people and machines send us, shared by every zod schema (forms, routes, bridge).
// PostgreSQL text cannot hold U+0000 (PostgreSQL docs, "Character Types"), and a lone UTF-16 surrogate has
// no UTF-8 encoding (Unicode Standard §3.9, D91/D92: only scalar values are encodable), so both would fail
// at the database; other C0 controls and DEL (ISO/IEC 6429) only ever arrive by accident or attack in a
// name, reason or comment. Plain zod, no server imports: the bridge uses it too.

/** Code points never allowed: NUL and the C0 controls except tab/LF/CR, and DEL. */
const CONTROL = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f]/;
const LINE_BREAK_OR_TAB = /[\t\n\r]/;
const LONE_SURROGATE = /[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/;

/**
 * Bytes from an instrument are kept, not refused: lone surrogates become U+FFFD (the replacement character,
 * Unicode §3.9 "U+FFFD substitution"), everywhere in a parsed body. NUL is left to the ingest step.
 */
export function withWellFormedText<T>(value: T): T {
  if (typeof value === 'string') return value.replace(new RegExp(LONE_SURROGATE.source, 'g'), '\ufffd') as T;
  if (Array.isArray(value)) return value.map(withWellFormedText) as T;
  if (value && typeof value === 'object') {
    return Object.fromEntries(Object.entries(value).map(([k, v]) => [withWellFormedText(k), withWellFormedText(v)])) as T;
  }
  return value;
}

/** Why a string breaks the text rule (null when it does not); multiline allows tab, LF and CR. */
export function textProblem(value: string, multiline = true): string | null {
  if (value.includes('\u0000')) return 'must not contain NUL characters';
  if (LONE_SURROGATE.test(value)) return 'must not contain unpaired UTF-16 surrogates';
  if (CONTROL.test(value)) return 'must not contain control characters';
  if (!multiline && LINE_BREAK_OR_TAB.test(value)) return 'must be a single line (no tabs or line breaks)';
  return null;
}

export interface TextOptions {
  /** Fewest characters after trimming (default 0). */
  min?: number;
  /** Message when shorter than min. */
  minMessage?: string;
  /** Allow tab, LF and CR (comments, notes, reasons). Default: one line. */
  multiline?: boolean;
  /** Keep leading and trailing white space (default: trimmed). */
  keepSpace?: boolean;
}

/**
 * A string field under the shared rule: trimmed, at most max characters, no NUL, lone surrogates or control
 * characters (line breaks only when multiline). `name: text(120, { min: 2 })` — one call per field.
 */
export function text(max: number, options: TextOptions = {}) {
  const base = options.keepSpace ? z.string() : z.string().trim();
  let schema = base.max(max, `Use at most ${max} characters.`);
  if (options.min) schema = schema.min(options.min, options.minMessage ?? `Use at least ${options.min} characters.`);
  return schema.superRefine((value, ctx) => {
    const problem = textProblem(value, options.multiline ?? false);
    if (problem) ctx.addIssue({ code: 'custom', message: `This text ${problem}.` });
  });
}

/** Earliest and latest instants accepted anywhere: clinic records are not older than 1900 nor set after 2200. */
export const EARLIEST_DATE = Date.UTC(1900, 0, 1);
export const LATEST_DATE = Date.UTC(2200, 0, 1);

function realCalendarDate(value: string): boolean {
  const match = /^(\d{4})-(\d{2})-(\d{2})/.exec(value);
  if (!match) return false;
  const [year, month, day] = match.slice(1).map(Number);
  // Day within the month's length (Gregorian calendar, leap years by the 4/100/400 rule).
  const days = new Date(Date.UTC(year, month, 0)).getUTCDate();
  return month >= 1 && month <= 12 && day >= 1 && day <= days;
}

/** An ISO 8601 date-time with offset that names a real calendar day between 1900 and 2200. */
export function isoDateTime(message = 'Enter a date and time (ISO 8601 with offset).') {
  // pipe: the calendar and range checks run only on a well-formed value, so each bad value has one issue.
  return z.iso.datetime({ offset: true, message }).pipe(
    z.string().superRefine((value, ctx) => {
      if (!realCalendarDate(value)) return ctx.addIssue({ code: 'custom', message: 'That date does not exist.' });
      const at = Date.parse(value);
      if (!(at >= EARLIEST_DATE && at < LATEST_DATE)) ctx.addIssue({ code: 'custom', message: 'Use a date between 1900 and 2200.' });
    }),
  );
}

/** JSON path of the first string (value or key) in a parsed body that breaks the text rule, with the problem. */
export function findTextProblem(value: unknown, path: (string | number)[] = []): { path: string; message: string } | null {
  if (typeof value === 'string') {
    const problem = textProblem(value);
    return problem ? { path: path.join('.'), message: `This text ${problem}.` } : null;
  }
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) {
      const found = findTextProblem(value[i], [...path, i]);
      if (found) return found;
    }
    return null;
  }
  if (value && typeof value === 'object') {
    for (const [key, item] of Object.entries(value)) {
      const keyProblem = textProblem(key);
      if (keyProblem) return { path: [...path, key].join('.'), message: `This field name ${keyProblem}.` };
      const found = findTextProblem(item, [...path, key]);
      if (found) return found;
    }
  }
  return null;
}
