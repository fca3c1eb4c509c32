// UCUM's case-insensitive form (UCUM §4 "c/i" column: every symbol written in upper case, e.g. MG/L
// for mg/L, UMOL/L for umol/L). Instruments that print only capitals mean this form, while read
// case-sensitively MG/L would be megagauss per litre. The symbol tables are ucum-lhc's own.
import ucum from '@lhncbc/ucum-lhc';
import prefixTables from '@lhncbc/ucum-lhc/source-cjs/prefixTables.js';

type Table = Map<string, string[]>;
let table: Table | null = null;

function ciTable(): Table {
  if (table) return table;
  ucum.UcumLhcUtils.getInstance();
  const units = ucum.UnitTables.getInstance();
  const prefixes = prefixTables.PrefixTables.getInstance().allPrefixesByCode();
  const map: Table = new Map();
  const add = (ci: string, cs: string) => {
    const list = map.get(ci) ?? [];
    if (!list.includes(cs)) list.push(cs);
    map.set(ci, list);
  };
  for (const code of units.getAllUnitCodes()) {
    const unit = units.getUnitByCode(code);
    if (!unit?.ciCode_) continue;
    add(unit.ciCode_, unit.csCode_);
    if (unit.isMetric_ || unit.isBase_) for (const p of prefixes) add(`${p.ciCode_}${unit.ciCode_}`, `${p.code_}${unit.csCode_}`);
  }
  table = map;
  return map;
}

export type CiReading = { ok: true; cs: string } | { ok: false; message: string };

/** The case-sensitive UCUM expression for a case-insensitive one; refuses an ambiguous or unknown symbol. */
export function fromCaseInsensitive(expression: string): CiReading {
  const map = ciTable();
  const parts = expression.split(/([./()])/);
  const out: string[] = [];
  for (const part of parts) {
    if (part === '' || /^[./()]$/.test(part) || /^\d+$/.test(part)) {
      out.push(part);
      continue;
    }
    // A trailing integer is the exponent (UCUM §7: CM2, 10*9).
    const [, base, exponent] = /^(.*?)([+-]?\d+)?$/.exec(part)!;
    // "K" in a compound unit (K/UL) is a lab's "thousand" far more often than kelvin (common practice, no source): not guessed.
    if (base.toUpperCase() === 'K' && parts.length > 1) return { ok: false, message: '"K" could be kelvin or a printed "thousand"' };
    const found = map.get(base.toUpperCase());
    if (!found) return { ok: false, message: `"${base}" is no UCUM symbol in its case-insensitive form` };
    // Several symbols for one unit (l and L are both the litre) are no ambiguity; different units are.
    const utils = ucum.UcumLhcUtils.getInstance();
    const name = (cs: string) => utils.validateUnitString(cs).unit?.name;
    const same = found.every((cs) => cs === found[0] || utils.convertUnitTo(found[0], 1, cs).toVal === 1 || name(cs) === name(found[0]));
    if (!same) return { ok: false, message: `"${base}" could be ${found.join(' or ')}` };
    // Of equal symbols take the one closest to the capitals (L rather than l, dL rather than dl).
    const likeness = (cs: string) => [...cs].filter((ch, i) => ch === base.toUpperCase()[i]).length;
    const symbol = [...found].sort((a, b) => likeness(b) - likeness(a))[0];
    out.push(`${symbol}${exponent ?? ''}`);
  }
  return { ok: true, cs: out.join('') };
}
