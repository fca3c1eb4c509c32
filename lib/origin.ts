import 'server-only';

// Cross-site request refusal for cookie-authenticated writes and the live feed. Browsers send Origin on
// every non-GET fetch and form post and on WebSocket handshakes (RFC 6454 §7, Fetch standard "origin
// header"), and Sec-Fetch-Site on modern ones (W3C Fetch Metadata). A request with neither comes from a
// non-browser client (the bridge, curl), which cannot ride on someone's session cookie.

type Headers = { get(name: string): string | null };

/** Extra origins allowed to call the API, e.g. the public address behind a proxy: BENCHWIRE_TRUSTED_ORIGINS=a,b */
export function trustedOrigins(): string[] {
  return (process.env.BENCHWIRE_TRUSTED_ORIGINS ?? '')
    .split(',')
    .map((o) => o.trim().replace(/\/+$/, ''))
    .filter(Boolean);
}

/** The origins this request could legitimately come from: the URL it was made to, its Host, its proxy's view. */
function ownOrigins(headers: Headers, url: string | undefined): Set<string> {
  const own = new Set<string>(trustedOrigins());
  if (url) {
    try {
      own.add(new URL(url).origin);
    } catch {
      // not an absolute URL (a raw upgrade request's path): the Host header below covers it
    }
  }
  const host = headers.get('host');
  const forwardedHost = headers.get('x-forwarded-host')?.split(',')[0].trim();
  const forwardedProto = headers.get('x-forwarded-proto')?.split(',')[0].trim();
  for (const h of [host, forwardedHost]) {
    if (!h) continue;
    for (const proto of new Set([forwardedProto ?? 'http', 'http', 'https'].filter((p) => p === 'http' || p === 'https'))) {
      // Host is the authority the browser connected to; the scheme must still match what it sent.
      own.add(`${proto}://${h.toLowerCase()}`);
    }
  }
  return own;
}

/** null when the request may go on; otherwise why it is refused. */
export function crossSiteReason(headers: Headers, url?: string): string | null {
  const origin = headers.get('origin');
  if (origin !== null) {
    if (ownOrigins(headers, url).has(origin.toLowerCase())) return null;
    return `requests from ${origin === 'null' ? 'an opaque origin' : origin} are not accepted`;
  }
  const site = headers.get('sec-fetch-site');
  if (site !== null && site !== 'same-origin' && site !== 'none') return `a ${site} request is not accepted`;
  return null;
}
