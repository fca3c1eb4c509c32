import { printedDecimals } from '../../lib/validation/numbers';
import {
  namedGroupsOf,
  profileDefinitionSchema,
  type ProfileCapture,
  type ProfileDefinition,
} from '../../lib/validation/profile';
import { linePattern, type LinePattern } from '../../lib/validation/pattern';
import type { ParsedReading, ParserOutput, UnparsedFragment } from '../../lib/validation/readings';
import { LineCutter, type Line } from '../framing/lines';
import { RecordGrouper, type FramerOutput, type RecordFrame, type RecordFraming } from '../framing/records';
import { fragment } from '../fragments';
import { localIsoDateTime } from '../local-time';
import { parseFrame } from '../parse-stage';
import type { Dialect } from './dialect';

// Runs a printout profile (lib/validation/profile.ts): declarative framing and named-capture line
// patterns, no code. The same pure functions serve the bridge (a live link) and the admin preview.

/** An unfinished record with an end marker is given up after this much quiet. */
const GIVE_UP_MS = 30_000;
/** A start-only profile's last record ends after this much quiet (nothing else can end it). */
const START_ONLY_GAP_MS = 5_000;

export type Captures = Partial<Record<ProfileCapture, string>>;

/** Checks a definition as the server does; an error names the field it is about. */
export async function loadProfile(json: unknown): Promise<{ ok: true; definition: ProfileDefinition } | { ok: false; message: string }> {
  const parsed = await profileDefinitionSchema.safeParseAsync(json);
  if (parsed.success) return { ok: true, definition: parsed.data };
  const issue = parsed.error.issues[0];
  return { ok: false, message: `${issue?.path.join('.') || '(profile)'}: ${issue?.message}` };
}

interface CompiledField {
  label: string;
  pattern: LinePattern;
  required: boolean;
  repeats: boolean;
}

interface CompiledProfile {
  definition: ProfileDefinition;
  fields: CompiledField[];
  /** The line that marks a slip as a control run, if the profile has one. */
  control: LinePattern | null;
  capturesTime: boolean;
  date: RegExp;
  time: RegExp;
}

function compile(definition: ProfileDefinition): CompiledProfile {
  return {
    definition,
    fields: definition.fields.map((f) => ({ label: f.label, pattern: linePattern(f.pattern), required: f.required, repeats: f.repeats })),
    control: definition.control ? linePattern(definition.control.pattern) : null,
    capturesTime: definition.fields.some((f) => namedGroupsOf(f.pattern).includes('time')),
    date: formatPattern(definition.dateFormat),
    time: formatPattern(definition.timeFormat),
  };
}

/** The record framing a profile describes, for the shared line and record stages. */
export function profileFraming(definition: ProfileDefinition): RecordFraming {
  const r = definition.record;
  const start = r.start ? linePattern(r.start) : undefined;
  const end = r.end ? linePattern(r.end) : undefined;
  const gapMs = r.idleMs ?? (!end && !r.formFeed ? START_ONLY_GAP_MS : undefined);
  // Without an end line or form feed, a record whose every field is read once (none repeats) is whole
  // at the line that completes it: nothing more can belong to it, so it need not wait for the gap.
  const patterns = definition.fields.map((f) => linePattern(f.pattern));
  const complete =
    !end && !r.formFeed && definition.fields.length > 0 && !definition.fields.some((f) => f.repeats)
      ? (lines: readonly Line[]) => patterns.every((p) => lines.some((line) => p.test(line.text)))
      : undefined;
  return { start, end, formFeed: r.formFeed, complete, gapMs, idleMs: gapMs === undefined ? GIVE_UP_MS : undefined, maxLines: r.maxLines };
}

/** Which line matched which field, for the preview. */
export interface PreviewLine {
  text: string;
  /** Labels of the fields whose pattern matched this line. */
  fields: string[];
  captures: Captures;
}

/** A slip marked as a control run by the profile's control line, with the level it printed. */
export interface ControlMark {
  level: string | null;
}

/** The label the preview gives the line that marked a slip as a control run. */
export const CONTROL_LINE_LABEL = 'Control run';

export interface RecordReading {
  outputs: ParserOutput[];
  lines: PreviewLine[];
  /** The record's own captures (from lines that do not repeat), first match of each name. */
  fields: Captures;
  /** Set when a line matched the profile's control pattern: every result of the slip is QC. */
  control: ControlMark | null;
}

/** The first line matching the profile's control pattern marks the whole slip; its level, if captured. */
function findControl(profile: CompiledProfile, lines: PreviewLine[]): ControlMark | null {
  if (!profile.control) return null;
  for (const line of lines) {
    const groups = profile.control.exec(line.text);
    if (!groups) continue;
    line.fields.push(CONTROL_LINE_LABEL);
    return { level: groups.level?.trim() || null };
  }
  return null;
}

