import 'server-only';
import { getTableColumns, getTableName, sql, type SQL } from 'drizzle-orm';
import { toSnakeCase } from 'drizzle-orm/casing';
import type { PgTable } from 'drizzle-orm/pg-core';
import type { Executor } from '@/db/client';

/**
 * A multi-row INSERT whose rows travel as one JSON parameter (INSERT … SELECT … FROM json_to_recordset).
 * A batch as a VALUES list is 200 rows × 25 columns, 5,000 parameters, that Drizzle maps one by one and the
 * database binds one by one; as one JSON document it is one parameter on PGlite and on a PostgreSQL server.
 * Every row must set the same columns (an error otherwise; columns no row sets take their defaults); values are written as JSON
 * (dates as ISO text, arrays as arrays, jsonb as it is). `tail` follows the SELECT: ON CONFLICT, RETURNING.
 */
export async function insertJsonRows<T extends PgTable, R = Record<string, unknown>>(
  tx: Executor,
  table: T,
  rows: readonly T['$inferInsert'][],
  tail: SQL = sql``,
): Promise<R[]> {
  if (!rows.length) return [];
  const columns = getTableColumns(table);
  const keys = [...new Set(rows.flatMap((row) => Object.keys(row).filter((k) => (row as Record<string, unknown>)[k] !== undefined)))];
  const names = keys.map((key) => {
    const column = columns[key];
    if (!column) throw new Error(`insertJsonRows: ${getTableName(table)} has no column ${key}`);
    return column.keyAsName ? toSnakeCase(column.name) : column.name;
  });
  const document = JSON.stringify(
    rows.map((row) => {
      const out: Record<string, unknown> = {};
      keys.forEach((key, i) => {
        const value = (row as Record<string, unknown>)[key];
        if (value === undefined) throw new Error(`insertJsonRows: every row must set ${key}`);
        out[`c${i}`] = value;
      });
      return out;
    }),
  );
  const list = sql.join(names.map((n) => sql.identifier(n)), sql`, `);
  // Short keys (c0, c1, …) keep the document small: it is parsed once per batch, with every key in every row.
  // As json, not jsonb: read once, row by row, it needs no jsonb tree built first (15–30 % less for 200 rows here).
  const short = sql.raw(names.map((_, i) => `c${i}`).join(', '));
  const typed = sql.raw(names.map((_, i) => `c${i} ${columns[keys[i]].getSQLType()}`).join(', '));
  const result = await tx.execute(sql`insert into ${table} (${list}) select ${short} from json_to_recordset(${document}::json) as x(${typed}) ${tail}`);
  return result.rows as R[];
}
