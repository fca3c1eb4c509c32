// The production server when whatever reads its log goes away (a closed terminal, a stopped log pipe):
// it keeps serving, and it still stops on SIGTERM (the signal a service manager sends; POSIX: a write to
// a pipe with no reader fails with EPIPE). Before, each failed log write was logged again, at full CPU,
// and the server never stopped.
import { afterAll, describe, expect, it } from 'vitest';
import { startApp, type RunningApp } from './support';

let app: RunningApp | undefined;
afterAll(async () => app?.stop());

describe('the server without a log reader', () => {
  it('answers, and stops on SIGTERM, after its stdout and stderr pipes are closed', async () => {
    app = await startApp();
    app.server.stdout?.destroy();
    app.server.stderr?.destroy();
    // Requests that write to the log: a malformed bridge body is logged as refused, then the shutdown line.
    for (let i = 0; i < 3; i++) await fetch(`${app.baseUrl}/api/bridge/readings`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: '{' });
    expect((await fetch(`${app.baseUrl}/api/health`)).ok).toBe(true);
    const server = app.server;
    const exited = new Promise<boolean>((resolve) => {
      server.once('exit', () => resolve(true));
      setTimeout(() => resolve(false), 20_000).unref();
    });
    server.kill('SIGTERM');
    expect(await exited).toBe(true);
  }, 150_000);
});
