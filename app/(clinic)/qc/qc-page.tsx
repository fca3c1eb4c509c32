'use client';
import { useActor } from '../actor';
import { IntervalVerification } from './verification';
import { KitLots } from './kit-lots';
import { TemperatureLog } from './conditions';
import { QcBoard, useQc } from './qc-board';

export function QcPage() {
  const { data } = useQc();
  const { role } = useActor();
  const canManage = role === 'admin' || role === 'technician';
  return (
    <div className="space-y-10">
      <nav aria-label="On this page" className="flex flex-wrap gap-3 text-sm">
        <a className="underline" href="#qc-status-heading">QC status</a>
        <a className="underline" href="#controls-heading">Controls</a>
        <a className="underline" href="#sigma-heading">Sigma</a>
        <a className="underline" href="#kits-heading">Kit lots</a>
        <a className="underline" href="#temperature-heading">Room temperature</a>
        <a className="underline" href="#verification">Interval verification</a>
      </nav>
      <QcBoard />
      {data && <KitLots data={data} canManage={canManage} />}
      <TemperatureLog canManage={canManage} />
      {data && <IntervalVerification data={data} canManage={canManage} />}
    </div>
  );
}
