import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { SERVER_NODE_FLAGS } from '@/lib/server-flags';

describe('server node flags', () => {
  it('npm run serve starts the server with the same flags as npm start, the bench and the browser tests', () => {
    const serve: string = JSON.parse(readFileSync('package.json', 'utf8')).scripts.serve;
    for (const flag of SERVER_NODE_FLAGS) expect(serve.split(/\s+/)).toContain(flag);
  });

  it('this Node accepts each flag (an unknown V8 flag stops node with "bad option", seen with node --v8-options)', () => {
    const out = execFileSync(process.execPath, [...SERVER_NODE_FLAGS, '-p', "require('v8').getHeapStatistics().total_heap_size > 0"], { encoding: 'utf8' });
    expect(out.trim()).toBe('true');
  });
});
