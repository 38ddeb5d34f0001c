/**
 * A real HTTP receiver for the webhook tests: node:http on 127.0.0.1, its answers scripted per request.
 * It records every request (headers, parsed body, arrival time) whatever it answers.
 */
import { createServer, type IncomingHttpHeaders, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';

export interface Received {
  readonly headers: IncomingHttpHeaders;
  readonly body: Record<string, unknown>;
  /** performance.now() when the body had arrived. */
  readonly atMs: number;
}

/** What to do with request number `index` (0-based, over the receiver's life): answer, or never answer. */
export type Script = (index: number, body: Record<string, unknown>) => { status: number; headers?: Record<string, string> } | 'hang';

export interface Receiver {
  readonly url: string;
  readonly port: number;
  readonly requests: Received[];
  /** Bodies of the requests answered 2xx, in the order answered. */
  readonly accepted: Record<string, unknown>[];
  /** Answers every request left hanging with `status`. */
  release(status?: number): void;
  close(): Promise<void>;
}

export async function startReceiver(script: Script = () => ({ status: 204 }), port = 0): Promise<Receiver> {
  const requests: Received[] = [];
  const accepted: Record<string, unknown>[] = [];
  const hanging: ServerResponse[] = [];
  const server: Server = createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => chunks.push(c));
    req.on('end', () => {
      const body = JSON.parse(Buffer.concat(chunks).toString('utf8') || '{}') as Record<string, unknown>;
      const index = requests.length;
      requests.push({ headers: req.headers, body, atMs: performance.now() });
      const answer = script(index, body);
      if (answer === 'hang') {
        hanging.push(res);
        return;
      }
      if (answer.status >= 200 && answer.status < 300) accepted.push(body);
      res.writeHead(answer.status, { 'content-type': 'text/plain', ...answer.headers });
      res.end(`status ${answer.status}`);
    });
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(port, '127.0.0.1', () => resolve());
  });
  const actual = (server.address() as AddressInfo).port;
  return {
    url: `http://127.0.0.1:${actual}/hooks/alerts`,
    port: actual,
    requests,
    accepted,
    release(status = 200) {
      for (const res of hanging.splice(0)) {
        if (res.destroyed) continue;
        res.writeHead(status);
        res.end();
      }
    },
    close: () =>
      new Promise<void>((resolve) => {
        for (const res of hanging.splice(0)) res.destroy();
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}

/** A port that was free a moment ago and has nothing listening on it now. */
export async function closedPort(): Promise<number> {
  const r = await startReceiver();
  await r.close();
  return r.port;
}
