'use client';
// Results for a date range as CSV (clinic days, inclusive). A plain GET form: the browser downloads the file.
import { useState } from 'react';
import { buttonClass, inputClass } from '@/app/components/ui';

export function ExportForm() {
  const today = new Date().toISOString().slice(0, 10);
  const [from, setFrom] = useState(today);
  const [to, setTo] = useState(today);
  return (
    <form method="get" action="/api/results/export" className="mt-8 flex flex-wrap items-end gap-3 rounded-lg border border-ink-100 bg-white p-4 text-sm shadow-sm" aria-label="Export results as CSV">
      <h2 className="w-full font-semibold">Export results (CSV)</h2>
      <label className="block">
        <span className="font-medium">From</span>
        <input className={inputClass} type="date" name="from" required value={from} onChange={(e) => setFrom(e.target.value)} />
      </label>
      <label className="block">
        <span className="font-medium">To</span>
        <input className={inputClass} type="date" name="to" required min={from} value={to} onChange={(e) => setTo(e.target.value)} />
      </label>
      <button type="submit" className={buttonClass.secondary}>
        Download CSV
      </button>
    </form>
  );
}
