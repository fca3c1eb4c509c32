// Matching in a real browser: a technician starts a CRP test on the bench, the reader's anonymous reading
// arrives at the due time (posted as the bridge posts it), Intake ranks the right patient first with its
// reasons, the technician confirms in one click, and the veterinarian's open chart gains the point live.
// Timing check value (common practice for a single-test CRP reader, no published source): due = start + 725 s (mixing, re-insertion, incubation, measurement).
import { describe, expect, it } from 'vitest';
import { markAgainstReload, signInAs, appForThisFile, postAnonymousCrpReading } from './support';

const running = appForThisFile();


/** One reading as the bridge uploads a parsed slip with no sample ID on it. */
const anonymousReading = (value: number, at: Date) => postAnonymousCrpReading(running.app, value, at, 'e2e-match');

describe('an anonymous reading matched by timing', () => {
  it('ranks the due run first, is confirmed in one click, and lands on the open chart’s trend live', async () => {
    const tech = await signInAs(running.browser, running.app.baseUrl, 'tech@fernhollow.example');
    // The demo seed leaves two tests running; clear the bench so only this test's run is due.
    await tech.evaluate(async () => {
      const { orders } = await (await fetch('/api/orders?status=open')).json();
      for (const o of orders as { id: string }[]) {
        await fetch(`/api/orders/${o.id}/cancel`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ reason: 'clearing the bench for the test' }) });
      }
    });

    const vet = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    await vet.goto('/patients');
    await vet.fill('#patients-q', 'Biscuit');
    await vet.click('a:has-text("Biscuit")');
    await vet.waitForURL('**/patients/*');
    const biscuitId = vet.url().split('/').pop()!;
    await vet.waitForSelector('[data-testid=trend-chart][data-analyte=cCRP] [data-testid=trend-point]', { timeout: 60_000 });
    const pointsBefore = await vet.locator('[data-testid=trend-point]').count();
    expect(pointsBefore).toBe(5); // the seeded post-operative series
    const vetKept = await markAgainstReload(vet);

    // Start the test on the bench: the run began 725 s ago, so its reading is due now.
    await tech.goto('/bench');
    await tech.fill('#order-patient', 'Biscuit');
    await tech.click('[data-patient-choice="FH-1001"]', { timeout: 30_000 });
    // The demo clinic runs chemistry and blood counts too: choose the test before the reader.
    await tech.selectOption('#order-analyte', 'cCRP');
    await tech.selectOption('#order-instrument', { label: 'CRP reader (bench 1)' });
    await tech.fill('#order-started', String(725 / 60));
    await tech.click('button:has-text("Start test")');
    const card = await tech.waitForSelector('li[data-order-id]:has-text("Biscuit")', { timeout: 30_000 });
    expect(['due', 'running']).toContain(await card.getAttribute('data-phase'));

    // Intake open; the reading arrives at the due time with nothing on it to say whose it is.
    await tech.goto('/intake');
    await tech.waitForSelector('[data-live-state=live]', { timeout: 60_000 });
    const techKept = await markAgainstReload(tech);
    const readingId = await anonymousReading(42, new Date());
    const row = tech.locator(`[data-specimen-id]:has([data-reading-id="${readingId}"])`);
    await row.waitFor({ timeout: 60_000 });
    const match = row.locator('[data-testid=suggested-match]');
    await expect.poll(() => match.getAttribute('data-top-patient'), { timeout: 30_000 }).toBe(biscuitId);
    expect(await techKept()).toBe(true);
    // The reasons are there in plain words.
    await match.locator('summary').click();
    const reasons = await match.locator('[data-testid=match-reasons]').first().innerText();
    expect(reasons).toMatch(/Arrived .*due time/);
    expect(reasons).toMatch(/Started on CRP reader \(bench 1\)/);

    await row.locator('button:has-text("Confirm Biscuit")').first().click();
    await row.waitFor({ state: 'detached', timeout: 30_000 });

    // The veterinarian's chart, never reloaded, now has the new point and row.
    await vet.waitForSelector(`[data-testid=trend-point][data-reading-id="${readingId}"]`, { timeout: 30_000 });
    await vet.waitForSelector(`[data-testid=patient-results] tr[data-reading-id="${readingId}"]`, { timeout: 30_000 });
    expect(await vet.locator('[data-testid=trend-point]').count()).toBe(pointsBefore + 1);
    expect(await vetKept()).toBe(true);
    const newRow = vet.locator(`[data-testid=patient-results] tr[data-reading-id="${readingId}"]`);
    expect(await newRow.locator('[data-testid=result-flag]').getAttribute('data-flag')).toBe('high'); // 42 > 10 mg/L
    expect(await newRow.locator('[data-testid=result-change]').innerText()).toBe("at least +37.0 mg/L (at least +740%)"); // from <5.0 mg/L: a bound, not a number

    // The veterinarian signs it off; the history names the suggestion that was confirmed.
    await newRow.locator('button:has-text("Details")').click();
    await vet.waitForSelector('[data-testid=result-history] li:has-text("suggested match confirmed")', { timeout: 30_000 });
    await vet.click('[data-testid=result-detail] button:has-text("Sign off")');
    await vet.waitForSelector(`[data-testid=patient-results] tr[data-reading-id="${readingId}"] :text("Reviewed by Dr. Ilse Corvan")`, { timeout: 30_000 });
  }, 300_000);

  it('a critical result put on a patient alerts the attending veterinarian at once, in the app', async () => {
    const tech = await signInAs(running.browser, running.app.baseUrl, 'tech@fernhollow.example');
    const vet = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    await vet.goto('/patients');
    // The count appears once the open alerts have loaded (the seed leaves one open for this veterinarian).
    await vet.waitForSelector('[data-testid=alert-count]', { timeout: 30_000 });
    const before = Number((await vet.innerText('[data-testid=alert-count]')).replace(/\D/g, ''));

    // 250 mg/L is above the demo clinic's critical limit of 100 mg/L (a clinic policy placeholder, no published source).
    const readingId = await anonymousReading(250, new Date());
    const row = tech.locator(`[data-specimen-id]:has([data-reading-id="${readingId}"])`);
    await row.waitFor({ timeout: 60_000 });
    await row.locator('button:has-text("Assign…")').click();
    await tech.fill('#patient-search', 'Juniper');
    await tech.click('[role=option] button:has-text("Juniper")');
    await tech.click('button:has-text("Assign to Juniper")');
    await row.waitFor({ state: 'detached', timeout: 30_000 });

    // Juniper's attending veterinarian sees it without reloading: a notice and the open count.
    const toast = vet.locator('[data-testid=critical-toast]');
    await toast.waitFor({ timeout: 30_000 });
    expect(await toast.innerText()).toMatch(/cCRP 250\.0 mg\/L for Juniper \(FH-1002\): above the critical limit 100 mg\/L/);
    await expect.poll(() => vet.innerText('[data-testid=alert-count]'), { timeout: 30_000 }).toBe(`Critical: ${before + 1}`);

    // Listed on Review until acknowledged.
    await vet.goto('/reviews');
    const listed = vet.locator('[data-testid=open-alerts] li:has-text("Juniper")');
    await listed.waitFor({ timeout: 30_000 });
    await listed.locator('button:has-text("Acknowledge")').click();
    await listed.waitFor({ state: 'detached', timeout: 30_000 });
  }, 300_000);
});
