import type { Dialect } from './dialect';
import { plainPrintout } from './plain-printout';

export type { Dialect } from './dialect';

// Registry by name; further dialects (ASTM E1394, HL7 v2, stored printout profiles) register here.
const dialects = new Map<string, Dialect>([[plainPrintout.name, plainPrintout]]);

export const DEFAULT_DIALECT = plainPrintout.name;

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
