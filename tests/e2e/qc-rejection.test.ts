// The QC page in a real browser: a control run beyond 3 SD (Westgard 1-3s; Clin Chem
// 1981;27:493–501, from memory) arrives from the bridge, the page shows the rejection naming the rule, and
// the next patient result of that test carries a visible "QC failed" mark in Intake and on the chart.
import { describe, expect, it } from 'vitest';
import { appForThisFile, postCrpReading, signInAs } from './support';

const running = appForThisFile();

const post = (payload: Record<string, unknown>, key: string) => postCrpReading(running.app, payload, key);

describe('QC page', () => {
  it('shows a 1-3s rejection as it arrives and flags the next patient result', async () => {
    const tech = await signInAs(running.browser, running.app.baseUrl, 'tech@fernhollow.example');
    await tech.setViewportSize({ width: 1024, height: 768 });
    await tech.goto('/qc');
    const crp = tech.locator('[data-testid=qc-status] li[data-analyte=cCRP]');
    // The demo's history: accepted now, with one earlier rejected run whose point is marked on the chart.
    await expect.poll(() => crp.getAttribute('data-status'), { timeout: 30_000 }).toBe('accepted');
    expect(await tech.locator('[data-testid=lj-point][data-violation="1-3s"]').count()).toBeGreaterThanOrEqual(1);

    // CRP control level 2 has target 62 ± 3.5 mg/L (demo insert): 76 is +4 SD.
    await post({ value: 76, sampleId: 'QC-cCRP-2' }, 'e2e-qc-13s-000001');
    await expect.poll(() => crp.getAttribute('data-status'), { timeout: 30_000 }).toBe('rejected');
    const rejection = crp.locator('[data-testid=qc-rejection]').first();
    await expect.poll(() => rejection.textContent(), { timeout: 10_000 }).toMatch(/rejected: 1-3s: one control beyond 3 SD/);

    // The next patient reading of cCRP from the reader: Intake shows it marked, never as a plain result.
    const readingId = await post({ value: 14.2 }, 'e2e-qc-patient-0001');
    await tech.goto('/intake');
    const row = tech.locator(`[data-reading-id="${readingId}"]`);
    await row.waitFor({ timeout: 30_000 });
    expect(await row.locator('[data-testid=quality-mark][data-mark=qc-failed]').textContent()).toContain('QC failed');

    // Put it on a patient and open the chart: the mark is there beside the flag.
    const patient = await tech.evaluate(async () => (await (await fetch('/api/patients?q=Juniper')).json()).patients[0]);
    const assigned = await tech.evaluate(
      async ([id, patientId]) => (await fetch(`/api/readings/${id}/assign`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ patientId }) })).status,
      [readingId, patient.id] as const,
    );
    expect(assigned).toBe(200);
    await tech.goto(`/patients/${patient.id}`);
    const mark = tech.locator(`[data-testid=patient-results] tr[data-reading-id="${readingId}"] [data-testid=quality-mark][data-mark=qc-failed]`);
    await mark.waitFor({ timeout: 30_000 });
    expect(await mark.textContent()).toContain('QC failed');
    expect(await mark.isVisible()).toBe(true);

    // At 390 px wide nothing in the QC page's content sticks out sideways (wide tables scroll inside their own box).
    await tech.setViewportSize({ width: 390, height: 844 });
    await tech.goto('/qc');
    await crp.waitFor();
    await tech.locator('[data-testid=kit-lots]').waitFor();
    const sticking = await tech.evaluate(() => {
      const width = document.documentElement.clientWidth;
      const inScroller = (el: Element) => {
        for (let p = el.parentElement; p && p.tagName !== 'MAIN'; p = p.parentElement) if (getComputedStyle(p).overflowX === 'auto') return true;
        return false;
      };
      return [...document.querySelectorAll('main *')]
        .filter((el) => el.getBoundingClientRect().right > width + 1 && !inScroller(el))
        .slice(0, 5)
        .map((el) => `${el.tagName.toLowerCase()}.${(el.getAttribute('class') ?? '').split(' ').slice(0, 3).join('.')} ${Math.round(el.getBoundingClientRect().right)}`);
    });
    expect(sticking).toEqual([]);
  }, 240_000);
});
