// Verifying a published or manufacturer reference interval with the clinic's own healthy animals.
// Rule (CLSI EP28-A3c; ASVCP reference-interval guideline, Vet Clin Pathol 2012;41:441–453;
// both from memory, verify): test 20 reference samples; the interval is accepted when no more than 2 fall
// outside it. With 3 or more outside, test a second set of 20: accepted when that set has no more than 2
// outside, otherwise the interval is not verified for this clinic and should be re-established.

export const VERIFICATION_SAMPLES = 20;
export const MAX_OUTSIDE = 2;

export interface VerificationInput {
  low: number | null;
  high: number | null;
  values: number[];
  /** The second set of 20, when the first had more than 2 outside. */
  secondValues?: number[] | null;
}

export interface CheckedValue {
  value: number;
  outside: 'low' | 'high' | null;
}

export type VerificationDecision = 'accepted' | 'test-second-set' | 'rejected' | 'too-few-samples';

export interface VerificationResult {
  decision: VerificationDecision;
  /** Plain words for the report. */
  message: string;
  first: { n: number; outside: number; values: CheckedValue[] };
  second: { n: number; outside: number; values: CheckedValue[] } | null;
}

/** Limits are inclusive: a value equal to a limit is inside the interval. */
export function checkValue(value: number, low: number | null, high: number | null): CheckedValue {
  return { value, outside: low !== null && value < low ? 'low' : high !== null && value > high ? 'high' : null };
}

function checkSet(values: number[], low: number | null, high: number | null) {
  const checked = values.map((v) => checkValue(v, low, high));
  return { n: values.length, outside: checked.filter((c) => c.outside).length, values: checked };
}

export function verifyReferenceInterval(input: VerificationInput): VerificationResult {
  const { low, high } = input;
  if (low === null && high === null) throw new Error('an interval needs at least one limit');
  const first = checkSet(input.values, low, high);
  const second = input.secondValues?.length ? checkSet(input.secondValues, low, high) : null;
  if (first.n !== VERIFICATION_SAMPLES) {
    return {
      decision: 'too-few-samples',
      message: `${first.n} samples: the verification uses exactly ${VERIFICATION_SAMPLES} reference samples`,
      first,
      second: null,
    };
  }
  if (first.outside <= MAX_OUTSIDE) {
    return { decision: 'accepted', message: `${first.outside} of ${first.n} outside (at most ${MAX_OUTSIDE} allowed): interval verified`, first, second: null };
  }
  if (!second) {
    return {
      decision: 'test-second-set',
      message: `${first.outside} of ${first.n} outside (more than ${MAX_OUTSIDE}): test a second set of ${VERIFICATION_SAMPLES}`,
      first,
      second: null,
    };
  }
  if (second.n !== VERIFICATION_SAMPLES) {
    return {
      decision: 'too-few-samples',
      message: `second set has ${second.n} samples: it needs exactly ${VERIFICATION_SAMPLES}`,
      first,
      second,
    };
  }
  return second.outside <= MAX_OUTSIDE
    ? { decision: 'accepted', message: `second set: ${second.outside} of ${second.n} outside: interval verified`, first, second }
    : {
        decision: 'rejected',
        message: `second set: ${second.outside} of ${second.n} outside: not verified here; establish the clinic's own interval`,
        first,
        second,
      };
}
