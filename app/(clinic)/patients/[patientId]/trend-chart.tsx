'use client';
// One analyte's results over time, with the reference band. A value printed with a comparator is drawn
// as a triangle pointing the way the true value lies (▼ for "<5", ▲ for ">200"), never as a plain point.
import { CartesianGrid, ComposedChart, Line, ReferenceArea, ReferenceLine, ResponsiveContainer, Tooltip, XAxis, YAxis } from 'recharts';
import { formatMeasured, niceTicks, unitLabel } from '@/lib/format';
import type { ChartAnalyte, TrendPoint } from './patient-results';

interface Point {
  id: string;
  t: number;
  y: number;
  comparator: '<' | '>' | null;
  label: string;
  change: string | null;
  flagged: boolean;
}

function Marker(props: { cx?: number; cy?: number; payload?: Point }) {
  const { cx, cy, payload } = props;
  if (cx === undefined || cy === undefined || !payload) return null;
  const colour = payload.flagged ? '#a52a2a' : '#1c3a52';
  const shape =
    payload.comparator === '<' ? (
      <path d={`M${cx - 6},${cy - 5} L${cx + 6},${cy - 5} L${cx},${cy + 6} Z`} fill="white" stroke={colour} strokeWidth={2} />
    ) : payload.comparator === '>' ? (
      <path d={`M${cx - 6},${cy + 5} L${cx + 6},${cy + 5} L${cx},${cy - 6} Z`} fill="white" stroke={colour} strokeWidth={2} />
    ) : (
      <circle cx={cx} cy={cy} r={4.5} fill={colour} />
    );
  return (
    <g data-testid="trend-point" data-reading-id={payload.id} data-comparator={payload.comparator ?? ''}>
      {shape}
    </g>
  );
}

export function TrendChart({ analyte, trend }: { analyte: ChartAnalyte; trend: TrendPoint[] }) {
  const points: Point[] = trend
    .filter((r) => r.analyte === analyte.code && r.display.value !== null && r.display.unit === analyte.unit)
    .map((r) => ({
      id: r.id,
      t: new Date(r.at).getTime(),
      y: r.display.value as number,
      comparator: r.display.comparator,
      label: formatMeasured(r.display, analyte.decimals),
      change: r.change,
      flagged: r.flagged,
    }))
    .sort((a, b) => a.t - b.t);
  if (points.length === 0) return null;
  const interval = analyte.interval;
  const ticks = niceTicks(Math.max(...points.map((p) => p.y), interval?.high ?? 0, interval?.criticalHigh ?? 0) * 1.05);
  const top = ticks[ticks.length - 1];
  return (
    <figure className="rounded-lg border border-ink-100 bg-white p-3 shadow-sm" data-testid="trend-chart" data-analyte={analyte.code}>
      <figcaption className="mb-2 flex flex-wrap items-baseline justify-between gap-2 text-sm">
        <span className="font-semibold">
          {analyte.name} <span className="font-normal text-ink-700" title={`UCUM ${analyte.unit}`}>({unitLabel(analyte.unit)})</span>
        </span>
        <span className="text-xs text-ink-500">
          {interval && (interval.low !== null || interval.high !== null) && (
            <>
              Shaded: reference interval {interval.low ?? 0}–{interval.high ?? '∞'} {unitLabel(analyte.unit)}
              {interval.criticalHigh !== null && <> · dashed: critical {interval.criticalHigh}</>} ·{' '}
            </>
          )}
          ▼ below / ▲ above the value shown
        </span>
      </figcaption>
      <div className="h-56 w-full">
        <ResponsiveContainer width="100%" height="100%">
          <ComposedChart data={points} margin={{ top: 8, right: 16, bottom: 0, left: 0 }}>
            <CartesianGrid stroke="#e3ebf1" />
            <XAxis
              dataKey="t"
              type="number"
              scale="time"
              domain={['dataMin', 'dataMax']}
              tickFormatter={(t: number) => new Date(t).toLocaleDateString(undefined, { day: 'numeric', month: 'short' })}
              fontSize={11}
            />
            <YAxis domain={[0, top]} ticks={ticks} interval={0} fontSize={11} width={44} />
            {interval && (interval.low !== null || interval.high !== null) && (
              <ReferenceArea y1={interval.low ?? 0} y2={interval.high ?? top} fill="#e1f1e6" fillOpacity={0.8} ifOverflow="extendDomain" />
            )}
            {interval?.criticalHigh != null && <ReferenceLine y={interval.criticalHigh} stroke="#a52a2a" strokeDasharray="4 4" />}
            {interval?.criticalLow != null && <ReferenceLine y={interval.criticalLow} stroke="#a52a2a" strokeDasharray="4 4" />}
            <Tooltip
              content={({ active, payload }) => {
                const p = active && payload?.[0] ? (payload[0].payload as Point) : null;
                if (!p) return null;
                return (
                  <div className="rounded border border-ink-300 bg-white px-2 py-1 text-xs shadow">
                    <p className="font-semibold">{p.label}</p>
                    <p>{new Date(p.t).toLocaleString()}</p>
                    {p.change && <p>Change: {p.change}</p>}
                  </div>
                );
              }}
            />
            <Line dataKey="y" stroke="#4d7391" strokeWidth={1.5} isAnimationActive={false} dot={<Marker />} activeDot={false} />
          </ComposedChart>
        </ResponsiveContainer>
      </div>
    </figure>
  );
}
