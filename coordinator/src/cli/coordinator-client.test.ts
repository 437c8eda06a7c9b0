import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import { CoordinatorClient, CoordinatorRefusal } from './coordinator-client.js';

/** A stand-in coordinator that answers every request with `status` and `body`. */
async function answering(status: number, body: string): Promise<{ server: Server; url: string }> {
  const server = createServer((_req, res) => {
    res.statusCode = status;
    res.setHeader('content-type', body.startsWith('{') || body.startsWith('[') ? 'application/json' : 'text/html');
    res.end(body);
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  return { server, url: `http://127.0.0.1:${(server.address() as AddressInfo).port}` };
}

let server: Server | null = null;
afterEach(() => server?.close());

describe('CoordinatorClient', () => {
  it('reads a reply that matches its schema', async () => {
    ({ server } = await answering(200, JSON.stringify([{ id: 'r1', name: 'kiln', state: 'searching', createdAt: '2026-12-04T10:00:00.000Z', proposals: 3 }])));
    const client = new CoordinatorClient(`http://127.0.0.1:${(server.address() as AddressInfo).port}`, 't');
    expect(await client.runs()).toEqual([{ id: 'r1', name: 'kiln', state: 'searching', createdAt: '2026-12-04T10:00:00.000Z', proposals: 3 }]);
  });

  it('names the field of a reply that breaks its schema instead of trusting it', async () => {
    const s = await answering(200, JSON.stringify([{ id: 'r1', name: 'kiln', state: 'searching', createdAt: '2026-12-04T10:00:00.000Z', proposals: 'three' }]));
    server = s.server;
    await expect(new CoordinatorClient(s.url, null).runs()).rejects.toThrow(/invalid run list: \/0\/proposals/);
  });

  it("turns a refusal into one sentence with the coordinator's code, message and fix", async () => {
    const s = await answering(409, JSON.stringify({ error: { code: 'NB_RUN_STATE', message: 'cannot pause run r1 while it is finished', fix: "check the run's state" } }));
    server = s.server;
    const refusal = await new CoordinatorClient(s.url, null).control('r1', 'pause').catch((e: unknown) => e);
    expect(refusal).toBeInstanceOf(CoordinatorRefusal);
    expect((refusal as Error).message).toBe("pause refused (409 NB_RUN_STATE): cannot pause run r1 while it is finished; check the run's state");
    expect((refusal as CoordinatorRefusal).code).toBe('NB_RUN_STATE');
  });

  it('says what a reply that is not the coordinator\'s was (a proxy page, say)', async () => {
    const s = await answering(502, '<html>bad gateway</html>');
    server = s.server;
    const refusal = await new CoordinatorClient(s.url, null).champion('r1').catch((e: unknown) => e);
    expect((refusal as Error).message).toBe('champion of run r1 refused (502): <html>bad gateway</html>');
    expect((refusal as CoordinatorRefusal).code).toBe('NB_COORDINATOR_REFUSED');
  });
});
