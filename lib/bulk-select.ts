import 'server-only';
import { Column, is, SQL, sql, type DriverValueDecoder, type SQLWrapper } from 'drizzle-orm';
import type { PgSelectBuilder, SelectedFields } from 'drizzle-orm/pg-core';
import type { Executor } from '@/db/client';

type Field = Column | SQL | SQL.Aliased;
/** A flat selection, as Drizzle's select() takes it. */
type Fields = Record<string, Field> & SelectedFields;

/**
 * Runs a Drizzle select and brings its rows back as one JSON document (json_agg), then decodes each value
 * as Drizzle would. PGlite copies every field of every row out of WebAssembly memory and Drizzle maps each
 * one: for a 1,000-result chart of 30 columns that was most of the query's time; one JSON value is parsed
 * natively. The read counterpart of insertJsonRows (lib/bulk-insert.ts).
 *
 * `fields` is a flat selection (columns and SQL values); `build` adds FROM, WHERE, ORDER BY and LIMIT. Order is kept: PostgreSQL feeds a plain aggregate
 * the rows of a sorted subquery in that order when the outer query does nothing else (PostgreSQL manual,
 * "Aggregate Expressions": "supplying the input values from a sorted subquery will usually work … this
 * approach can fail if the outer query level contains additional processing, such as a join").
 */
export async function selectJsonRows<F extends Fields, Q extends SQLWrapper & PromiseLike<unknown[]>>(
  tx: Executor,
  fields: F,
  build: (select: PgSelectBuilder<F>) => Q,
): Promise<Awaited<Q>> {
  const query = build(tx.select(fields));
  const entries = Object.entries(fields);
  for (const [key, field] of entries) {
    if (!is(field, Column) && !is(field, SQL) && !is(field, SQL.Aliased)) throw new Error(`selectJsonRows: ${key} is not a column or an SQL value (nested selections are not supported)`);
  }
  const names = entries.map((_, i) => `c${i}`);
  const result = await tx.execute(
    sql`select coalesce(json_agg(json_build_array(${sql.raw(names.join(', '))})), '[]'::json) as rows from (${query}) as t(${sql.raw(names.join(', '))})`,
  );
  const first = result.rows[0] as { rows: unknown[][] | string } | undefined;
  const rows = typeof first?.rows === 'string' ? (JSON.parse(first.rows) as unknown[][]) : (first?.rows ?? []);
  const decoders = entries.map(([key, field]) => [key, decoderOf(field)] as const);
  return rows.map((values) => {
    const row: Record<string, unknown> = {};
    for (let i = 0; i < decoders.length; i++) {
      const value = values[i];
      row[decoders[i][0]] = value === null ? null : decoders[i][1](value);
    }
    return row;
  }) as Awaited<Q>;
}

function decoderOf(field: Field): (value: unknown) => unknown {
  if (is(field, Column)) {
    // JSON values arrive parsed already; a jsonb string must not be parsed a second time.
    if (field.columnType === 'PgJsonb' || field.columnType === 'PgJson') return (v) => v;
    return (v) => field.mapFromDriverValue(v);
  }
  // Drizzle keeps an SQL value's decoder (sql<T>`…`.mapWith) on a field it marks internal.
  const withDecoder = (is(field, SQL.Aliased) ? field.sql : field) as unknown as { decoder: DriverValueDecoder<unknown, unknown> };
  const decoder = withDecoder.decoder;
  return (v) => decoder.mapFromDriverValue(v);
}

/**
 * `column IN (values)` with the values as one JSON parameter. Drizzle's inArray sends one parameter per
 * value: for a 1,000-result chart that is 1,000 parameters to bind and plan on every lookup keyed by its ids.
 * For a handful of values inArray plans better (the planner sees the list; here it sees a subquery).
 */
export function inJsonList(column: Column, values: readonly (string | number)[]): SQL {
  return sql`${column} in (select jsonb_array_elements_text(${JSON.stringify(values)}::jsonb)::${sql.raw(column.getSQLType())})`;
}
