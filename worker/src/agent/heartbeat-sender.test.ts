import { afterEach, describe, expect, it } from 'vitest';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import pino from 'pino';
import type { WorkerHeartbeat } from '@netbreeder/shared-types';
import { HeartbeatSender } from './heartbeat-sender.js';

/** A coordinator stand-in that keeps every heartbeat it is sent, with the time it came. */
async function listen(): Promise<{ server: Server; url: string; beats: Array<{ at: number; body: WorkerHeartbeat }> }> {
  const beats: Array<{ at: number; body: WorkerHeartbeat }> = [];
  const server = createServer((req, res) => {
    let text = '';
    req.on('data', (c) => (text += c));
    req.on('end', () => {
      beats.push({ at: Date.now(), body: JSON.parse(text) as WorkerHeartbeat });
      res.statusCode = 204;
      res.end();
    });
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  return { server, url: `http://127.0.0.1:${(server.address() as AddressInfo).port}`, beats };
}

const until = async (ok: () => boolean, ms = 10_000) => {
  const t0 = Date.now();
  while (!ok()) {
    if (Date.now() - t0 > ms) throw new Error('timed out');
    await new Promise((r) => setTimeout(r, 5));
  }
};

let server: Server | null = null;
afterEach(() => server?.close());

describe('HeartbeatSender', () => {
  it('sends a job end and the next start, at once, as one heartbeat, and the next periodic one an interval after the last', async () => {
    const coordinator = await listen();
    server = coordinator.server;
    let state: WorkerHeartbeat['state'] = 'idle';
    let current: string | null = null;
    const snapshot = (): WorkerHeartbeat => ({
      schemaVersion: 1, workerId: 'w1', host: 'pc', pid: 1, cores: 2, backend: 'wasm', backendReason: '', state, currentEvaluationId: current,
      evaluationsDone: 0, evaluationsFailed: 0, samplesPerSecond: 0, rssBytes: 1, memoryCapMb: 100, version: 'test',
    });
    const sender = new HeartbeatSender(coordinator.url, 600, snapshot, pino({ level: 'silent' }), null, undefined, undefined, 100, 50);
    sender.start();
    await until(() => coordinator.beats.length === 1);
    // A job ends and the next one starts a moment later: one heartbeat, with the newer state.
    state = 'idle';
    sender.notifyChange();
    state = 'training';
    current = 'r1-s1-a1';
    sender.notifyChange({ now: true });
    await until(() => coordinator.beats.length === 2);
    expect(coordinator.beats[1]!.body).toMatchObject({ state: 'training', currentEvaluationId: 'r1-s1-a1' });
    // Nothing changes: the next one comes an interval after that one, not sooner.
    await until(() => coordinator.beats.length === 3);
    expect(coordinator.beats[2]!.at - coordinator.beats[1]!.at).toBeGreaterThanOrEqual(550);
    await sender.stop();
    const after = coordinator.beats.length;
    await new Promise((r) => setTimeout(r, 700));
    expect(coordinator.beats.length).toBe(after);
  });
});
