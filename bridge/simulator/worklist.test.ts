import { describe, expect, it } from 'vitest';
import type { WorklistItem } from '../../lib/validation/readings';
import { astmE1394 } from '../dialects/astm-e1394';
import { hl7v2 } from '../dialects/hl7v2';
import { createChemistryAnalyzer } from './astm-chemistry';
import { createHematologyAnalyzer } from './hl7-hematology';
import { dueRuns, worklistRuns } from './worklist';

// The demo's analyzers run what the Bench started: a run is due at its order's due time, carries the tube
// label (ASTM E1394 §8.4.3 O-3 specimen ID; HL7 v2.5 §7.4.1 OBR-3) and the record number (E1394 §8.1.4 P-3
// practice-assigned patient ID; HL7 v2.5 §3.4.2 PID-3), and is sent once.

const at = (iso: string) => new Date(iso);
const item = (over: Partial<WorklistItem>): WorklistItem => ({
  instrument: 'chem-analyzer',
  analyte: 'GLU',
  sampleId: 'T-ABC234',
  recordNumber: 'FH-1002',
  startedAt: '2026-12-01T10:00:00.000Z',
  dueAt: '2026-12-01T10:05:00.000Z',
  ...over,
});

describe('dueRuns', () => {
  it('groups the due tests of one tube into one run, once', () => {
    const items = [item({}), item({ analyte: 'ALT' }), item({ analyte: 'ALB', dueAt: '2026-12-01T10:30:00.000Z' }), item({ instrument: 'hema-analyzer', analyte: 'WBC' })];
    const sent = new Set<string>();
    expect(dueRuns(items, 'chem-analyzer', at('2026-12-01T10:06:00Z'), sent)).toEqual([{ sampleId: 'T-ABC234', patientRef: 'FH-1002', analytes: ['GLU', 'ALT'] }]);
    expect(dueRuns(items, 'chem-analyzer', at('2026-12-01T10:07:00Z'), sent)).toEqual([]);
    expect(dueRuns(items, 'chem-analyzer', at('2026-12-01T10:31:00Z'), sent)).toEqual([{ sampleId: 'T-ABC234', patientRef: 'FH-1002', analytes: ['ALB'] }]);
  });

  it('a test without a tube label runs under the patient’s record number', () => {
    expect(dueRuns([item({ sampleId: null })], 'chem-analyzer', at('2026-12-01T10:06:00Z'), new Set())).toEqual([{ sampleId: null, patientRef: 'FH-1002', analytes: ['GLU'] }]);
  });

  it('prints nothing while no test is running', async () => {
    const controller = new AbortController();
    let polls = 0;
    const runs = worklistRuns({
      source: async () => {
        if (++polls === 3) controller.abort();
        return [];
      },
      instrument: 'chem-analyzer',
      random: () => 0.99,
      pollMs: 1,
    });
    expect(await runs.next(controller.signal)).toBeUndefined();
    expect(polls).toBe(3);
  });

  it('now and then follows a run with an unmatched sample', async () => {
    const runs = worklistRuns({ source: async () => [item({})], instrument: 'chem-analyzer', random: () => 0, clock: () => at('2026-12-01T10:06:00Z') });
    expect(await runs.next()).toMatchObject({ sampleId: 'T-ABC234' });
    expect(await runs.next()).toEqual({ sampleId: null, patientRef: null, analytes: null });
  });
});

describe('analyzers fed from the worklist', () => {
  it('the chemistry message carries the label, the record number and only the ordered tests', () => {
    const message = createChemistryAnalyzer({ seed: 3 }).next({ sampleId: 'T-ABC234', patientRef: 'FH-1002', analytes: ['GLU', 'ALT'] });
    const parsed = [astmE1394.parse({ kind: 'record', raw: '', lines: message.records.map((text) => ({ text, raw: `${text}\r`, overlong: false })) })].flat();
    const readings = parsed.flatMap((p) => (p.kind === 'reading' ? [p] : []));
    expect(readings.map((r) => r.analyte)).toEqual(['GLU', 'ALT']);
    expect(readings.every((r) => r.sampleId === 'T-ABC234' && r.patientRef === 'FH-1002')).toBe(true);
  });

  it('the haematology message carries the record number in PID-3 when the order had no label', () => {
    const message = createHematologyAnalyzer({ seed: 3 }).next({ sampleId: null, patientRef: 'FH-1004', analytes: ['WBC'] });
    const parsed = [hl7v2.parse({ kind: 'record', raw: message.text, lines: message.text.split('\r').filter(Boolean).map((text) => ({ text, raw: `${text}\r`, overlong: false })) })].flat();
    const readings = parsed.flatMap((p) => (p.kind === 'reading' ? [p] : []));
    expect(readings.length).toBe(5);
    expect(readings.every((r) => r.patientRef === 'FH-1004' && !r.sampleId)).toBe(true);
  });
});