/** Reads one record by the profile: one reading, or one per repeating line, or a fragment saying why not. */
function readRecord(profile: CompiledProfile, record: RecordFrame): RecordReading {
  const lines: PreviewLine[] = record.lines.map((line) => ({ text: line.text, fields: [], captures: {} }));
  const fields: Captures = {};
  const results: Captures[] = [];
  const matched = new Set<string>();
  const overlong = record.lines.some((line) => line.overlong);
  record.lines.forEach((line, index) => {
    for (const field of profile.fields) {
      if (!field.repeats && matched.has(field.label)) continue;
      // A line already read by an earlier field (a header such as DATE) is not also a result line.
      if (field.repeats && lines[index].fields.length > 0) continue;
      const groups = field.pattern.exec(line.text);
      if (!groups) continue;
      const captures = cleanCaptures(groups);
      lines[index].fields.push(field.label);
      Object.assign(lines[index].captures, captures);
      matched.add(field.label);
      if (field.repeats) results.push(captures);
      else for (const [name, value] of Object.entries(captures) as [ProfileCapture, string][]) fields[name] ??= value;
    }
  });
  const control = findControl(profile, lines);
  // A control slip that cannot be read says so, so the person typing it in knows it is QC, not a patient's.
  const fail = (reason: string): RecordReading => ({ outputs: [fragment(record.raw, control ? `control slip: ${reason}` : reason)], lines, fields, control });
  if (overlong) return fail('a line of the printout is too long and was cut');
  const missing = profile.fields.find((field) => field.required && !matched.has(field.label));
  if (missing) return fail(`no line matches "${missing.label}"`);
  const repeating = profile.fields.some((field) => field.repeats);
  if (repeating && results.length === 0) return fail('no result line matches');
  const outputs = (repeating ? results : [{}]).map((own) => readResult(profile, { ...fields, ...own }, record.raw, control));
  return { outputs, lines, fields, control };
}

function cleanCaptures(groups: Record<string, string | undefined> | undefined): Captures {
  const out: Captures = {};
  for (const [name, value] of Object.entries(groups ?? {})) {
    const trimmed = value?.trim();
    if (trimmed) out[name as ProfileCapture] = trimmed;
  }
  return out;
}

function readResult(profile: CompiledProfile, captures: Captures, raw: string, control: ControlMark | null): ParserOutput {
  const d = profile.definition;
  const analyte = captures.analyte ?? d.analyte;
  const fail = (reason: string) => fragment(raw, `${control ? 'control slip: ' : ''}${analyte ? `${analyte}: ${reason}` : reason}`);
  if (!analyte) return fail('no test named (capture analyte, or name it in the profile)');
  if (captures.value === undefined) return fail('no value printed');
  const number = (d.decimalComma ? /^([<>])?\s*([+-]?\d+(?:,\d+)?)$/ : /^([<>])?\s*([+-]?\d+(?:\.\d+)?)$/).exec(captures.value);
  if (!number) return fail(`value "${captures.value}" is not a number${d.decimalComma ? ' with a decimal comma' : ''}`);
  const comparator = captures.comparator ?? number[1] ?? null;
  if (comparator !== null && comparator !== '<' && comparator !== '>') return fail(`comparator "${comparator}" is not < or >`);
  const measuredAt = readMoment(profile, captures);
  if (typeof measuredAt === 'object' && measuredAt !== null) return fail(measuredAt.problem);
  const reading: ParsedReading = {
    kind: 'reading',
    analyte,
    value: Number(number[2].replace(',', '.')),
    decimals: printedDecimals(number[2]),
    code: null,
    text: null,
    notes: [],
    comparator,
    unit: captures.unit ?? d.unit ?? null,
    flags: captures.flag ? [captures.flag] : [],
    sampleId: captures.sampleId ?? null,
    patientRef: captures.patientRef ?? null,
    measuredAt,
    instrumentSerial: captures.instrumentSerial ?? null,
    referenceRange: null,
    resultStatus: null,
    ...(control ? { specimenRole: 'control' as const, ...(control.level ? { controlLevel: control.level } : {}) } : {}),
    raw,
  };
  return reading;
}

