// Reading a number as an instrument or a person wrote it. Plain code, no server imports: the bridge
// bundles it. A digit-grouping separator and a decimal separator can be the same character in different
// countries ("12,500" is twelve thousand five hundred in one, twelve and a half in another), so nothing
// here guesses: each instrument states its decimal mark, and any other separator leaves the text unread
// with a reason, never read as a different (smaller) number.

export const DECIMAL_MARKS = ['point', 'comma'] as const;
export type DecimalMark = (typeof DECIMAL_MARKS)[number];
/** 'either': a person typing one value, who may use a decimal point or a decimal comma (never both). */
export type NumberReading = DecimalMark | 'either';

export type ReadNumber =
  /** `decimals`: the digits after the decimal mark as written (the precision it was sent with). */
  | { ok: true; value: number; comparator: '<' | '>' | null; decimals: number }
  | { ok: false; reason: string };

const EXPONENT = '(?:[eE][+-]?\\d+)?';
const POINT = new RegExp(`^[+-]?(?:\\d+(?:\\.\\d*)?|\\.\\d+)${EXPONENT}$`);
const COMMA = new RegExp(`^[+-]?(?:\\d+(?:,\\d*)?|,\\d+)${EXPONENT}$`);
/** Text that is meant as a number (digits with signs, separators, spaces or an exponent), read or not. */
const NUMBER_LIKE = /^[<>]?\s*[+-]?[\d.,'\s\u00a0\u2009\u202f]*\d[\d.,'\s\u00a0\u2009\u202f]*(?:[eE][+-]?\d+)?$/;

/** Whether the text looks like a number at all (so failing to read it is an error, not a word). */
export function looksNumeric(text: string): boolean {
  return NUMBER_LIKE.test(text.trim());
}

/**
 * One value with an optional comparator ("<5", "> 200"), in the given decimal mark. Exponent notation
 * (1.2E3) is read. Grouping separators (commas, points, apostrophes or spaces between digit groups) are
 * never read: the text is refused with a reason.
 */
export function readNumber(text: string, mark: NumberReading): ReadNumber {
  const trimmed = text.trim();
  const match = /^([<>])?\s*(.*)$/s.exec(trimmed)!;
  const comparator = (match[1] as '<' | '>' | undefined) ?? null;
  const body = match[2];
  if (body === '') return { ok: false, reason: 'holds no number' };
  const quoted = `"${trimmed}"`;
  if (/[\s\u00a0\u2009\u202f']/.test(body)) {
    return { ok: false, reason: `${quoted} has a space or apostrophe between digits (digit grouping is not read, to avoid reading a different number)` };
  }
  const hasPoint = body.includes('.');
  const hasComma = body.includes(',');
  if (hasPoint && hasComma) {
    return { ok: false, reason: `${quoted} has both a point and a comma (digit grouping is not read, to avoid reading a different number)` };
  }
  // A person may write either mark, so one separator followed by exactly three digits ("12,500",
  // "1.250") could be grouping or decimals: ask rather than guess.
  if (mark === 'either' && /^[+-]?\d{1,3}[.,]\d{3}$/.test(body)) {
    return { ok: false, reason: `${quoted} could mean a thousands group or three decimals; write it without grouping (12500) or with its decimals only` };
  }
  let normal: string;
  if (mark === 'point' || (mark === 'either' && !hasComma)) {
    if (hasComma) {
      return {
        ok: false,
        reason: `${quoted} has a comma, but this instrument is set to a decimal point (a comma may group thousands or mark decimals, so it is not guessed; set the instrument's number format if it sends decimal commas)`,
      };
    }
    if (!POINT.test(body)) return { ok: false, reason: `${quoted} is not a number` };
    normal = body;
  } else {
    if (hasPoint && mark === 'comma') {
      return {
        ok: false,
        reason: `${quoted} has a point, but this instrument is set to a decimal comma (a point may group thousands there, so it is not guessed)`,
      };
    }
    if (!COMMA.test(body)) return { ok: false, reason: `${quoted} is not a number` };
    if (mark === 'either' && (body.match(/,/g)?.length ?? 0) > 1) return { ok: false, reason: `${quoted} has more than one comma` };
    normal = body.replace(',', '.');
  }
  const value = Number(normal);
  if (!Number.isFinite(value)) return { ok: false, reason: `${quoted} is out of range` };
  return { ok: true, value, comparator, decimals: printedDecimals(normal) };
}

/**
 * How many decimals a number was written with: "5.0" → 1, "26" → 0, ".25" → 2, "1.25E1" → 1 (the exponent
 * shifts the point). Trailing zeros count: they are the instrument's precision, not noise.
 */
export function printedDecimals(text: string): number {
  const match = /^[<>]?\s*[+-]?(\d*)(?:[.,](\d*))?(?:[eE]([+-]?\d+))?$/.exec(text.trim());
  if (!match) return 0;
  const fraction = match[2]?.length ?? 0;
  const exponent = match[3] ? Number(match[3]) : 0;
  return Math.max(0, Math.min(15, fraction - exponent));
}
