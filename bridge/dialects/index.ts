import { astmE1394 } from './astm-e1394';
import type { Dialect } from './dialect';
import { hl7v2 } from './hl7v2';
import { plainPrintout } from './plain-printout';

export type { Dialect } from './dialect';

// Registry by name; stored printout profiles are built per instrument (dialects/profile.ts), not listed here.
const dialects = new Map<string, Dialect>([plainPrintout, astmE1394, hl7v2].map((dialect) => [dialect.name, dialect]));

export const DEFAULT_DIALECT = plainPrintout.name;
/** The dialect name an instrument carries when a printout profile reads it. */
export const PROFILE_DIALECT = 'profile';

export function dialectNames(): string[] {
  return [...dialects.keys()];
}

export function findDialect(name: string): Dialect | undefined {
  return dialects.get(name);
}

export function getDialect(name: string): Dialect {
  const dialect = dialects.get(name);
  if (!dialect) throw new Error(`unknown dialect "${name}" (known: ${dialectNames().join(', ')})`);
  return dialect;
}
