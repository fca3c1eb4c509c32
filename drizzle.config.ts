import { defineConfig } from 'drizzle-kit';

// Migrations are generated from the one schema and committed; they are applied at start-up (db/migrate.ts).
export default defineConfig({
  dialect: 'postgresql',
  schema: './db/schema.ts',
  out: './db/migrations',
  casing: 'snake_case',
});
