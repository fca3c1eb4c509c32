// Registering a patient in a real browser, at a bench tablet's 1024×768 and a phone's 390×844 (issue 8:
// "Screens must work at 1024×768 and 390 px wide, and by keyboard"). At 390 px the whole form is filled
// and sent by keyboard alone. Field errors must name the field next to it (WAI-ARIA 1.2 aria-invalid,
// aria-describedby), and a record number already in use comes back from the server onto its field.
import { describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import { appForThisFile } from './support';

const running = appForThisFile();

async function signIn(browser: Browser, viewport: { width: number; height: number }): Promise<Page> {
  const context = await browser.newContext({ baseURL: running.app.baseUrl, viewport });
  const page = await context.newPage();
  await page.goto('/sign-in');
  await page.fill('#email', 'tech@fernhollow.example');
  await page.fill('#password', 'demo-only-pass');
  await page.click('button[type=submit]');
  await page.waitForURL('**/intake', { timeout: 60_000 });
  return page;
}

/** Every control of the form lies inside the viewport's width: nothing to scroll sideways for. */
async function formFits(page: Page, width: number) {
  const overflow = await page.$$eval(
    '[data-testid=patient-form] input, [data-testid=patient-form] select, [data-testid=patient-form] button',
    (els, w) => els.filter((e) => (e as HTMLElement).offsetParent !== null && e.getBoundingClientRect().right > w + 0.5).map((e) => e.id || e.textContent),
    width,
  );
  expect(overflow).toEqual([]);
}

describe.each([
  { width: 1024, height: 768, record: 'FH-5101', keyboard: false },
  { width: 390, height: 844, record: 'FH-5102', keyboard: true },
])('registering a patient at $width×$height', ({ width, height, record, keyboard }) => {
  it('shows field errors, registers the patient, and refuses a record number in use on its field', async () => {
    const page = await signIn(running.browser, { width, height });
    await page.goto('/patients');
    if (keyboard) {
      await page.focus('a:has-text("New patient")');
      await page.keyboard.press('Enter');
    } else {
      await page.click('a:has-text("New patient")');
    }
    await page.waitForURL('**/patients/new');
    await page.waitForSelector('[data-testid=patient-form]');
    await formFits(page, width);

    // Sent empty: the errors sit on their fields, and focus goes to the first one.
    if (keyboard) {
      await page.focus('button:has-text("Register patient")');
      await page.keyboard.press('Enter');
    } else {
      await page.click('button:has-text("Register patient")');
    }
    await page.waitForSelector('#patient-recordNumber-error');
    expect(await page.textContent('#patient-recordNumber-error')).toMatch(/record number/i);
    expect(await page.getAttribute('#patient-recordNumber', 'aria-invalid')).toBe('true');
    expect(await page.getAttribute('#patient-recordNumber', 'aria-describedby')).toBe('patient-recordNumber-error');
    expect(await page.textContent('#patient-name-error')).toMatch(/name/i);
    expect(await page.textContent('#patient-species-error')).toMatch(/species/i);
    expect(await page.evaluate(() => document.activeElement?.id)).toBe('patient-recordNumber');
    await formFits(page, width);

    if (keyboard) {
      // Record number has focus; Tab walks the form in order (a date input has a stop per part, so each
      // step tabs until the named control has focus, and fails if it never gets it).
      const tabTo = async (id: string, max = 6) => {
        for (let i = 0; i < max; i++) {
          await page.keyboard.press('Tab');
          if ((await page.evaluate(() => document.activeElement?.id)) === id) return;
        }
        throw new Error(`Tab never reached #${id}`);
      };
      await page.keyboard.type(record);
      await tabTo('patient-name');
      await page.keyboard.type('Pebble');
      await tabTo('patient-species');
      await page.keyboard.press('ArrowDown'); // Dog
      await page.keyboard.press('ArrowDown'); // Cat
      await tabTo('patient-breed');
      await page.keyboard.type('Domestic Longhair');
      await tabTo('patient-sex');
      await page.keyboard.press('ArrowUp'); // from "Sex unknown" (last) to "Female, spayed"
      await tabTo('patient-attendingVetId');
      await tabTo('birth-mode-date');
      await page.keyboard.press('ArrowRight'); // "Estimated age"
      await tabTo('patient-ageYears');
      await page.keyboard.type('3');
      await tabTo('patient-ageMonths');
      await page.keyboard.type('4');
      await tabTo('patient-weightKg');
      await page.keyboard.type('4.6');
      await tabTo('owner-mode-new'); // past "weighed on" (left empty: today)
      await tabTo('patient-ownerName');
      await page.keyboard.type('Tobias Wren-Hale');
      await tabTo('patient-ownerPhone');
      await page.keyboard.type('+44 1632 960 777');
      await tabTo('patient-ownerEmail');
      await page.keyboard.type('tobias@wrenhale.example');
      await tabTo('patient-submit');
      await page.keyboard.press('Enter');
    } else {
      await page.fill('#patient-recordNumber', record);
      await page.fill('#patient-name', 'Pebble');
      await page.selectOption('#patient-species', 'cat');
      await page.fill('#patient-breed', 'Domestic Longhair');
      await page.selectOption('#patient-sex', 'female_spayed');
      await page.selectOption('#patient-attendingVetId', { label: 'Dr. Ilse Corvan' });
      await page.check('text=Estimated age');
      await page.fill('#patient-ageYears', '3');
      await page.fill('#patient-ageMonths', '4');
      await page.fill('#patient-weightKg', '4.6');
      await page.fill('#patient-ownerName', 'Tobias Wren-Hale');
      await page.fill('#patient-ownerPhone', '+44 1632 960 777');
      await page.fill('#patient-ownerEmail', 'tobias@wrenhale.example');
      await page.click('button:has-text("Register patient")');
    }

    await page.waitForURL(/\/patients\/[0-9a-f-]{36}$/, { timeout: 60_000 });
    await page.waitForSelector(`h1:has-text("Pebble")`);
    const header = await page.textContent('header.mb-6');
    expect(header).toContain(record);
    expect(header).toContain('Cat');
    expect(header).toContain('Domestic Longhair');
    expect(header).toContain('female, spayed');
    expect(header).toMatch(/about 3 y/);
    expect(header).toContain('4.6 kg');
    expect(header).toContain('Tobias Wren-Hale');
    if (!keyboard) expect(header).toContain('Dr. Ilse Corvan');

    // The same record number again: the server's refusal lands on the field.
    await page.goto('/patients/new');
    await page.fill('#patient-recordNumber', record);
    await page.fill('#patient-name', 'Pebble again');
    await page.selectOption('#patient-species', 'cat');
    await page.click('button:has-text("Register patient")');
    await page.waitForSelector('#patient-recordNumber-error');
    expect(await page.textContent('#patient-recordNumber-error')).toMatch(/already used/i);
    expect(page.url()).toMatch(/\/patients\/new$/);

    // And it is found by the search.
    await page.goto('/patients');
    await page.fill('#patients-q', record);
    await page.waitForSelector(`[data-testid=patient-list] :text("Pebble")`, { timeout: 30_000 });
    await page.context().close();
  });
});
