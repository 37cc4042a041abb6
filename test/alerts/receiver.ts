import { createServer, type IncomingHttpHeaders, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';

export interface Received {
  headers: IncomingHttpHeaders;
  body: Record<string, unknown>;
  /** The status it was answered with, and when (ms since the epoch). */
  status: Answer;
  at: number;
}

/** How the receiver answers the next request: a status code, or 'hang' (never answer). */
export type Answer = number | 'hang';

export interface Receiver {
  url: string;
  received: Received[];
  /** Answers to give, in order; once used up, every request gets 200 (or 503 while `down`). */
  answers: Answer[];
  /** An outage: every request not covered by `answers` gets 503 Service Unavailable. */
  down: boolean;
  close(): Promise<void>;
}

/** A real HTTP server on 127.0.0.1 (ephemeral port) standing in for the operations webhook. */
export async function startReceiver(): Promise<Receiver> {
  const received: Received[] = [];
  const answers: Answer[] = [];
  const state = { down: false };
  const server: Server = createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => chunks.push(c));
    req.on('end', () => {
      const answer = answers.shift() ?? (state.down ? 503 : 200);
      received.push({ headers: req.headers, body: JSON.parse(Buffer.concat(chunks).toString('utf8')) as Record<string, unknown>, status: answer, at: Date.now() });
      if (answer === 'hang') return;
      res.writeHead(answer, { 'content-type': 'text/plain' }).end(answer === 200 ? 'ok' : 'no');
    });
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as AddressInfo;
  return {
    url: `http://127.0.0.1:${port}/hooks/riskfold`,
    received,
    answers,
    get down() {
      return state.down;
    },
    set down(value: boolean) {
      state.down = value;
    },
    close: () =>
      new Promise((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}
