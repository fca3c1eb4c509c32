// The security headers as the production server sends them (next.config.ts `headers()` and apiRoute's
// Cache-Control), on a page and on API routes that answer with patient data, and framing refused by a
// real browser. Sources: W3C CSP Level 3 (frame-ancestors, §6.4.2), WHATWG Fetch §3.6 (nosniff),
// W3C Referrer Policy, W3C Permissions Policy, RFC 9111 §5.2.2.5 (no-store), RFC 6797 §7.2 (HSTS
// only over a secure transport), RFC 7034 (X-Frame-Options).
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { describe, expect, it } from 'vitest';
import { appForThisFile, signInAs } from './support';

const running = appForThisFile();

/** Directives of a CSP header, by name (CSP Level 3 §2.2.1: ";"-separated, the first token names it). */
function directives(csp: string | null): Map<string, string[]> {
  const map = new Map<string, string[]>();
  for (const part of (csp ?? '').split(';')) {
    const [name, ...values] = part.trim().split(/\s+/);
    if (name) map.set(name.toLowerCase(), values);
  }
  return map;
}

function expectDocumentHeaders(headers: Headers) {
  const csp = directives(headers.get('content-security-policy'));
  expect(csp.get('frame-ancestors')).toEqual(["'none'"]);
  expect(csp.get('default-src')).toEqual(["'self'"]);
  expect(csp.get('object-src')).toEqual(["'none'"]);
  expect(csp.get('base-uri')).toEqual(["'self'"]);
  expect(csp.get('form-action')).toEqual(["'self'"]);
  expect(headers.get('x-content-type-options')).toBe('nosniff');
  expect(headers.get('x-frame-options')).toBe('DENY');
  expect(headers.get('referrer-policy')).toBe('same-origin');
  // Permissions Policy: "feature=()" is the empty allowlist, the feature off for every origin.
  const permissions = headers.get('permissions-policy') ?? '';
  for (const feature of ['camera', 'microphone', 'geolocation', 'usb', 'serial']) expect(permissions).toContain(`${feature}=()`);
  // Plain HTTP here: HSTS must not be sent (RFC 6797 §7.2).
  expect(headers.get('strict-transport-security')).toBeNull();
}

describe('security headers on the production server', () => {
  it('a page carries CSP with frame-ancestors none, nosniff, Referrer-Policy and Permissions-Policy', async () => {
    const response = await fetch(`${running.app.baseUrl}/sign-in`);
    expect(response.status).toBe(200);
    expect(response.headers.get('content-type')).toMatch(/^text\/html/);
    expectDocumentHeaders(response.headers);
  });

  it('HSTS is sent once a TLS proxy says the request came over https', async () => {
    const response = await fetch(`${running.app.baseUrl}/sign-in`, { headers: { 'x-forwarded-proto': 'https' } });
    expect(response.headers.get('strict-transport-security')).toMatch(/^max-age=\d{7,}/);
  });

  it('API answers holding patient data are no-store, with the same headers, signed in through the browser', async () => {
    const page = await signInAs(running.browser, running.app.baseUrl, 'vet@fernhollow.example');
    try {
      const patients = await page.request.get('/api/patients?q=a');
      expect(patients.status()).toBe(200);
      const body = (await patients.json()) as { patients: { id: string; name: string }[] };
      expect(body.patients.length).toBeGreaterThan(0);
      const waiting = await page.request.get('/api/readings/waiting');
      expect(waiting.status()).toBe(200);
      const chart = await page.request.get(`/api/patients/${body.patients[0].id}`);
      expect(chart.status()).toBe(200);
      for (const response of [patients, waiting, chart]) {
        const headers = new Headers(response.headers());
        // no-store: neither the browser nor a proxy keeps a copy (RFC 9111 §5.2.2.5).
        expect(headers.get('cache-control')?.split(',').map((d) => d.trim())).toContain('no-store');
        expect(headers.get('x-content-type-options')).toBe('nosniff');
        expect(directives(headers.get('content-security-policy')).get('frame-ancestors')).toEqual(["'none'"]);
      }
      // Refused answers too (they may name a patient or say one exists).
      const refused = await fetch(`${running.app.baseUrl}/api/patients?q=a`);
      expect(refused.status).toBe(401);
      expect(refused.headers.get('cache-control')).toContain('no-store');
    } finally {
      await page.context().close();
    }
  });

  it('a page on another origin cannot frame the app: the browser refuses it by frame-ancestors', async () => {
    // The framing page is served from a second port: another origin (RFC 6454 §4, the port is part of it).
    const framer: Server = createServer((_req, res) => {
      res.writeHead(200, { 'content-type': 'text/html' });
      res.end(`<!doctype html><title>framer</title><iframe id="app" src="${running.app.baseUrl}/sign-in"></iframe>`);
    });
    await new Promise<void>((resolve) => framer.listen(0, '127.0.0.1', resolve));
    const context = await running.browser.newContext();
    try {
      const page = await context.newPage();
      const refusals: string[] = [];
      page.on('console', (message) => {
        if (/frame-ancestors/.test(message.text())) refusals.push(message.text());
      });
      const signInLoaded = context.waitForEvent('response', { predicate: (r) => r.url() === `${running.app.baseUrl}/sign-in`, timeout: 60_000 });
      await page.goto(`http://127.0.0.1:${(framer.address() as AddressInfo).port}/`);
      await signInLoaded;
      const frame = page.frames().find((f) => f !== page.mainFrame());
      // Blocked: the frame shows the browser's error page, never the sign-in form.
      await expect.poll(async () => (frame ? await frame.$('#email') : 'no frame'), { timeout: 30_000 }).toBeNull();
      await expect.poll(() => refusals.length, { timeout: 30_000 }).toBeGreaterThan(0);
      expect(refusals[0]).toMatch(/frame-ancestors 'none'/);
    } finally {
      await context.close();
      await new Promise<void>((resolve) => framer.close(() => resolve()));
    }
  });
});
