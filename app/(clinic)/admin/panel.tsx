export function Panel({ id, title, intro, children }: { id: string; title: string; intro: string; children: React.ReactNode }) {
  return (
    <section aria-labelledby={`${id}-heading`} className="rounded-xl border border-ink-100 bg-white p-5 shadow-sm">
      <h2 id={`${id}-heading`} className="text-lg font-semibold">
        {title}
      </h2>
      <p className="mb-4 text-sm text-ink-700">{intro}</p>
      {children}
    </section>
  );
}

export const th = 'px-3 py-2 text-left text-xs uppercase tracking-wide text-ink-700';
export const td = 'px-3 py-2 align-top';
