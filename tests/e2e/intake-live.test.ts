// The foundation's whole path in a real browser: simulated analyzer → real bridge → server → live Intake →
// a technician assigns → a veterinarian's open chart shows the result without a reload.
import { describe, expect, it } from 'vitest';
import { freePort, markAgainstReload, signInAs, appForThisFile } from './support';

const running = appForThisFile();

describe('a reading from the bench reaches the chart live', () => {
  it('arrives in Intake without reload, is assigned, and appears on the open chart', async () => {
    const tech = await signInAs(running.browser, running.app.baseUrl, 'tech@fernhollow.example');
    await expect.poll(() => tech.textContent('[data-testid=unassigned-count]'), { timeout: 30_000 }).toBe('0');
    const techKept = await markAgainstReload(tech);

    const vet = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    await vet.goto('/patients');
    await vet.fill('#patients-q', 'Juniper');
    await vet.click('a:has-text("Juniper")');
    await vet.waitForURL('**/patients/*');
    await vet.waitForSelector('text=No results on this record yet.');
    const vetKept = await markAgainstReload(vet);

    // The analyzer and the bridge start only now, so whatever appears must have come in live.
    const analyzerPort = await freePort();
    running.app.spawnSide(['bridge/cli.ts', 'simulate', '--listen', String(analyzerPort), '--every', '2', '--seed', '11']);
    running.app.spawnSide(
      [
        'bridge/cli.ts', 'run',
        '--server', running.app.baseUrl,
        '--instrument', 'crp-reader',
        '--dialect', 'plain-printout',
        '--source', `tcp://127.0.0.1:${analyzerPort}`,
        '--spool', `${running.app.dataDir}/e2e-spool`,
      ],
      { BENCHWIRE_BRIDGE_TOKEN: running.app.bridgeToken },
    );

    const row = await tech.waitForSelector('[data-specimen-id]:has([data-reading-id])', { timeout: 90_000 }).catch((error) => {
      throw new Error(`${error.message}\n--- processes ---\n${running.app.logs()}`);
    });
    expect(await techKept()).toBe(true);
    const readingId = await row.$eval('[data-reading-id]', (el) => el.getAttribute('data-reading-id'));
    expect(readingId).toMatch(/^[0-9a-f-]{36}$/);
    // The printed value shows with its unit (the invented slip prints mg/L).
    expect(await row.$eval('[data-testid=reading-value]', (el) => el.textContent)).toMatch(/mg\/L$/);

    await (await row.$('button:has-text("Assign…")'))!.click();
    await tech.fill('#patient-search', 'Juniper');
    await tech.click('[role=option] button:has-text("Juniper")');
    await tech.click('button:has-text("Assign to Juniper")');
    await tech.waitForSelector(`[data-specimen-id] [data-reading-id="${readingId}"]`, { state: 'detached', timeout: 30_000 });

    await vet.waitForSelector(`[data-testid=patient-results] tr[data-reading-id="${readingId}"]`, { timeout: 30_000 });
    expect(await vetKept()).toBe(true);

    // The audit trail names who assigned it (through the API, as the technician).
    const detail = await tech.evaluate(async (id) => (await fetch(`/api/readings/${id}`)).json(), readingId);
    const actions = detail.reading.history.map((h: { action: string; actorName: string | null }) => [h.action, h.actorName]);
    expect(actions).toEqual(
      expect.arrayContaining([
        ['reading.received', null],
        ['reading.assigned', 'Pia Hartwell'],
      ]),
    );
  }, 240_000);
});
