import fs from 'node:fs';
import type { TestProject } from 'vitest/node';
import { ServerProcess, tempDir } from './harness';

// One seeded demo clinic (its bridge token and crp-reader instrument) for the whole run; each scenario
// starts from a copy, so migrations and the seed run once.
let template: string | undefined;

export async function setup(project: TestProject) {
  template = tempDir('template');
  const server = await ServerProcess.start(template, ['--seed-demo']);
  await server.kill('SIGTERM');
  project.provide('faultsTemplate', template);
}

export function teardown() {
  if (template) fs.rmSync(template, { recursive: true, force: true });
}

declare module 'vitest' {
  export interface ProvidedContext {
    faultsTemplate: string;
  }
}
