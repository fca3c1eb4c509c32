import 'server-only';
import pg from 'pg';

const RECONNECT_MIN_MS = 250;
const RECONNECT_MAX_MS = 5_000;

/**
 * LISTEN on a PostgreSQL server for one app instance: one dedicated connection (a pooled one would
 * drop its LISTENs when handed back), every channel's handlers on it. NOTIFY from any instance reaches
 * every instance listening. If the connection is lost (server restart), it reconnects with a capped
 * backoff and LISTENs again; events sent while it was away are not replayed, so a reconnect is logged.
 */
export class PgListener {
  private client: pg.Client | null = null;
  private connecting: Promise<pg.Client> | null = null;
  private readonly handlers = new Map<string, Set<(payload: string) => void>>();
  private closed = false;
  private backoff = RECONNECT_MIN_MS;
  private retry: NodeJS.Timeout | null = null;

  constructor(private readonly url: string) {}

  async listen(channel: string, onPayload: (payload: string) => void): Promise<() => Promise<void>> {
    const client = await this.connection();
    let set = this.handlers.get(channel);
    if (!set) {
      set = new Set();
      this.handlers.set(channel, set);
      await client.query(`LISTEN ${client.escapeIdentifier(channel)}`);
    }
    set.add(onPayload);
    return async () => {
      const current = this.handlers.get(channel);
      if (!current?.delete(onPayload) || current.size > 0) return;
      this.handlers.delete(channel);
      if (this.client && !this.closed) await this.client.query(`UNLISTEN ${this.client.escapeIdentifier(channel)}`).catch(() => {});
    };
  }

  async close(): Promise<void> {
    this.closed = true;
    if (this.retry) clearTimeout(this.retry);
    const client = this.client ?? (await this.connecting?.catch(() => null));
    this.client = null;
    await client?.end().catch(() => {});
  }

  private connection(): Promise<pg.Client> {
    if (this.closed) return Promise.reject(new Error('the live listener is closed'));
    if (this.client) return Promise.resolve(this.client);
    this.connecting ??= this.connect().finally(() => (this.connecting = null));
    return this.connecting;
  }

  private async connect(): Promise<pg.Client> {
    const client = new pg.Client({ connectionString: this.url });
    client.on('notification', (message) => {
      for (const handler of this.handlers.get(message.channel) ?? []) handler(message.payload ?? '');
    });
    const lost = (reason: string) => {
      if (this.client !== client) return;
      this.client = null;
      client.removeAllListeners('end');
      client.end().catch(() => {});
      if (!this.closed) this.scheduleReconnect(reason);
    };
    client.on('error', (error) => lost(error.message));
    client.on('end', () => lost('connection ended'));
    await client.connect();
    for (const channel of this.handlers.keys()) await client.query(`LISTEN ${client.escapeIdentifier(channel)}`);
    this.client = client;
    this.backoff = RECONNECT_MIN_MS;
    return client;
  }

  private scheduleReconnect(reason: string) {
    console.error(`[benchwire] live events: lost the database listener (${reason}); reconnecting (events in the gap are not replayed)`);
    const wait = this.backoff;
    this.backoff = Math.min(RECONNECT_MAX_MS, this.backoff * 2);
    this.retry = setTimeout(() => {
      this.retry = null;
      this.connection().catch((error: Error) => this.scheduleReconnect(error.message));
    }, wait);
    this.retry.unref();
  }
}
