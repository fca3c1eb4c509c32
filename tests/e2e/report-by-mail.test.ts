// A veterinarian signs off a result on the chart, sends the visit's report to a referring veterinarian,
// and the message arrives in the demo Outbox (the real local SMTP sink) with its PDF attached.
import fs from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import { mailSink, type Sink } from '../helpers/mail';
import { readPdf } from '../helpers/pdf';
import { appForThisFile, signInAs } from './support';

let sink: Sink | undefined;
const running = appForThisFile({
  prepare: async () => {
    sink = await mailSink();
    await sink.start();
    return { SMTP_URL: sink.url, MAIL_SINK_DIR: sink.dir, BACKGROUND_TICK_MS: '500' };
  },
});
afterAll(async () => {
  await sink?.stop();
  if (sink) fs.rmSync(sink.dir, { recursive: true, force: true });
});

describe('a reviewed report reaches the mailbox with its PDF', () => {
  it('sign off, send, delivered on the chart, listed in the Outbox with the PDF', async () => {
    const vet = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    await vet.goto('/patients');
    await vet.fill('#patients-q', 'Biscuit');
    await vet.click('a:has-text("Biscuit")');
    await vet.waitForURL('**/patients/*');

    // The latest demo result is the only unreviewed one; its visit cannot be sent yet.
    const visit = vet.locator('[data-testid=report-panel] li[data-visit]').first();
    await visit.waitFor();
    const visitDate = await visit.getAttribute('data-visit');
    await expect.poll(() => visit.textContent()).toContain('0 of 1 result signed off');
    expect(await visit.locator('button:has-text("Send report…")').isDisabled()).toBe(true);

    const row = vet.locator('[data-testid=patient-results] tbody tr[data-reading-id]').first();
    await row.locator('button:has-text("Details")').click();
    await vet.locator('form[aria-label="Review this result"] textarea').fill('Back within the interval; no further tests.');
    await vet.click('form[aria-label="Review this result"] button:has-text("Sign off")');
    await expect.poll(() => visit.textContent(), { timeout: 30_000 }).toContain('1 of 1 result signed off');

    await visit.locator('button:has-text("Send report…")').click();
    const form = vet.locator(`form[aria-label="Send the report of ${visitDate}"]`);
    await form.locator('select').selectOption('referring-vet');
    await form.locator('input[type=email]').fill('referrals@hazelbank.example');
    await form.locator(`input[id="send-${visitDate}-name"]`).fill('Dr. Quill');
    await form.locator('button[type=submit]').click();

    // Delivery state on the chart: queued, then sent once the mail worker has handed it to the sink.
    const sent = vet.locator('[data-testid=sent-reports] tr[data-report-id]').first();
    await sent.waitFor({ timeout: 30_000 });
    await expect.poll(() => sent.getAttribute('data-delivery'), { timeout: 60_000 }).toBe('sent');
    expect(await sent.textContent()).toContain('referrals@hazelbank.example');

    await vet.click('nav a:has-text("Outbox (demo)")');
    await vet.waitForURL('**/outbox');
    const item = vet.locator(`[data-testid=outbox-list] button:has-text("Laboratory results for Biscuit (FH-1001), ${visitDate}")`);
    await item.waitFor({ timeout: 30_000 });
    await item.click();
    const attachment = vet.locator('[data-testid=outbox-attachments] a').first();
    await attachment.waitFor();
    expect(await attachment.textContent()).toContain(`results-FH-1001-${visitDate}.pdf`);
    const html = await vet.locator('iframe[title="Message as HTML"]').getAttribute('srcdoc');
    expect(html).toContain('Dear Dr. Quill,');

    // The attached PDF, fetched as the browser would download it, read back with PDF.js.
    const href = await attachment.getAttribute('href');
    const bytes = await vet.evaluate(async (url) => Array.from(new Uint8Array(await (await fetch(url!)).arrayBuffer())), href);
    const pdf = await readPdf(new Uint8Array(bytes));
    expect(pdf.flat).toContain('Biscuit (FH-1001)');
    expect(pdf.flat).toContain('Back within the interval; no further tests.');
    expect(pdf.flat).toMatch(/Reviewed and signed off by Dr\. Ilse Corvan/);
    expect(pdf.flat).toContain('Page 1 of 1');
  });
});
