// Words for the lab-quality marks a reading carries from arrival (shared by server and browser).
export const QUALITY_MARKS = {
  'qc-failed': 'QC failed',
  'kit-expired': 'Expired kit lot',
} as const;
export type QualityMark = keyof typeof QUALITY_MARKS;

export const QUALITY_MARK_DETAIL: Record<QualityMark, string> = {
  'qc-failed': 'QC for this test on this instrument was rejected when the result arrived; verify after an accepted QC run.',
  'kit-expired': 'The kit lot had expired when the test ran.',
};

export function markViews(codes: readonly string[] | null | undefined) {
  return (codes ?? [])
    .filter((c): c is QualityMark => c in QUALITY_MARKS)
    .map((code) => ({ code, label: QUALITY_MARKS[code], detail: QUALITY_MARK_DETAIL[code] }));
}
