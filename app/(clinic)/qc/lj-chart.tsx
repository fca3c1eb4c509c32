'use client';
// Levey-Jennings chart for one control: each run's value on the time axis, the target mean with ±1, ±2 and
// ±3 SD lines, and the points involved in a rule violation drawn differently (open red square for a
// rejection, amber diamond for a 1-2s warning) with the rule named in the point's title.

export interface LjPoint {
  id: string;
  runId: string;
  at: string;
  value: number;
  z: number;
  status: 'accepted' | 'warning' | 'rejected';
  rules: string[];
  /** As the instrument sent it, when that was in another unit (value is converted to the control's). */
  sent?: { value: number; unit: string } | null;
}

const W = 640;
const H = 220;
const PAD = { left: 52, right: 12, top: 10, bottom: 24 };

export function LeveyJenningsChart({ mean, sd, unit, points, label }: { mean: number; sd: number; unit: string; points: LjPoint[]; label: string }) {
  const maxZ = Math.max(4, ...points.map((p) => Math.ceil(Math.abs(p.z))));
  const y = (z: number) => PAD.top + ((maxZ - z) / (2 * maxZ)) * (H - PAD.top - PAD.bottom);
  const x = (i: number) => PAD.left + (points.length <= 1 ? 0.5 : i / (points.length - 1)) * (W - PAD.left - PAD.right);
  const fmt = (v: number) => String(Number(v.toPrecision(4)));
  const lines = [
    { z: 3, label: '+3 SD', colour: '#a52a2a' },
    { z: 2, label: '+2 SD', colour: '#c27c0e' },
    { z: 1, label: '+1 SD', colour: '#8a9aa8' },
    { z: 0, label: 'mean', colour: '#1c3a52' },
    { z: -1, label: '−1 SD', colour: '#8a9aa8' },
    { z: -2, label: '−2 SD', colour: '#c27c0e' },
    { z: -3, label: '−3 SD', colour: '#a52a2a' },
  ];
  return (
    <figure className="space-y-1">
      <svg viewBox={`0 0 ${W} ${H}`} role="img" aria-label={label} className="h-auto w-full" data-testid="lj-chart">
        {lines.map((l) => (
          <g key={l.z}>
            <line x1={PAD.left} x2={W - PAD.right} y1={y(l.z)} y2={y(l.z)} stroke={l.colour} strokeWidth={l.z === 0 ? 1.5 : 1} strokeDasharray={l.z === 0 ? undefined : '4 3'} />
            <text x={PAD.left - 4} y={y(l.z) + 3} fontSize="9" textAnchor="end" fill="#44525e">
              {l.label} {fmt(mean + l.z * sd)}
            </text>
          </g>
        ))}
        {points.length > 1 && (
          <polyline
            points={points.map((p, i) => `${x(i)},${y(Math.max(-maxZ, Math.min(maxZ, p.z)))}`).join(' ')}
            fill="none"
            stroke="#1c3a52"
            strokeWidth={1}
            strokeOpacity={0.5}
          />
        )}
        {points.map((p, i) => {
          const cx = x(i);
          const cy = y(Math.max(-maxZ, Math.min(maxZ, p.z)));
          const title = `${new Date(p.at).toLocaleString()}: ${fmt(p.value)} ${unit} (${p.z >= 0 ? '+' : ''}${p.z.toFixed(1)} SD)${p.sent ? `, sent as ${fmt(p.sent.value)} ${p.sent.unit}` : ''}${p.rules.length ? ` — ${p.rules.join(', ')}` : ''}`;
          const rejected = p.rules.some((r) => r !== '1-2s');
          return (
            <g key={p.id} data-testid="lj-point" data-violation={p.rules.join(' ')} data-status={p.status}>
              <title>{title}</title>
              {rejected ? (
                <rect x={cx - 5} y={cy - 5} width={10} height={10} fill="white" stroke="#a52a2a" strokeWidth={2.5} />
              ) : p.rules.length ? (
                <path d={`M${cx},${cy - 6} L${cx + 6},${cy} L${cx},${cy + 6} L${cx - 6},${cy} Z`} fill="#f3d9a6" stroke="#c27c0e" strokeWidth={2} />
              ) : (
                <circle cx={cx} cy={cy} r={3.5} fill="#1c3a52" />
              )}
              {rejected && (
                <text x={cx} y={cy - 8} fontSize="9" textAnchor="middle" fill="#a52a2a" fontWeight="600">
                  {p.rules.filter((r) => r !== '1-2s').join(' ')}
                </text>
              )}
            </g>
          );
        })}
      </svg>
      <figcaption className="text-[11px] text-ink-500">
        Circle: in control · amber diamond: 1-2s warning · red square: run rejected (rule named above it). Oldest run on the left.
      </figcaption>
    </figure>
  );
}
