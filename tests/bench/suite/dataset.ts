// The loaded data set the read paths are measured on: the demo clinic plus 20,000 patients (half with
// an owner), 200,000 readings over about a year (one patient with 1,000 results), their assignments,
// sign-offs for all but the newest few thousand, an audit trail (received + assigned per reading), and a
// handful of open tests on the bench. Invented data, built with set-based SQL so it takes seconds.
import fs from 'node:fs';
import path from 'node:path';
import { sql } from 'drizzle-orm';
import { openDatabase } from '@/db/client';
import { seedDemoClinic } from '@/db/seed';

export const DATASET = { patients: 20_000, readings: 200_000, heavyPatientResults: 1_000, unassigned: 150, unreviewed: 3_000, openOrders: 40 };
/** Bumped whenever the generator changes, so a cached data set is rebuilt. */
const VERSION = 2;
const MARKER = 'benchwire-dataset.json';

export const HEAVY_PATIENT = 'BX-000001';

export function datasetReady(dir: string): boolean {
  try {
    const marker = JSON.parse(fs.readFileSync(path.join(dir, MARKER), 'utf8'));
    return marker.version === VERSION;
  } catch {
    return false;
  }
}

/** Builds the data set into dir/pgdata (a DATA_DIR the server can open); returns seconds taken. */
export async function buildDataset(dir: string, log: (s: string) => void = console.log): Promise<number> {
  const started = Date.now();
  fs.rmSync(dir, { recursive: true, force: true });
  fs.mkdirSync(dir, { recursive: true });
  const database = await openDatabase(path.join(dir, 'pgdata'));
  const { db } = database;
  const { clinicId, bridgeToken } = await seedDemoClinic(db);
  const one = async <T>(query: ReturnType<typeof sql>) => (await db.execute(query)).rows[0] as T;
  const { bridge } = await one<{ bridge: string }>(sql`select id as bridge from bridges where clinic_id = ${clinicId} limit 1`);
  const { vet, vet2, tech } = await one<{ vet: string; vet2: string; tech: string }>(sql`
    select (select id from staff_users where email = 'vet@fernhollow.example') as vet,
           (select id from staff_users where email = 'vet2@fernhollow.example') as vet2,
           (select id from staff_users where email = 'tech@fernhollow.example') as tech`);
  const n = DATASET;
  // Bulk load: the rows are consistent by construction, so foreign-key triggers need not check each one.
  await db.execute(sql`set session_replication_role = replica`);
  const step = async (what: string, query: ReturnType<typeof sql>) => {
    const t = Date.now();
    await db.execute(query);
    log(`[dataset] ${what} (${((Date.now() - t) / 1000).toFixed(1)} s)`);
  };

  await step('owners', sql`
    insert into owners (clinic_id, name, phone)
    select ${clinicId}, 'Keeper ' || g, '+44 7700 ' || lpad((g % 1000000)::text, 6, '0') from generate_series(1, ${n.patients / 2}) g`);
  await step('patients', sql`
    insert into patients (clinic_id, record_number, name, species, sex, attending_vet_id, owner_id)
    select ${clinicId}, 'BX-' || lpad(g::text, 6, '0'),
           (array['Ash','Bo','Cass','Dot','Echo','Fig','Gus','Hazel','Iggy','Jet','Kit','Lumo','Mabel','Nox','Olive','Pip'])[1 + g % 16] || ' ' || g,
           (array['dog','dog','cat','dog','cat','rabbit'])[1 + g % 6]::species, 'unknown',
           case when g % 2 = 0 then ${vet}::uuid else ${vet2}::uuid end,
           o.id
    from generate_series(1, ${n.patients}) g
    left join owners o on o.clinic_id = ${clinicId} and o.name = 'Keeper ' || ((g + 1) / 2) and g % 4 <> 0`);
  await db.execute(sql`create temp table bench_pairs as
    select (row_number() over (order by i.code, a.analyte)) - 1 as k, i.id as instrument_id, i.code, i.serial_number, a.analyte, s.unit
    from instruments i cross join unnest(i.analytes) a(analyte)
    join analyte_settings s on s.clinic_id = i.clinic_id and s.code = a.analyte
    where i.clinic_id = ${clinicId}`);
  await db.execute(sql`create temp table bench_patients as
    select substring(record_number from 4)::int as n, id from patients where clinic_id = ${clinicId} and record_number like 'BX-%'`);
  // g = 1 … readings, oldest first, three minutes apart; the newest are waiting in Intake.
  await step('readings', sql`
    with pairs as (select count(*) as c from bench_pairs),
    rows as (
      select g,
             case when g > ${n.readings - n.unassigned} then 'unassigned' when g % 400 = 0 then 'voided' else 'assigned' end as status,
             case when g % 200 = 1 then 1 else 2 + (g % ${n.patients - 1}) end as patient_n,
             now() - (${n.readings} - g) * interval '3 minutes' as at,
             round((1 + (g * 7919 % 1000) / 10.0)::numeric, 1)::float8 as value
      from generate_series(1, ${n.readings}) g
    )
    insert into readings (clinic_id, bridge_id, idempotency_key, instrument_id, instrument_code, instrument_serial, analyte, value, unit,
                          sample_id, measured_at, received_at, stored_at, raw, status, patient_id)
    select ${clinicId}, ${bridge}, 'bench-' || r.g, p.instrument_id, p.code, p.serial_number, p.analyte, r.value, p.unit,
           case when r.g % 3 = 0 then 'S-' || r.g end, r.at - interval '1 minute', r.at, r.at,
           'RESULT    ' || r.value || ' ' || p.unit || E'\r\n', r.status::reading_status,
           case when r.status = 'assigned' then bp.id end
    from rows r cross join pairs
    join bench_pairs p on p.k = r.g % pairs.c
    left join bench_patients bp on bp.n = r.patient_n`);
  await step('assignments', sql`
    insert into result_assignments (clinic_id, reading_id, patient_id, assigned_by, assigned_at, method)
    select clinic_id, id, patient_id, ${tech}, received_at + interval '2 minutes', 'manual'
    from readings where clinic_id = ${clinicId} and idempotency_key like 'bench-%' and status = 'assigned'`);
  await step('sign-offs', sql`
    insert into result_reviews (clinic_id, reading_id, assignment_id, reviewer_id, kind, at)
    select a.clinic_id, a.reading_id, a.id, ${vet}, 'reviewed', a.assigned_at + interval '1 hour'
    from result_assignments a join readings r on r.id = a.reading_id
    where r.idempotency_key like 'bench-%' and substring(r.idempotency_key from 7)::int <= ${n.readings - n.unassigned - n.unreviewed}`);
  // The trigger that keeps reviewed_at is off during the bulk load (replica role): set it here.
  await step('reviewed_at', sql`
    update result_assignments a set reviewed_at = r.at from result_reviews r
    where r.assignment_id = a.id and r.kind = 'reviewed' and a.clinic_id = ${clinicId}`);
  await step('audit trail', sql`
    insert into audit_events (clinic_id, at, actor_bridge_id, actor_user_id, action, entity_type, entity_id, details)
    select clinic_id, received_at, ${bridge}::uuid, null::uuid, 'reading.received', 'reading', id::text,
           jsonb_build_object('instrument', instrument_code, 'analyte', analyte, 'sampleId', sample_id)
    from readings where clinic_id = ${clinicId} and idempotency_key like 'bench-%'
    union all
    select a.clinic_id, a.assigned_at, null, ${tech}::uuid, 'reading.assigned', 'reading', a.reading_id::text,
           jsonb_build_object('patientId', a.patient_id, 'method', 'manual')
    from result_assignments a join readings r on r.id = a.reading_id where r.idempotency_key like 'bench-%'`);
  await step('open tests on the bench', sql`
    insert into lab_orders (clinic_id, patient_id, analyte, instrument_id, sample_type, sample_id, ordered_by, started_by, started_at, due_at, status)
    select ${clinicId}, bp.id, p.analyte, p.instrument_id, 'serum', case when g % 2 = 0 then 'BS-' || g end, ${vet}, ${tech},
           now() - interval '5 minutes', now() + interval '5 minutes', 'open'
    from generate_series(1, ${n.openOrders}) g
    join bench_pairs p on p.k = g % (select count(*) from bench_pairs)
    join bench_patients bp on bp.n = 100 + g * 37`);
  await db.execute(sql`set session_replication_role = default`);
  await step('vacuum analyze', sql`vacuum analyze`);
  await database.close();
  const seconds = (Date.now() - started) / 1000;
  fs.writeFileSync(path.join(dir, 'demo-bridge-token'), bridgeToken, { mode: 0o600 });
  fs.writeFileSync(path.join(dir, MARKER), `${JSON.stringify({ version: VERSION, ...DATASET, builtAt: new Date().toISOString(), seconds }, null, 2)}\n`);
  return seconds;
}
