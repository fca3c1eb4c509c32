import type { LineEncoding } from '../framing/lines';

// Invented panels with plausible canine and feline values (our own brief, not any analyzer's):
// each test has a reference interval per species, and results lean normal with some abnormal ones.

export type Species = 'canine' | 'feline';

export interface TestDefinition {
  code: string;
  unit: string;
  decimals: number;
  range: Record<Species, [number, number]>;
  /** What the instrument prints below / above its measuring range. */
  limits?: [number, number];
}

export interface SimulatedResult {
  code: string;
  unit: string;
  /** As sent, e.g. "5.2", "<18", ">1000". */
  value: string;
  range: [number, number];
  flag: 'L' | 'H' | 'N';
}

export const CHEMISTRY: readonly TestDefinition[] = [
  { code: 'GLU', unit: 'mmol/L', decimals: 1, range: { canine: [3.9, 7.5], feline: [3.9, 8.3] }, limits: [1.1, 38] },
  { code: 'CREA', unit: 'umol/L', decimals: 0, range: { canine: [44, 133], feline: [71, 212] }, limits: [18, 1500] },
  { code: 'BUN', unit: 'mmol/L', decimals: 1, range: { canine: [2.5, 9.6], feline: [5.7, 12.9] }, limits: [0.7, 46] },
  { code: 'ALT', unit: 'U/L', decimals: 0, range: { canine: [10, 125], feline: [12, 130] }, limits: [10, 1000] },
  { code: 'ALP', unit: 'U/L', decimals: 0, range: { canine: [23, 212], feline: [14, 111] }, limits: [10, 2000] },
  { code: 'TP', unit: 'g/L', decimals: 0, range: { canine: [52, 82], feline: [57, 89] }, limits: [20, 120] },
  { code: 'ALB', unit: 'g/L', decimals: 0, range: { canine: [23, 40], feline: [22, 40] }, limits: [10, 60] },
];

export const HEMATOLOGY: readonly TestDefinition[] = [
  { code: 'WBC', unit: '10*9/L', decimals: 2, range: { canine: [5.05, 16.76], feline: [2.87, 17.02] } },
  { code: 'RBC', unit: '10*12/L', decimals: 2, range: { canine: [5.65, 8.87], feline: [6.54, 12.2] } },
  { code: 'HGB', unit: 'g/L', decimals: 0, range: { canine: [131, 205], feline: [98, 162] } },
  { code: 'HCT', unit: '%', decimals: 1, range: { canine: [37.3, 61.7], feline: [30.3, 52.3] } },
  { code: 'PLT', unit: '10*9/L', decimals: 0, range: { canine: [148, 484], feline: [151, 600] } },
];

/** One result: about 80 % inside the interval, the rest a little to far outside it. */
export function simulateResult(test: TestDefinition, species: Species, random: () => number): SimulatedResult {
  const [low, high] = test.range[species];
  const roll = random();
  const span = high - low;
  let value: number;
  if (roll < 0.8) value = low + random() * span;
  else if (roll < 0.9) value = low * (0.4 + random() * 0.6);
  // Far-off values only where biology allows them (enzymes can rise many-fold; haemoglobin cannot).
  else value = high * (1 + random() * (test.limits && random() < 0.2 ? 3 : 0.3));
  const flag = value < low ? 'L' : value > high ? 'H' : 'N';
  let text = value.toFixed(test.decimals);
  if (test.limits && value < test.limits[0]) text = `<${test.limits[0]}`;
  else if (test.limits && value > test.limits[1]) text = `>${test.limits[1]}`;
  return { code: test.code, unit: test.unit, value: text, range: [low, high], flag };
}

export const SIMULATOR_ENCODING: LineEncoding = 'latin1';
