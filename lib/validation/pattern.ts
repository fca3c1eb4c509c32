import { RE2JS } from 're2js';

// Patterns an administrator types (printout profiles, the QC sample-ID rule) run on every line an
// analyzer prints, in the server and in the bridge. A backtracking engine can take exponential time
// on a pattern such as ^(a+)+$, so they run in RE2JS, whose matching time is linear in the line's
// length whatever the pattern. The price is RE2's syntax: no backreferences and no lookaround.

/** A compiled pattern: a test, and the named captures of the first match. */
export interface LinePattern {
  readonly source: string;
  test(text: string): boolean;
  /** Named captures of the first match (unmatched optional groups are undefined), or null for no match. */
  exec(text: string): Record<string, string | undefined> | null;
}

export type PatternCompiled = { ok: true; pattern: LinePattern } | { ok: false; reason: string };

/** Why RE2 refuses a construct that JavaScript accepts, in words an administrator can act on. */
function explain(source: string, engineMessage: string): string {
  if (/\\[1-9]|\\k</.test(source)) {
    return 'a backreference (\\1, \\k<name>) cannot be used: patterns run in a linear-time engine that does not support them; repeat the part you want to match again instead';
  }
  if (/\(\?<?[=!]/.test(source)) {
    return 'lookahead and lookbehind ((?=…), (?!…), (?<=…), (?<!…)) cannot be used: patterns run in a linear-time engine that does not support them; match the text itself instead';
  }
  if (/\\u[0-9A-Fa-f{]/.test(source)) return 'write a character by its code as \\x{00E9}, not \\u00E9';
  return engineMessage.replace(/^error parsing regexp: /, '');
}

/** Compiles a pattern for the linear-time engine, or says why it cannot be used. */
export function compileLinePattern(source: string, options: { ignoreCase?: boolean } = {}): PatternCompiled {
  let compiled: RE2JS;
  try {
    compiled = RE2JS.compile(source, options.ignoreCase ? RE2JS.CASE_INSENSITIVE : 0);
  } catch (error) {
    return { ok: false, reason: explain(source, error instanceof Error ? error.message : String(error)) };
  }
  const named = Object.keys(compiled.namedGroups());
  return {
    ok: true,
    pattern: {
      source,
      test: (text) => compiled.test(text),
      exec(text) {
        const matcher = compiled.matcher(text);
        if (!matcher.find()) return null;
        const groups: Record<string, string | undefined> = {};
        for (const name of named) groups[name] = matcher.group(name) ?? undefined;
        return groups;
      },
    },
  };
}

/** Compiles a pattern already checked by a schema; a pattern that slipped past one is a bug, so it throws. */
export function linePattern(source: string, options: { ignoreCase?: boolean } = {}): LinePattern {
  const compiled = compileLinePattern(source, options);
  if (!compiled.ok) throw new Error(`pattern ${JSON.stringify(source)}: ${compiled.reason}`);
  return compiled.pattern;
}
