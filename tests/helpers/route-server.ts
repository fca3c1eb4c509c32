import { createServer } from 'node:http';
import type { AddressInfo } from 'node:net';

// The app's real route handlers behind a plain node:http server on 127.0.0.1, for programs that must
// talk HTTP to them (the packed bridge) without a production build. Requests and answers are passed
// as Next hands them over: a web Request in, the handler's Response out, headers and status as they are.

type Handler = (request: Request, context: undefined) => Promise<Response>;
export type Routes = Record<string, Partial<Record<'GET' | 'POST', Handler>>>;

export async function serveRoutes(routes: Routes): Promise<{ url: string; close(): Promise<void> }> {
  const server = createServer(async (req, res) => {
    const chunks: Buffer[] = [];
    for await (const chunk of req) chunks.push(chunk as Buffer);
    const url = new URL(req.url ?? '/', `http://${req.headers.host ?? '127.0.0.1'}`);
    const handler = routes[url.pathname]?.[req.method as 'GET' | 'POST'];
    if (!handler) {
      res.writeHead(404, { 'content-type': 'application/json' }).end(JSON.stringify({ error: { code: 'not_found', message: `${req.method} ${url.pathname}` } }));
      return;
    }
    const headers = new Headers();
    for (const [name, value] of Object.entries(req.headers)) if (value !== undefined) headers.set(name, Array.isArray(value) ? value.join(', ') : value);
    const body = req.method === 'GET' || chunks.length === 0 ? undefined : Buffer.concat(chunks);
    const response = await handler(new Request(url, { method: req.method, headers, body }), undefined);
    res.writeHead(response.status, Object.fromEntries(response.headers));
    res.end(Buffer.from(await response.arrayBuffer()));
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  return {
    url: `http://127.0.0.1:${(server.address() as AddressInfo).port}`,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}
