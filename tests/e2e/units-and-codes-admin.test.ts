// Admin screens for results as the analyzer meant them (issue 9), in a real browser against the real
// server: a unit UCUM cannot read is listed per instrument as printed and mapped to a UCUM unit, after
// which a new reading shows on the chart in the mapped unit with the printed text kept; the abnormal-codes
// rule for a coded test is set through its form.
import { describe, expect, it } from 'vitest';
import { signInAs, appForThisFile, type RunningApp } from './support';

const running = appForThisFile();

// "x10^9/L": a common printed spelling of 10⁹ per litre (common practice, no source); UCUM writes 10*9/L.
async function postWbc(app: RunningApp, key: string, value: number): Promise<string> {
  const at = new Date();
  const response = await fetch(`${app.baseUrl}/api/bridge/readings`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', authorization: `Bearer ${app.bridgeToken}` },
    body: JSON.stringify({
      records: [
        {
          key,
          instrument: 'hema-analyzer',
          receivedAt: at.toISOString(),
          payload: { kind: 'reading', analyte: 'WBC', value, comparator: null, unit: 'x10^9/L', sampleId: null, patientRef: null, measuredAt: at.toISOString(), instrumentSerial: null, raw: `WBC ${value} x10^9/L\n` },
        },
      ],
    }),
  });
  if (response.status !== 200) throw new Error(`the bridge upload answered ${response.status}: ${await response.text()}`);
  return ((await response.json()) as { results: { id: string }[] }).results[0].id;
}

describe('units and coded-result rules in Admin', () => {
  it('maps a printed unit for later readings, shown on the chart as mapped, and saves an abnormal-codes rule', async () => {
    await postWbc(running.app, 'units-e2e-1', 9.1);
    const admin = await signInAs(running.browser, running.app.baseUrl, 'admin@fernhollow.example');
    await admin.goto('/admin');
    const row = admin.locator('#units-heading ~ table tr[data-printed-unit="x10^9/L"]');
    await row.waitFor({ timeout: 30_000 });
    expect(await row.textContent()).toContain('Haematology');
    // A unit UCUM cannot read is refused on its field, by the same schema as the server.
    await row.locator('input').fill('x10^9/L');
    await row.locator('button:has-text("Save")').click();
    await expect.poll(() => row.locator('[role=alert]').textContent(), { timeout: 30_000 }).toMatch(/not a UCUM unit/);
    await row.locator('input').fill('10*9/L');
    await row.locator('button:has-text("Save")').click();
    await expect.poll(() => row.textContent(), { timeout: 30_000 }).toMatch(/Mapped to 10\*9\/L/);

    // The abnormal-codes form: a test without settings yet gets a name; a code twice is refused on the field.
    await admin.fill('#abnormal-analyte', 'HWAG');
    await admin.fill('#abnormal-name', 'Heartworm antigen');
    await admin.fill('#abnormal-codes', 'POS, pos');
    await admin.click('form[aria-label="Abnormal codes for a test"] button[type=submit]');
    await expect.poll(() => admin.locator('#abnormal-codes').getAttribute('aria-invalid'), { timeout: 30_000 }).toBe('true');
    await admin.fill('#abnormal-codes', 'POS, WEAK POS');
    await admin.click('form[aria-label="Abnormal codes for a test"] button[type=submit]');
    await expect.poll(() => admin.locator('[aria-label="Coded-result rules"] li[data-analyte=HWAG]').textContent(), { timeout: 30_000 }).toContain('abnormal when POS, WEAK POS');

    // A reading after the mapping, on a patient: the chart shows it in 10*9/L with the printed text.
    const later = await postWbc(running.app, 'units-e2e-2', 9.2);
    const tech = await signInAs(running.browser, running.app.baseUrl, 'tech@fernhollow.example');
    await tech.evaluate(async (readingId) => {
      const patients = (await (await fetch('/api/patients?q=Juniper')).json()).patients as { id: string }[];
      const response = await fetch(`/api/readings/${readingId}/assign`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ patientId: patients[0].id }) });
      if (!response.ok) throw new Error(`assign ${response.status}`);
    }, later);
    const vet = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    await vet.goto('/patients');
    await vet.fill('#patients-q', 'Juniper');
    await vet.click('a:has-text("Juniper")');
    await vet.waitForURL('**/patients/*');
    const wbc = vet.locator(`[data-testid=patient-results] tr[data-reading-id="${later}"]`);
    await wbc.waitFor({ timeout: 30_000 });
    expect(await wbc.locator('[data-testid=unit-note]').textContent()).toBe('Printed "x10^9/L", read as 10*9/L (the clinic\'s mapping for this instrument).');
  }, 240_000);
});
