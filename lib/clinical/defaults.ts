// Built-in starting points a clinic can change. Each value names where it came from, and the app shows it.
import type { InterpretationBand, ProtocolStage, Species } from '@/db/schema';

export interface DefaultAnalyte {
  code: string;
  name: string;
  unit: string;
  displayUnit: string;
  decimals: number;
  validatedSpecies: Species[];
  speciesNote: string;
  deltaAbsolute: number | null;
  deltaPercent: number | null;
  deltaWindowHours: number | null;
  deltaSource: string;
}

export interface DefaultProtocol {
  analyte: string;
  /** Instrument code the protocol belongs to; null for any instrument. */
  instrumentCode: string | null;
  name: string;
  stages: ProtocolStage[];
  earlySeconds: number;
  lateSeconds: number;
  source: string;
}

export interface DefaultInterval {
  analyte: string;
  species: Species;
  unit: string;
  low: number | null;
  high: number | null;
  criticalLow: number | null;
  criticalHigh: number | null;
  bands: InterpretationBand[];
  source: string;
}

export const DEFAULT_ANALYTES: DefaultAnalyte[] = [
  {
    code: 'cCRP',
    name: 'C-reactive protein (canine)',
    unit: 'mg/L',
    displayUnit: 'mg/L',
    decimals: 1,
    validatedSpecies: ['dog'],
    speciesNote:
      'CRP is a major acute-phase protein in dogs but not in cats (“Acute phase proteins in dogs and cats: current knowledge and future perspectives”, Vet Clin Pathol 2005;34:85–99; cited from memory).',
    deltaAbsolute: 20,
    deltaPercent: 270,
    deltaWindowHours: 72,
    deltaSource:
      '270%: the one-sided critical difference for serial canine CRP (269.9%) in apparently healthy dogs, J Vet Intern Med 2011, doi:10.1111/j.1939-1676.2011.0729.x (value and citation from memory, not checked against the paper: verify before relying on it). 20 mg/L and 72 h: clinic choice, no published source (common practice to pair a percent limit with an absolute one).',
  },
];

export const DEFAULT_PROTOCOLS: DefaultProtocol[] = [
  {
    analyte: 'cCRP',
    instrumentCode: null,
    name: 'Single-test CRP reader',
    stages: [
      { key: 'mix', label: 'Mixing', seconds: 30, handsOn: true },
      { key: 'reinsert', label: 'Re-insert the cartridge', seconds: 10, maxSeconds: 10, handsOn: true },
      { key: 'incubate', label: 'Incubation', seconds: 660 },
      { key: 'measure', label: 'Measurement', seconds: 25 },
    ],
    earlySeconds: 60,
    lateSeconds: 180,
    source:
      'Common practice for a single-test point-of-care CRP reader, no published source: about 30 s mixing, re-insertion within 10 s (else the run aborts and the test is used up), 660 s incubation, then 20–35 s measuring before the result prints (25 s taken); the reading is due about 12 min after the start. Tolerances are clinic choice.',
  },
];

export const DEFAULT_INTERVALS: DefaultInterval[] = [
  {
    analyte: 'cCRP',
    species: 'dog',
    unit: 'mg/L',
    low: null,
    high: 10,
    criticalLow: null,
    criticalHigh: 100,
    bands: [
      { label: 'Within interval', from: null, to: 10 },
      { label: 'Raised', from: 10, to: 100 },
      { label: 'Markedly raised', from: 100, to: null },
    ],
    source:
      'Upper limit 10 mg/L: from memory, a limit in common use for canine-specific CRP assays; healthy dogs were below 5 mg/L in “C-reactive protein in dogs”, Am J Vet Res 1987;48:919–921 (citation from memory). Band and critical limit at 100 mg/L: concentrations > 100 mg/L studied as "extremely high" in BMC Vet Res 2020, doi:10.1186/s12917-020-02367-7 (citation from memory, not checked); using it as a critical limit is a clinic policy placeholder, no published source. Check against your instrument’s validated interval.',
  },
];

// Chemistry and haematology analytes of the demo's in-clinic analyzers, with reference intervals for
// dogs and cats. The limits are textbook-typical adult values in SI units, FROM MEMORY, NOT CHECKED
// against a published table: verify each against your analyzer's validated intervals (reference
// intervals differ by method and population, ASVCP guidelines, Vet Clin Pathol
// 2012;41:441–453, citation from memory) before relying on a flag. No critical limits are set here: a
// clinic sets its own.
const PANEL_SOURCE =
  'From memory, verify: textbook-typical adult interval, not checked against a published table; replace with your analyzer’s validated interval (ASVCP reference interval guidelines, Vet Clin Pathol 2012;41:441–453, citation from memory).';

const PANEL: { code: string; name: string; unit: string; decimals: number; dog: [number, number]; cat: [number, number] }[] = [
  { code: 'GLU', name: 'Glucose', unit: 'mmol/L', decimals: 1, dog: [3.9, 7.5], cat: [3.9, 8.3] },
  { code: 'CREA', name: 'Creatinine', unit: 'umol/L', decimals: 0, dog: [44, 133], cat: [71, 212] },
  { code: 'BUN', name: 'Urea', unit: 'mmol/L', decimals: 1, dog: [2.5, 9.6], cat: [5.7, 12.9] },
  { code: 'ALT', name: 'Alanine aminotransferase', unit: 'U/L', decimals: 0, dog: [10, 125], cat: [12, 130] },
  { code: 'ALP', name: 'Alkaline phosphatase', unit: 'U/L', decimals: 0, dog: [23, 212], cat: [14, 111] },
  { code: 'TP', name: 'Total protein', unit: 'g/L', decimals: 0, dog: [52, 82], cat: [57, 89] },
  { code: 'ALB', name: 'Albumin', unit: 'g/L', decimals: 0, dog: [23, 40], cat: [22, 40] },
  { code: 'WBC', name: 'White blood cells', unit: '10*9/L', decimals: 2, dog: [5.05, 16.76], cat: [2.87, 17.02] },
  { code: 'RBC', name: 'Red blood cells', unit: '10*12/L', decimals: 2, dog: [5.65, 8.87], cat: [6.54, 12.2] },
  { code: 'HGB', name: 'Haemoglobin', unit: 'g/L', decimals: 0, dog: [131, 205], cat: [98, 162] },
  { code: 'HCT', name: 'Haematocrit', unit: '%', decimals: 1, dog: [37.3, 61.7], cat: [30.3, 52.3] },
  { code: 'PLT', name: 'Platelets', unit: '10*9/L', decimals: 0, dog: [148, 484], cat: [151, 600] },
];

for (const t of PANEL) {
  DEFAULT_ANALYTES.push({
    code: t.code,
    name: t.name,
    unit: t.unit,
    displayUnit: t.unit,
    decimals: t.decimals,
    validatedSpecies: ['dog', 'cat'],
    speciesNote: '',
    deltaAbsolute: null,
    deltaPercent: null,
    deltaWindowHours: null,
    deltaSource: 'No delta check set: a clinic sets its own limits.',
  });
  for (const species of ['dog', 'cat'] as const) {
    const [low, high] = t[species];
    DEFAULT_INTERVALS.push({ analyte: t.code, species, unit: t.unit, low, high, criticalLow: null, criticalHigh: null, bands: [], source: PANEL_SOURCE });
  }
}
