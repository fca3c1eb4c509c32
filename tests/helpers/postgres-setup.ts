// vitest globalSetup for the PostgreSQL pass (BENCHWIRE_TEST_POSTGRES=1, see vitest.config.ts): one
// server for the run, a template database migrated once by the app's own migrator, and every test file's
// database a copy of it (CREATE DATABASE … TEMPLATE, tests/helpers/db.ts).
import pg from 'pg';
import type { TestProject } from 'vitest/node';
import { openServerDatabase } from '@/db/client';
import { startPostgres } from './postgres';

export const TEMPLATE_DATABASE = 'benchwire_template';

declare module 'vitest' {
  export interface ProvidedContext {
    postgres: { adminUrl: string; template: string } | undefined;
  }
}

export default async function setup(project: TestProject) {
  const server = await startPostgres();
  try {
    const admin = new pg.Client({ connectionString: server.adminUrl });
    await admin.connect();
    await admin.query(`create database ${TEMPLATE_DATABASE}`);
    await admin.end();
    const template = await openServerDatabase(server.urlFor(TEMPLATE_DATABASE), { poolSize: 2 });
    await template.close();
  } catch (error) {
    server.stop();
    throw error;
  }
  project.provide('postgres', { adminUrl: server.adminUrl, template: TEMPLATE_DATABASE });
  console.log(`[postgres] test server ready (${server.adminUrl})`);
  return () => server.stop();
}
