// In a real browser: the Review list shows a result's lab-quality mark ("QC failed" after a 1-3s rejection:
// one control beyond 3 SD, Clin Chem 1981;27:493–501, from memory) in the chart's words,
// and Admin's lab-quality settings form refuses a QC pattern the linear-time engine cannot run (RE2 syntax:
// no backreferences, github.com/google/re2/wiki/Syntax, from memory) on its field, then saves a valid one.
import { describe, expect, it } from 'vitest';
import { appForThisFile, postCrpReading, signInAs } from './support';

const running = appForThisFile();

const post = (payload: Record<string, unknown>, key: string) => postCrpReading(running.app, payload, key);

describe('lab quality in Review and Admin', () => {
  it('the Review list shows "QC failed" on a result that arrived while QC was rejected', async () => {
    // CRP control level 2 has target 62 ± 3.5 mg/L (demo insert): 76 is +4 SD, a 1-3s rejection.
    await post({ value: 76, sampleId: 'QC-cCRP-2' }, 'e2e-review-qc-000001');
    const readingId = await post({ value: 14.2 }, 'e2e-review-patient-0001');
    const vet = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    const patient = await vet.evaluate(async () => (await (await fetch('/api/patients?q=Juniper')).json()).patients[0]);
    const assigned = await vet.evaluate(
      async ([id, patientId]) => (await fetch(`/api/readings/${id}/assign`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ patientId }) })).status,
      [readingId, patient.id] as const,
    );
    expect(assigned).toBe(200);
    await vet.goto('/reviews');
    await vet.locator('label:has-text("Only my patients") input').uncheck();
    const mark = vet.locator(`[data-unreviewed-id="${readingId}"] [data-testid=quality-mark][data-mark=qc-failed]`);
    await mark.waitFor({ timeout: 30_000 });
    expect(await mark.textContent()).toContain('QC failed');
    expect(await mark.isVisible()).toBe(true);
  }, 180_000);

  it('Admin refuses a backreference on the QC pattern field with the reason, then saves valid settings', async () => {
    const admin = await signInAs(running.browser, running.app.baseUrl, 'admin@fernhollow.example');
    await admin.goto('/admin');
    const pattern = admin.locator('#qc-sample-id-pattern');
    await pattern.waitFor({ timeout: 30_000 });
    expect(await pattern.inputValue()).toBe('^QC');
    let patches = 0;
    admin.on('request', (r) => {
      if (r.url().endsWith('/api/quality/settings') && r.method() === 'PATCH') patches++;
    });
    await pattern.fill('^(QC)-\\1');
    await admin.click('[data-testid=save-quality-settings]');
    const error = admin.locator('#qc-sample-id-pattern-error');
    await error.waitFor({ timeout: 10_000 });
    expect(await error.textContent()).toMatch(/backreference .* cannot be used/);
    expect(await pattern.getAttribute('aria-invalid')).toBe('true');
    expect(patches).toBe(0);

    await pattern.fill('^(QC|CTRL)');
    await admin.fill('#bridge-offline-minutes', '10');
    await admin.fill('#kit-warn-days', '45');
    await admin.click('[data-testid=save-quality-settings]');
    await admin.locator('text=Lab-quality settings saved.').waitFor({ timeout: 15_000 });
    expect(patches).toBe(1);
    await admin.reload();
    await pattern.waitFor({ timeout: 30_000 });
    await expect.poll(() => pattern.inputValue(), { timeout: 10_000 }).toBe('^(QC|CTRL)');
    expect(await admin.locator('#bridge-offline-minutes').inputValue()).toBe('10');
    expect(await admin.locator('#kit-warn-days').inputValue()).toBe('45');
  }, 180_000);
});
