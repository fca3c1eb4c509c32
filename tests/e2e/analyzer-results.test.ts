// What the analyzer meant, in a real browser: an ASTM chemistry panel flagged by the analyzer and an HL7
// coded (qualitative) result go through the real bridge (file source, the live parser) to the server; once
// assigned, the chart shows the chemistry result's flag, band and the analyzer's own flag, and the coded
// result as a value in a timeline with its interpretation.
import fs from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { testSession } from '../../bridge/testing/astm';
import { signInAs, appForThisFile } from './support';

const running = appForThisFile();

// ASTM E1394 records (field numbers from memory): R.3 ^^^test, R.4 value, R.5 unit, R.6 lower^upper, R.7 flag, R.9 status.
const astm = testSession([
  'H|\\^&|||CHEMSIM^1.0^SIM-0002|||||||P|LIS2-A2|20261201140500',
  'P|1|PT-E2E',
  'O|1|S-E2E-1',
  'R|1|^^^ALB|10|g/L|22^40|L||F||||20261201140322|',
  'L|1|N',
]);
// HL7 v2.5 ORU^R01 with a CWE observation (OBX-2 CWE, OBX-5 code^text^system, OBX-8 A abnormal; from memory).
const hl7 = Buffer.concat([
  Buffer.from([0x0b]),
  Buffer.from(
    ['MSH|^~\\&|HEMASIM|BENCH3|LIS|CLINIC|20261201140500||ORU^R01^ORU_R01|E2E1|P|2.5', 'OBR|1||S-E2E-2|PARVO', 'OBX|1|CWE|PARVO^Parvovirus antigen||POS^Positive^L|||A|||F|||20261201140322'].join('\r') + '\r',
  ),
  Buffer.from([0x1c, 0x0d]),
]);

describe('analyzer flags and qualitative results on the chart', () => {
  it('shows an analyzer-flagged chemistry result with flag and band, and a coded result in a timeline', async () => {
    const dir = running.app.dataDir;
    fs.writeFileSync(path.join(dir, 'chem.bin'), astm);
    fs.writeFileSync(path.join(dir, 'hema.bin'), hl7);
    for (const [code, dialect, file] of [
      ['chem-analyzer', 'astm-e1394', 'chem.bin'],
      ['hema-analyzer', 'hl7v2', 'hema.bin'],
    ]) {
      running.app.spawnSide(
        ['bridge/cli.ts', 'run', '--server', running.app.baseUrl, '--instrument', code, '--dialect', dialect, '--source', `file:${path.join(dir, file)}`, '--spool', path.join(dir, `spool-${code}`)],
        { BENCHWIRE_BRIDGE_TOKEN: running.app.bridgeToken },
      );
    }
    const tech = await signInAs(running.browser, running.app.baseUrl, 'tech@fernhollow.example');
    const waiting = async () =>
      tech.evaluate(async () => {
        const list = (await (await fetch('/api/readings?status=unassigned')).json()).readings as { id: string; analyte: string }[];
        return list.filter((r) => r.analyte === 'ALB' || r.analyte === 'PARVO').map((r) => r.id);
      });
    await expect.poll(async () => (await waiting()).length, { timeout: 90_000 }).toBe(2);
    const ids = await waiting();
    await tech.evaluate(async (readingIds) => {
      const patients = (await (await fetch('/api/patients?q=Juniper')).json()).patients as { id: string }[];
      for (const id of readingIds) {
        const response = await fetch(`/api/readings/${id}/assign`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ patientId: patients[0].id }) });
        if (!response.ok) throw new Error(`assign ${response.status}`);
      }
    }, ids);

    const vet = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    await vet.goto('/patients');
    await vet.fill('#patients-q', 'Juniper');
    await vet.click('a:has-text("Juniper")');
    await vet.waitForURL('**/patients/*');
    const alb = vet.locator('[data-testid=patient-results] tr[data-reading-id]', { hasText: 'ALB' });
    await alb.waitFor({ timeout: 30_000 });
    // 10 g/L against the clinic's dog interval 23–40 g/L (defaults, from memory): L and "Below interval";
    // the analyzer's own L is shown beside it.
    await expect.poll(() => alb.locator('[data-testid=result-flag]').getAttribute('data-flag')).toBe('low');
    expect(await alb.locator('[data-testid=result-band]').textContent()).toContain('Below interval');
    expect(await alb.locator('[data-testid=analyzer-flag]').textContent()).toContain('analyzer: L');

    const parvo = vet.locator('[data-testid=patient-results] tr[data-reading-id]', { hasText: 'PARVO' });
    expect(await parvo.locator('[data-testid=result-value]').textContent()).toContain('Positive');
    expect(await parvo.locator('[data-testid=result-flag]').getAttribute('data-flag')).toBe('abnormal');
    const timeline = vet.locator('[data-testid=qualitative-timeline][data-analyte=PARVO]');
    expect(await timeline.textContent()).toMatch(/Positive\s*abnormal/);
    // No line plot for a coded result.
    expect(await vet.locator('[data-testid=trend-chart][data-analyte=PARVO]').count()).toBe(0);
    await vet.setViewportSize({ width: 390, height: 800 });
    await vet.screenshot({ path: path.join(dir, 'chart-390.png'), fullPage: true });
  }, 240_000);
});
