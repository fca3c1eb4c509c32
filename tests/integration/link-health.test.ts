// A bridge's heartbeat reports each instrument's link; the bench sees the ones that need a person.
import { beforeAll, describe, expect, it } from 'vitest';
import { body } from './support';
import { POST as heartbeat } from '@/app/api/bridge/heartbeat/route';
import { GET as instrumentHealth } from '@/app/api/instruments/health/route';
import { seededDatabase } from '../helpers/db';
import { request, signIn } from '../helpers/http';

let token: string;
let tech: string;
beforeAll(async () => {
  ({ bridgeToken: token } = await seededDatabase());
  tech = await signIn('tech@fernhollow.example');
});

describe('instrument link health', () => {
  it('lists a noisy or disconnected link for technicians, and not the healthy ones', async () => {
    const beat = await heartbeat(
      request('/api/bridge/heartbeat', {
        token,
        body: {
          spoolDepth: 0,
          sources: [
            { instrument: 'crp-reader', state: 'open', bytesReceived: 1200 },
            { instrument: 'chem-analyzer', state: 'open', warnings: ['looks like the wrong baud rate or parity (64% unreadable bytes)'] },
            { instrument: 'hema-analyzer', state: 'closed', detail: 'no analyzer connected' },
          ],
        },
      }),
      undefined,
    );
    expect(beat.status).toBe(200);
    const { instruments } = await body(await instrumentHealth(request('/api/instruments/health', { cookie: tech }), undefined));
    expect(instruments.map((i: { code: string; problems: string[] }) => [i.code, i.problems])).toEqual(
      expect.arrayContaining([
        ['chem-analyzer', ['looks like the wrong baud rate or parity (64% unreadable bytes)']],
        ['hema-analyzer', ['no analyzer connected']],
      ]),
    );
    expect(instruments.map((i: { code: string }) => i.code)).not.toContain('crp-reader');
  });

  it('is for signed-in staff only', async () => {
    expect((await instrumentHealth(request('/api/instruments/health'), undefined)).status).toBe(401);
  });
});
