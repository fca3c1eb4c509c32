import { z } from 'zod';

// The recorded day `npm run match -- replay FILE.json` reads. Field names are the file's; every message
// names the field it is about (the path is printed beside it).

const id = z.string().trim().min(1, 'must be a non-empty string').max(200);
const instant = z.iso.datetime({ offset: true, message: 'must be an ISO 8601 date-time with a time zone, e.g. 2026-12-02T09:00:00Z' });

export const replayDaySchema = z
  .object({
    timeZone: z.string().trim().min(1, 'must name an IANA time zone, e.g. UTC or Europe/Berlin').max(64),
    instruments: z.array(z.object({ id, name: z.string().trim().min(1, 'must be a non-empty string').max(200), channels: z.number().int('must be a whole number').min(1, 'must be at least 1').max(64) })),
    patients: z.array(z.object({ id, species: z.enum(['dog', 'cat', 'rabbit', 'ferret', 'bird', 'reptile', 'other'], 'must be one of dog, cat, rabbit, ferret, bird, reptile, other') })),
    orders: z.array(z.object({ id, patientId: id, analyte: id, instrumentId: id.nullable(), startedAt: instant })),
    readings: z.array(
      z.object({
        id,
        instrumentId: id,
        analyte: id,
        sampleId: z.string().max(200).nullable(),
        patientRef: z.string().max(200).nullable(),
        arrivedAt: instant,
        assignedOrderId: id.nullable(),
      }),
    ),
  })
  .superRefine((day, ctx) => {
    const valid = (tz: string) => {
      try {
        new Intl.DateTimeFormat('en', { timeZone: tz });
        return true;
      } catch {
        return false;
      }
    };
    if (!valid(day.timeZone)) ctx.addIssue({ code: 'custom', path: ['timeZone'], message: `"${day.timeZone}" is not a time zone` });
    const unique = (list: { id: string }[], field: string) => {
      const seen = new Set<string>();
      list.forEach((x, i) => {
        if (seen.has(x.id)) ctx.addIssue({ code: 'custom', path: [field, i, 'id'], message: `"${x.id}" appears twice in ${field}` });
        seen.add(x.id);
      });
      return seen;
    };
    const instruments = unique(day.instruments, 'instruments');
    const patients = unique(day.patients, 'patients');
    const orders = unique(day.orders, 'orders');
    unique(day.readings, 'readings');
    day.orders.forEach((o, i) => {
      if (!patients.has(o.patientId)) ctx.addIssue({ code: 'custom', path: ['orders', i, 'patientId'], message: `names no patient in patients: "${o.patientId}"` });
      if (o.instrumentId !== null && !instruments.has(o.instrumentId))
        ctx.addIssue({ code: 'custom', path: ['orders', i, 'instrumentId'], message: `names no instrument in instruments: "${o.instrumentId}"` });
    });
    const assigned = new Map<string, number>();
    day.readings.forEach((r, i) => {
      if (!instruments.has(r.instrumentId)) ctx.addIssue({ code: 'custom', path: ['readings', i, 'instrumentId'], message: `names no instrument in instruments: "${r.instrumentId}"` });
      if (r.assignedOrderId === null) return;
      if (!orders.has(r.assignedOrderId)) {
        ctx.addIssue({ code: 'custom', path: ['readings', i, 'assignedOrderId'], message: `names no order in orders: "${r.assignedOrderId}"` });
      } else if (assigned.has(r.assignedOrderId)) {
        ctx.addIssue({ code: 'custom', path: ['readings', i, 'assignedOrderId'], message: `order "${r.assignedOrderId}" already has reading ${assigned.get(r.assignedOrderId)}: one run gives one reading` });
      } else {
        assigned.set(r.assignedOrderId, i);
      }
    });
  });
export type ReplayDayInput = z.infer<typeof replayDaySchema>;
