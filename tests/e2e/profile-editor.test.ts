// An administrator teaches Benchwire a new text printout from the browser: writes the profile, checks it on a
// pasted capture in the live preview, saves it, and puts an instrument on it. Also: sorting the patient list.
import { describe, expect, it } from 'vitest';
import { signInAs, appForThisFile } from './support';

const running = appForThisFile();

// An invented blood-gas printer's slip (our own format), CRLF line endings, a printer notice after it.
const CAPTURE = [
  '== GAS PANEL ==',
  'Sample  G-310',
  'pH      7.38',
  'pCO2    41.2 mmHg',
  'pO2     <30 mmHg',
  '== DONE ==',
  'PRINTER COVER OPEN',
  '',
].join('\r\n');

describe('onboarding a text printout', () => {
  it('writes a profile with a live preview, saves it, and reads an instrument with it', async () => {
    const admin = await signInAs(running.browser, running.app.baseUrl, 'admin@fernhollow.example');
    await admin.goto('/admin/profiles/new');
    await admin.fill('#p-name', 'Blood gas printer');
    await admin.fill('#p-analyzer', 'Blood gas analyzer, bench 4');
    await admin.fill('#p-start', '^== GAS PANEL');
    await admin.fill('#p-end', '^== DONE');
    await admin.fill('#p-f0-label', 'Result line');
    await admin.fill('#p-f0-pattern', '^(?<analyte>pH|pCO2|pO2)\\s+(?<comparator>[<>])?(?<value>[0-9.]+)\\s*(?<unit>\\S+)?');
    await admin.check('input[name="definition.fields.0.repeats"]');
    await admin.click('button:has-text("Add a line")');
    await admin.fill('#p-f1-label', 'Sample');
    await admin.fill('#p-f1-pattern', '^Sample\\s+(?<sampleId>\\S+)');
    await admin.fill('#p-sample', CAPTURE);

    // The preview runs the bridge's engine: three results, and the printer notice kept as unread text.
    const preview = admin.locator('[data-testid=profile-preview]');
    await expect.poll(() => preview.textContent(), { timeout: 30_000 }).toContain('3 results, 1 unread part');
    const text = (await preview.textContent()) ?? '';
    expect(text).toContain('pH 7.38');
    expect(text).toContain('pO2 <30 mmHg');
    expect(text).toContain('PRINTER COVER OPEN');

    // A control line turns the slip's results into QC in the preview (the bridge's engine again); emptied, it is gone.
    await admin.fill('#p-control', '^Sample\\s+(?<level>G)-');
    const controls = admin.locator('[data-testid=preview-control]');
    await expect.poll(() => controls.count(), { timeout: 30_000 }).toBe(3);
    expect(await controls.first().textContent()).toBe('Control run, level G: goes to QC, never to a patient');
    await admin.fill('#p-control', '');
    await expect.poll(() => controls.count(), { timeout: 30_000 }).toBe(0);

    await admin.click('button:has-text("Save profile")');
    await admin.waitForURL(/\/admin\/profiles\/[0-9a-f-]{36}$/, { timeout: 30_000 });
    await admin.waitForSelector('text=v1');

    // The new profile can now be chosen for an instrument.
    await admin.goto('/admin');
    await admin.fill('#instrument-name', 'Blood gas analyzer (bench 4)');
    await admin.fill('#instrument-code', 'gas-analyzer');
    await admin.fill('#instrument-analytes', 'pH, pCO2, pO2');
    await admin.selectOption('#instrument-dialect', 'profile');
    await admin.selectOption('#instrument-profileId', { label: 'Blood gas printer (v1)' });
    await admin.selectOption('#instrument-kind', 'none');
    await admin.click('button:has-text("Add instrument")');
    await admin.waitForSelector('text=Blood gas analyzer (bench 4) added.', { timeout: 30_000 });
    const row = admin.locator('tr', { hasText: 'gas-analyzer' });
    await expect.poll(() => row.textContent(), { timeout: 30_000 }).toContain('Printout profile');
  }, 240_000);

  it('sorts the patient list by a column heading, both ways', async () => {
    const admin = await signInAs(running.browser, running.app.baseUrl, 'admin@fernhollow.example');
    await admin.goto('/patients');
    const firstName = () => admin.locator('[data-testid=patient-list] tbody tr').first().locator('td').nth(1).textContent();
    // The demo clinic's twelve patients: alphabetically Biscuit comes first and Willow last.
    await expect.poll(firstName, { timeout: 30_000 }).toBe('Biscuit');
    await admin.click('[data-testid=patient-list] th button:has-text("Name")');
    await expect.poll(firstName).toBe('Biscuit');
    await admin.click('[data-testid=patient-list] th button:has-text("Name")');
    await expect.poll(firstName).toBe('Willow');
    expect(await admin.getAttribute('[data-testid=patient-list] th:has(button:has-text("Name"))', 'aria-sort')).toBe('descending');
  }, 120_000);
});
