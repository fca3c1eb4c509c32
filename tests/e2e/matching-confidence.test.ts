// Confidence in a real browser: two runs started together with no reader named give a "choose between
// these" row with nothing preselected; a lone on-time run gives a preselected confident match. The assign
// dialog opens with the focus in an empty patient search and hands the focus back to the row.
// Timing (common practice for a single-test CRP reader, no published source): due = start + 725 s.
import { describe, expect, it } from 'vitest';
import { appForThisFile, postAnonymousCrpReading, signInAs } from './support';

const running = appForThisFile();

/** One reading as the bridge uploads a parsed slip with no sample ID on it. */
const anonymousReading = (value: number, at: Date) => postAnonymousCrpReading(running.app, value, at, 'e2e-confidence');

describe('suggestions a technician can trust', () => {
  it('near-simultaneous runs: choose between these, nothing preselected; a lone on-time run: preselected, one-click confirm', async () => {
    const tech = await signInAs(running.browser, running.app.baseUrl, 'tech@fernhollow.example');
    await tech.setViewportSize({ width: 1024, height: 768 });
    const clearBench = () =>
      tech.evaluate(async () => {
        const { orders } = await (await fetch('/api/orders?status=open')).json();
        for (const o of orders as { id: string }[]) {
          await fetch(`/api/orders/${o.id}/cancel`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ reason: 'clearing the bench for the test' }) });
        }
      });
    await clearBench();
    const start = async (name: string, record: string, reader: string | null) => {
      await tech.goto('/bench');
      await tech.fill('#order-patient', name);
      await tech.click(`[data-patient-choice="${record}"]`, { timeout: 30_000 });
      // The demo clinic runs chemistry and blood counts too: choose the test first.
      await tech.selectOption('#order-analyte', 'cCRP');
      if (reader) await tech.selectOption('#order-instrument', { label: reader });
      await tech.fill('#order-started', String(725 / 60));
      await tech.click('button:has-text("Start test")');
      await tech.waitForSelector(`li[data-order-id]:has-text("${name}")`, { timeout: 30_000 });
    };

    // Two dogs' runs started within seconds of each other, no reader named.
    await start('Biscuit', 'FH-1001', null);
    await start('Juniper', 'FH-1002', null);
    await tech.goto('/intake');
    await tech.waitForSelector('[data-live-state=live]', { timeout: 60_000 });
    const first = await anonymousReading(12, new Date());
    const row = tech.locator(`[data-specimen-id]:has([data-reading-id="${first}"])`);
    await row.waitFor({ timeout: 60_000 });
    const match = row.locator('[data-testid=suggested-match]');
    await expect.poll(() => match.getAttribute('data-confident'), { timeout: 30_000 }).toBe('false');
    expect(await match.innerText()).toMatch(/Choose between these/i);
    const choices = match.locator('[data-testid=match-choice]');
    expect(await choices.count()).toBe(2);
    for (const text of await choices.allInnerTexts()) expect(text).toMatch(/%/); // each with its probability
    expect(await row.locator('[data-testid=confirm-suggestion]').count()).toBe(0);

    // The dialog: focus in an empty search, nobody chosen; Escape hands the focus back to the row.
    await row.locator('button[data-action=assign]').click();
    await tech.waitForSelector('dialog[open] #patient-search');
    expect(await tech.evaluate(() => document.activeElement?.id)).toBe('patient-search');
    expect(await tech.inputValue('#patient-search')).toBe('');
    expect(await tech.locator('dialog[open] button:has-text("Choose a patient")').isDisabled()).toBe(true);
    await tech.keyboard.press('Escape');
    await tech.waitForSelector('dialog[open]', { state: 'detached' });
    await expect.poll(() => tech.evaluate(() => document.activeElement?.closest('[data-specimen-id]')?.querySelector('[data-reading-id]')?.getAttribute('data-reading-id') ?? null)).toBe(first);

    // The technician checks the tube and picks; then a lone run, on the reader that sent the reading, on time.
    await match.locator('button:has-text("It is Biscuit")').click();
    await row.waitFor({ state: 'detached', timeout: 30_000 });
    await clearBench();
    await start('Moss', 'FH-1003', 'CRP reader (bench 1)');
    await tech.goto('/intake');
    await tech.waitForSelector('[data-live-state=live]', { timeout: 60_000 });
    const second = await anonymousReading(8, new Date());
    const lone = tech.locator(`[data-specimen-id]:has([data-reading-id="${second}"])`);
    await lone.waitFor({ timeout: 60_000 });
    const sure = lone.locator('[data-testid=suggested-match]');
    await expect.poll(() => sure.getAttribute('data-confident'), { timeout: 30_000 }).toBe('true');
    expect(await sure.locator('[data-testid=match-probability]').innerText()).toBe('≥ 99.9 %');
    // Preselected in the dialog too.
    await lone.locator('button[data-action=assign]').click();
    await tech.waitForSelector('dialog[open] #patient-search');
    await tech.waitForSelector('dialog[open] button:has-text("Assign to Moss")');
    expect(await tech.locator('dialog[open] button:has-text("Assign to Moss")').isEnabled()).toBe(true);
    await tech.keyboard.press('Escape');
    await tech.waitForSelector('dialog[open]', { state: 'detached' });
    // One click confirms it.
    await lone.locator('[data-testid=confirm-suggestion]').click();
    await lone.waitFor({ state: 'detached', timeout: 30_000 });
  }, 300_000);
});