/** ISO time from the date and time captures in the profile's formats; null when the printout has none. */
function readMoment(profile: CompiledProfile, captures: Captures): string | null | { problem: string } {
  const { date, time } = captures;
  const d = profile.definition;
  if (!date && !time) return null;
  if (!date) return { problem: 'a time without a date' };
  if (!time) return profile.capturesTime ? { problem: 'a date without a time' } : null;
  const dm = profile.date.exec(date);
  if (!dm?.groups) return { problem: `date "${date}" is not ${d.dateFormat}` };
  const tm = profile.time.exec(time);
  if (!tm?.groups) return { problem: `time "${time}" is not ${d.timeFormat}` };
  const g = { ...dm.groups, ...tm.groups };
  let hour = Number(g.H ?? g.h);
  if (g.a !== undefined) {
    if (hour < 1 || hour > 12) return { problem: `time "${time}" has no hour ${hour} on a 12-hour clock` };
    hour = (hour % 12) + (/^p/i.test(g.a) ? 12 : 0);
  }
  const local = localIsoDateTime({
    year: g.Y !== undefined ? Number(g.Y) : 2000 + Number(g.y),
    month: Number(g.M),
    day: Number(g.D),
    hour,
    minute: Number(g.m),
    second: Number(g.s ?? 0),
  });
  if (local.ok) return local.iso;
  return { problem: local.problem === 'date' ? `date "${date}" is not a real date` : `time "${time}" is not a real time` };
}

const FORMAT_TOKENS: [string, string][] = [
  ['YYYY', '(?<Y>\\d{4})'],
  ['YY', '(?<y>\\d{2})'],
  ['MM', '(?<M>\\d{1,2})'],
  ['DD', '(?<D>\\d{1,2})'],
  ['HH', '(?<H>\\d{1,2})'],
  ['hh', '(?<h>\\d{1,2})'],
  ['mm', '(?<m>\\d{2})'],
  ['ss', '(?<s>\\d{2})'],
  ['a', '(?<a>[AaPp]\\.?[Mm]\\.?)'],
];

/** A date or time format from the profile schema as an anchored pattern. */
function formatPattern(format: string): RegExp {
  let source = '';
  for (let at = 0; at < format.length; ) {
    const token = FORMAT_TOKENS.find(([t]) => format.startsWith(t, at));
    if (token) {
      source += token[1];
      at += token[0].length;
    } else {
      source += format[at] === ' ' ? '\\s*' : format[at].replace(/[.*+?^${}()|[\]\\/-]/g, '\\$&');
      at++;
    }
  }
  return new RegExp(`^${source}$`);
}

/** A dialect that reads by a stored profile. */
export function profileDialect(definition: ProfileDefinition, identity?: { key: string; version: number }): Dialect {
  const profile = compile(definition);
  return {
    name: identity ? `profile ${identity.key} v${identity.version}` : 'profile',
    summary: `printout profile for ${definition.analyzer}`,
    framing: profileFraming(definition),
    defaultEncoding: definition.encoding,
    parse: (record) => readRecord(profile, record).outputs,
  };
}

export interface ProfilePreview {
  /** Everything the bridge would send, in order: readings and unparsed fragments. */
  outputs: ParserOutput[];
  /** Each framed record with how its lines matched and what it gave. */
  records: { raw: string; lines: PreviewLine[]; fields: Captures; control: ControlMark | null; outputs: ParserOutput[] }[];
  /** The unparsed fragments among outputs (text outside records, records cut short or not read). */
  unparsed: UnparsedFragment[];
}

/**
 * What the bridge would make of `text` with this profile: pure, no timers or I/O. The text is one
 * capture read to its end, so quiet gaps cannot be seen in it: a record ends at its end line, a form
 * feed, the next start line or the end of the text.
 */
export function previewProfile(definition: ProfileDefinition, text: string): ProfilePreview {
  const profile = compile(definition);
  const dialect = profileDialect(definition);
  const framing = { ...profileFraming(definition), gapMs: undefined, idleMs: undefined };
  // A profile with only a gap to go by reads the whole text as one record.
  const grouper = new RecordGrouper(framing.start || framing.end || framing.formFeed ? framing : { ...framing, formFeed: true });
  const cutter = new LineCutter({ encoding: 'utf8' });
  const lines: Line[] = [...cutter.push(Buffer.from(text, 'utf8')), ...cutter.end()];
  const frames: FramerOutput[] = [...lines.flatMap((line) => grouper.take(line)), ...grouper.end()];
  const preview: ProfilePreview = { outputs: [], records: [], unparsed: [] };
  for (const frame of frames) {
    const outputs = parseFrame(dialect, frame);
    preview.outputs.push(...outputs);
    preview.unparsed.push(...outputs.filter((o): o is UnparsedFragment => o.kind === 'unparsed'));
    if (frame.kind === 'record') {
      const detail = readRecord(profile, frame);
      preview.records.push({ raw: frame.raw, lines: detail.lines, fields: detail.fields, control: detail.control, outputs });
    }
  }
  return preview;
}
