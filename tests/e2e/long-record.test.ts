// A long record in a real browser: the chart's table lists the newest 100 results and loads the next 100
// on "Show older results", by keyboard, keeping the focus on the button while more remain; the trend draws
// every result from the first load. 230 invented CRP results, each from its own sample (one run per tube,
// common practice, no source), uploaded as the bridge uploads them and put on one patient by a technician.
import { describe, expect, it } from 'vitest';
import { signInAs, appForThisFile } from './support';

const running = appForThisFile();
const COUNT = 230;

async function upload(from: number, to: number) {
  const start = Date.now() - COUNT * 3_600_000;
  const records = [];
  for (let i = from; i < to; i++) {
    const at = new Date(start + i * 3_600_000).toISOString();
    const value = 5 + (i % 40);
    records.push({
      key: `long-record-${String(i).padStart(4, '0')}`,
      instrument: 'crp-reader',
      receivedAt: at,
      payload: { kind: 'reading', analyte: 'cCRP', value, comparator: null, unit: 'mg/L', sampleId: `LR-${i}`, patientRef: null, measuredAt: at, raw: `RESULT ${value} mg/L\n` },
    });
  }
  const response = await fetch(`${running.app.baseUrl}/api/bridge/readings`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', authorization: `Bearer ${running.app.bridgeToken}` },
    body: JSON.stringify({ records }),
  });
  if (response.status !== 200) throw new Error(`upload ${response.status}: ${await response.text()}`);
  return ((await response.json()) as { results: { id: string }[] }).results.map((r) => r.id);
}

describe('a long record', () => {
  it('lists the newest 100 results, loads older ones a page at a time by keyboard, and draws every result', async () => {
    const ids = [...(await upload(0, 120)), ...(await upload(120, COUNT))];
    const tech = await signInAs(running.browser, running.app.baseUrl, 'tech@fernhollow.example');
    const patientId = await tech.evaluate(async (readingIds) => {
      const patients = (await (await fetch('/api/patients?q=Juniper')).json()).patients as { id: string }[];
      for (const id of readingIds) {
        const response = await fetch(`/api/readings/${id}/assign`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ patientId: patients[0].id }) });
        if (!response.ok) throw new Error(`assign ${response.status}`);
      }
      return patients[0].id;
    }, ids);

    const vet = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    const chart = (await (await vet.request.get(`${running.app.baseUrl}/api/patients/${patientId}/results?limit=100000`)).json()) as { total: number; results: { analyte: string }[] };
    expect(chart.total).toBeGreaterThanOrEqual(COUNT);
    const crp = chart.results.filter((r) => r.analyte === 'cCRP').length;

    await vet.goto(`/patients/${patientId}`);
    const rows = vet.locator('[data-testid=patient-results] tbody tr[data-reading-id]');
    await rows.first().waitFor({ timeout: 30_000 });
    expect(await rows.count()).toBe(100);
    expect(await vet.getByTestId('results-shown').textContent()).toBe(`Newest 100 of ${chart.total} results shown.`);
    // The trend has every result, not only the 100 listed.
    await expect.poll(() => vet.locator('[data-testid=trend-chart][data-analyte=cCRP] [data-testid=trend-point]').count(), { timeout: 30_000 }).toBe(crp);

    const older = vet.getByRole('button', { name: /older results/ });
    await older.focus();
    await vet.keyboard.press('Enter');
    await expect.poll(() => rows.count(), { timeout: 30_000 }).toBe(200);
    // More remain: the focus is still on the button, so Enter again loads the rest.
    expect(await vet.evaluate(() => document.activeElement?.textContent)).toMatch(/older results/);
    await vet.keyboard.press('Enter');
    await expect.poll(() => rows.count(), { timeout: 30_000 }).toBe(chart.total);
    expect(await vet.getByTestId('results-shown').count()).toBe(0);
  }, 240_000);
});
