// Lab-quality marks on a result (QC failed, expired kit lot, room temperature), shown beside its clinical flag.
export interface QualityMarkView {
  code: string;
  label: string;
  detail: string;
}

export function QualityMarks({ marks }: { marks: QualityMarkView[] | undefined }) {
  if (!marks?.length) return null;
  return (
    <span className="mt-1 flex flex-wrap gap-1">
      {marks.map((m) => (
        <span
          key={m.code}
          title={m.detail}
          data-testid="quality-mark"
          data-mark={m.code}
          className={`inline-block rounded px-1.5 py-0.5 text-xs font-semibold ${m.code === 'room-temperature' ? 'bg-signal-100 text-signal-600' : 'bg-alarm-100 text-alarm-700'}`}
        >
          {m.label}
          <span className="sr-only">: {m.detail}</span>
        </span>
      ))}
    </span>
  );
}
