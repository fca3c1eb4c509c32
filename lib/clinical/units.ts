// Units through UCUM (@lhncbc/ucum-lhc): instrument unit strings are validated, and values are moved
// into the clinic's units by UCUM's own definitions, never by factors typed in here.
import ucum from '@lhncbc/ucum-lhc';
import { fromCaseInsensitive } from './ucum-ci';

const utils = ucum.UcumLhcUtils.getInstance();

export type UnitCheck = { ok: true; ucum: string; name: string; note?: string } | { ok: false; message: string };

/**
 * Instruments print units loosely. The only rewrites are unambiguous spellings of UCUM symbols:
 * the micro sign for "u" (UCUM §3, ASCII-only symbols) and stray spaces.
 */
export function tidyUnit(printed: string): string {
  return printed.trim().replace(/[µμ]/g, 'u').replace(/\s+/g, '');
}

/**
 * Parsing a unit string is the costly part of UCUM and a clinic prints a handful of units, so the answer
 * per string is kept (it depends on the string alone); bounded, so odd input cannot grow it for ever.
 */
const checked = new Map<string, UnitCheck>();
const MAX_CHECKED = 2000;

export function checkUnit(printed: string | null | undefined): UnitCheck {
  if (!printed || !printed.trim()) return { ok: false, message: 'No unit was printed.' };
  const known = checked.get(printed);
  if (known) return known;
  let answer: UnitCheck;
  try {
    answer = parseUnit(printed);
  } catch {
    // ucum-lhc can throw on odd input instead of reporting it: such a string is no unit we can read.
    answer = { ok: false, message: `"${printed}" is not a UCUM unit.` };
  }
  if (checked.size >= MAX_CHECKED) checked.clear();
  checked.set(printed, answer);
  return answer;
}

function parseUnit(printed: string): UnitCheck {
  const tidy = tidyUnit(printed);
  // Capitals only: the instrument writes UCUM's case-insensitive form (MG/L is mg/L, not megagauss per litre).
  if (/[A-Z]/.test(tidy) && !/[a-z]/.test(tidy)) {
    const ci = fromCaseInsensitive(tidy);
    const valid = ci.ok ? utils.validateUnitString(ci.cs) : null;
    if (!ci.ok || valid?.status !== 'valid' || !valid.ucumCode) {
      return { ok: false, message: `"${printed}" is written in capitals, but is no UCUM unit in UCUM's case-insensitive form${ci.ok ? '' : ` (${ci.message})`}.` };
    }
    const note = valid.ucumCode !== tidy ? `"${printed}" read as ${valid.ucumCode} (UCUM's case-insensitive form).` : undefined;
    return { ok: true, ucum: valid.ucumCode, name: valid.unit?.name ?? valid.ucumCode, ...(note ? { note } : {}) };
  }
  const result = utils.validateUnitString(tidy);
  if (result.status !== 'valid' || !result.ucumCode) {
    return { ok: false, message: `"${printed}" is not a UCUM unit${result.msg[0] ? ` (${result.msg[0]})` : ''}.` };
  }
  return { ok: true, ucum: result.ucumCode, name: result.unit?.name ?? result.ucumCode };
}

export type Conversion = { ok: true; value: number } | { ok: false; message: string };

/** Converts a value between UCUM units; commensurable units only (mass to mass, not mass to moles). */
export function convert(value: number, from: string, to: string): Conversion {
  const source = checkUnit(from);
  if (!source.ok) return source;
  const target = checkUnit(to);
  if (!target.ok) return target;
  if (source.ucum === target.ucum) return { ok: true, value };
  let result: ReturnType<typeof utils.convertUnitTo>;
  try {
    result = utils.convertUnitTo(source.ucum, value, target.ucum);
  } catch {
    // ucum-lhc throws (rather than reporting) on some unit pairs it validated one by one: not convertible.
    return { ok: false, message: `Cannot convert ${from} to ${to}.` };
  }
  if (result.status !== 'succeeded' || result.toVal === null || !Number.isFinite(result.toVal)) {
    return { ok: false, message: result.msg[0] ?? `Cannot convert ${from} to ${to}.` };
  }
  // Floating-point noise from the factor (3.7399999999999998): 12 significant digits is far below any assay's precision.
  return { ok: true, value: Number(result.toVal.toPrecision(12)) };
}

/** Whether two unit strings name the same UCUM unit (mg/l and mg/L do). */
export function sameUnit(a: string, b: string): boolean {
  const conversion = convert(1, a, b);
  return conversion.ok && conversion.value === 1;
}
