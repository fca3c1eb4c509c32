import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { ParsedReading, UnparsedFragment } from '../../lib/validation/readings';

// Invented test payloads and temp directories shared by the spool, uploader and pipeline tests.

export function reading(value: number, sampleId: string | null = null): ParsedReading {
  const raw = `---- RESULT ----\r\nTEST      cCRP\r\nRESULT    ${value} mg/L\r\n---- END ----\r\n`;
  return {
    kind: 'reading',
    analyte: 'cCRP',
    value,
    code: null,
    text: null,
    notes: [],
    comparator: null,
    unit: 'mg/L',
    flags: [],
    sampleId,
    patientRef: null,
    measuredAt: null,
    instrumentSerial: 'SIM-0001',
    referenceRange: null,
    resultStatus: null,
    raw,
  };
}

export function unparsed(raw: string): UnparsedFragment {
  return { kind: 'unparsed', raw, reason: 'text outside any record' };
}

/** A fresh temp directory; call the returned cleanup when done. */
export async function tempDir(prefix = 'benchwire-bridge-'): Promise<{ dir: string; cleanup: () => Promise<void> }> {
  const dir = await mkdtemp(join(tmpdir(), prefix));
  return { dir, cleanup: () => rm(dir, { recursive: true, force: true }) };
}
