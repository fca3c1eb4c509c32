// Admin screens in a real browser against the real server: a raw ASTM capture file imported for the
// chemistry analyzer lands in Intake, and importing it again adds nothing; a pending invitation is listed
// apart from the staff, with who invited and until when, and can be revoked.
import { describe, expect, it } from 'vitest';
import { C, testFrame } from '@/bridge/testing/astm';
import { signInAs, appForThisFile } from './support';

const running = appForThisFile();

// ASTM E1381 session (ENQ, frames <STX> FN text <CR> <ETX> checksum <CR><LF>, checksum = sum of FN … ETX
// modulo 256 in two hex digits, computed in bridge/testing/astm.ts; EOT) around E1394 records H P O R L.
function capture(): Buffer {
  const records = [
    'H|\\^&|||CHEMSIM^1^SN-7||||||||P|1|20261201091500',
    'P|1||PT-8801',
    'O|1|S-8001||^^^CHEM',
    'R|1|^^^GLU|5.4|mmol/L||N||F||||20261201091500',
    'R|2|^^^ALT|41|U/L||N||F||||20261201091500',
    'L|1|N',
  ];
  const session = Buffer.concat([Buffer.from([C.ENQ]), ...records.map((r, i) => testFrame((i + 1) % 8, `${r}\r`)), Buffer.from([C.EOT])]);
  // Bytes outside a session: kept as an unparsed part.
  return Buffer.concat([session, Buffer.from('~~ line noise ~~\r\n', 'latin1')]);
}

describe('Admin imports and invitations', () => {
  it('imports a capture file: preview, add to Intake, and the same file again adds nothing', async () => {
    const admin = await signInAs(running.browser, running.app.baseUrl, 'admin@fernhollow.example');
    await admin.goto('/admin');
    const form = admin.locator('form[aria-label="Upload a capture file"]');
    await form.waitFor({ timeout: 30_000 });
    // The instrument list loads after the page.
    await expect.poll(() => form.locator('select option').count(), { timeout: 30_000 }).toBeGreaterThan(1);
    const chemistry = (await form.locator('select option', { hasText: 'Chemistry' }).first().getAttribute('value'))!;
    await form.locator('select').selectOption(chemistry);
    await form.locator('input[type=file]').setInputFiles({ name: 'chem-capture.log', mimeType: 'application/octet-stream', buffer: capture() });
    await form.locator('button[type=submit]').click();
    const preview = admin.locator('[data-testid=capture-preview]');
    await preview.waitFor({ timeout: 30_000 });
    expect(await preview.textContent()).toContain('2 new readings, 1 new unparsed part');
    expect(await preview.locator('tr[data-kind=reading]').count()).toBe(2);
    expect(await preview.locator('tr[data-kind=reading]').first().textContent()).toContain('GLU');
    await preview.locator('button', { hasText: 'Add 2 readings and 1 unparsed part to Intake' }).click();
    await expect.poll(() => admin.locator('section[aria-labelledby=capture-import-heading] [role=status]').first().textContent(), { timeout: 30_000 }).toContain('Added to Intake: 2 readings and 1 unparsed capture');
    await expect.poll(() => admin.locator('table[aria-label="Recent capture imports"]').textContent(), { timeout: 30_000 }).toContain('chem-capture.log');

    // Again: everything is stored already, and the screen says this file was imported before.
    await form.locator('button[type=submit]').click();
    await preview.waitFor({ timeout: 30_000 });
    await expect.poll(() => preview.textContent(), { timeout: 30_000 }).toContain('This same file was imported before');
    expect(await preview.locator('button', { hasText: 'Nothing new to add' }).isDisabled()).toBe(true);

    // The readings wait in Intake, unassigned, for a person.
    await admin.goto('/intake');
    await expect.poll(() => admin.locator('[data-testid=intake-list]').textContent(), { timeout: 30_000 }).toContain('S-8001');
  }, 240_000);

  it('lists a pending invitation apart from the staff and revokes it', async () => {
    const admin = await signInAs(running.browser, running.app.baseUrl, 'admin@fernhollow.example');
    await admin.goto('/admin');
    const invite = admin.locator('section[aria-labelledby=invite-heading]');
    await invite.waitFor({ timeout: 30_000 });
    await invite.locator('label:has-text("Name") input').fill('Linnea Sorrow');
    await invite.locator('label:has-text("E-mail") input').fill('linnea@fernhollow.example');
    await invite.locator('label:has-text("Role") select').selectOption('technician');
    await invite.locator('button[type=submit]').click();
    const row = invite.locator('table[aria-label="Pending invitations"] tr', { hasText: 'linnea@fernhollow.example' });
    await row.waitFor({ timeout: 30_000 });
    const text = await row.textContent();
    expect(text).toContain('Veterinary technician');
    expect(text).toMatch(/until /);
    // Not in the staff table as a deactivated person.
    expect(await admin.locator('section[aria-labelledby=staff-heading] table').first().textContent()).not.toContain('linnea@fernhollow.example');

    await row.locator('button', { hasText: 'Revoke…' }).click();
    await admin.locator('dialog button', { hasText: /^Revoke$/ }).click();
    await expect.poll(() => row.textContent(), { timeout: 30_000 }).toMatch(/revoked /);
    expect(await row.locator('button', { hasText: 'Revoke…' }).count()).toBe(0);
  }, 240_000);
});
