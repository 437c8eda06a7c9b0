import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { InjectOptions } from 'fastify';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { statusResponseValidator, WORKER_PROTOCOL_VERSION, type WorkerHeartbeat } from '@netbreeder/shared-types';
import pino from 'pino';
import { HeartbeatSender } from '@netbreeder/worker';
import { TestCluster, waitFor } from './support/harness.js';

/** `METHOD /path` of every route in fastify's route tree (`printRoutes({ commonPrefix: false })`), HEAD left out. */
function routesOfTree(tree: string): string[] {
  const stack: string[] = [];
  const routes: string[] = [];
  for (const line of tree.split('\n')) {
    const at = line.indexOf('── ');
    if (at < 0) continue;
    const m = /^(\S+)(?: \(([^)]*)\))?/.exec(line.slice(at + 3))!;
    const depth = Math.round(at / 4);
    const parent = depth === 0 ? '' : stack[depth - 1]!;
    const path = parent === '/' ? `/${m[1]!.replace(/^\//, '')}` : parent + m[1]!;
    stack[depth] = path;
    for (const method of (m[2] ?? '').split(', ').filter((x) => x && x !== 'HEAD')) routes.push(`${method} ${path}`);
  }
  return routes;
}

const heartbeat = (over: Partial<WorkerHeartbeat> = {}): WorkerHeartbeat => ({
  schemaVersion: 1, workerId: 'pc-7', host: 'pc-7', pid: 123, cores: 4, backend: 'wasm', backendReason: 'test', state: 'idle',
  currentEvaluationId: null, evaluationsDone: 0, evaluationsFailed: 0, samplesPerSecond: 0, rssBytes: 1000, memoryCapMb: 1024, version: '0.1.0', protocol: WORKER_PROTOCOL_VERSION, ...over,
});

describe('coordinator HTTP API', () => {
  let cluster: TestCluster;
  beforeAll(async () => {
    cluster = await TestCluster.start('http');
  });
  afterAll(async () => {
    await cluster?.stop();
  });
  /** Requests as a worker would send them, with the join token. */
  const inject = (opts: InjectOptions) =>
    cluster.coordinator.http.inject({ ...opts, headers: { authorization: `Bearer ${cluster.coordinator.secrets.joinToken}`, ...opts.headers } });

  it('serves exactly the routes docs/http-api.md lists, each with the access it names', async () => {
    const doc = readFileSync(join(import.meta.dirname, '..', '..', 'docs', 'http-api.md'), 'utf8');
    const documented = [...doc.matchAll(/^\| `(GET|POST|PUT|DELETE) ([^`?\s]+)[^`]*` \| (public|status|join|admin) \|/gm)].map((m) => ({ route: `${m[1]} ${m[2]}`, access: m[3]! }));
    expect(documented.length, 'routes found in the table').toBeGreaterThan(20);
    expect(documented.map((d) => d.route).sort()).toEqual(routesOfTree(cluster.coordinator.http.printRoutes({ commonPrefix: false })).sort());
    // Without a token, exactly the join and admin routes refuse (this coordinator's status is public).
    for (const { route, access } of documented) {
      const [method, path] = route.split(' ') as ['GET' | 'POST' | 'PUT', string];
      const res = await cluster.coordinator.http.inject({ method, url: path.replace(':sha256', '0'.repeat(64)).replace(/:\w+/g, 'x') });
      expect(res.statusCode === 401, `${route} without a token answered ${res.statusCode}`).toBe(access === 'join' || access === 'admin');
    }
  });

  it('answers GET /status with a valid status before any run exists', async () => {
    const res = await inject({ method: 'GET', url: '/status' });
    expect(res.statusCode).toBe(200);
    const status = statusResponseValidator.parse(res.json());
    expect(status.run).toBeNull();
    expect(status.evaluations).toEqual({ queued: 0, running: 0, done: 0, failed: 0 });
  });

  it('records a valid heartbeat and lists the worker', async () => {
    const res = await inject({ method: 'POST', url: '/workers/heartbeat', payload: heartbeat() });
    expect(res.statusCode).toBe(204);
    const status = statusResponseValidator.parse((await inject({ method: 'GET', url: '/status' })).json());
    expect(status.workers.map((w) => [w.workerId, w.backend, w.alive])).toEqual([['pc-7', 'wasm', true]]);
  });

  it.each([
    ['a wrong type', { ...heartbeat({ workerId: 'pc-8' }), cores: 'four' }],
    ['an unknown field', { ...heartbeat({ workerId: 'pc-8' }), admin: true }],
    ['a missing field', (({ host: _host, ...rest }) => rest)(heartbeat({ workerId: 'pc-8' }))],
    ['a bad worker id', heartbeat({ workerId: 'pc 8; drop table' })],
    ['not JSON', 'hello'],
  ])('rejects a heartbeat with %s and changes nothing', async (_what, body) => {
    const before = cluster.coordinator.store.listWorkers().length;
    const res = await inject({ method: 'POST', url: '/workers/heartbeat', payload: body as object, headers: { 'content-type': 'application/json' } });
    expect(res.statusCode).toBe(400);
    expect(res.json().error.code).toBe('NB_BAD_REQUEST');
    expect(cluster.coordinator.store.listWorkers().length).toBe(before);
  });

  it('refuses a worker of another protocol version at its heartbeat with one sentence naming the version to install, and records nothing', async () => {
    const before = cluster.coordinator.store.listWorkers().length;
    for (const old of [heartbeat({ workerId: 'pc-old', protocol: 1 }), (({ protocol: _p, ...rest }) => rest)(heartbeat({ workerId: 'pc-older' }))]) {
      const res = await inject({ method: 'POST', url: '/workers/heartbeat', payload: old });
      expect(res.statusCode).toBe(409);
      expect(res.json().error).toMatchObject({ code: 'NB_WORKER_INCOMPATIBLE', message: expect.stringMatching(/speaks protocol 1 and this coordinator \(netbreeder [^)]+\) speaks \d+: upgrade this worker to netbreeder /) });
    }
    expect(cluster.coordinator.store.listWorkers().length).toBe(before);
  });

  it("ends the heartbeats of a worker of another version with the coordinator's sentence, for the worker to print before it exits", async () => {
    const refusals: string[] = [];
    const snapshot = () => heartbeat({ workerId: 'pc-old-agent', protocol: 1 });
    const sender = new HeartbeatSender(cluster.coordinator.url, 60_000, snapshot, pino({ level: 'silent' }), cluster.coordinator.secrets.joinToken, (s) => refusals.push(s));
    sender.start();
    await waitFor('the refusal', () => refusals.length > 0, 10_000, 20);
    await sender.stop();
    expect(refusals).toEqual([expect.stringMatching(/^the coordinator at http:\S+ refused this worker: worker pc-old-agent .* upgrade this worker to netbreeder \S+$/)]);
  });

  it('logs every rejected request', () => {
    expect(cluster.coordinator.store.events(null, 'rejected-request').length).toBeGreaterThanOrEqual(5);
  });

  it('refuses heartbeats and dataset downloads without the join token, and logs it', async () => {
    const bare = (o: InjectOptions) => cluster.coordinator.http.inject(o);
    const before = cluster.coordinator.store.events(null, 'rejected-request').length;
    const noToken = await bare({ method: 'POST', url: '/workers/heartbeat', payload: heartbeat({ workerId: 'pc-9' }) });
    expect(noToken.statusCode).toBe(401);
    expect(noToken.json().error.code).toBe('NB_UNAUTHORIZED');
    const wrong = await bare({ method: 'GET', url: `/datasets/${'0'.repeat(64)}`, headers: { authorization: 'Bearer guess' } });
    expect(wrong.statusCode).toBe(401);
    expect(cluster.coordinator.store.listWorkers().map((w) => w.heartbeat.workerId)).not.toContain('pc-9');
    expect(cluster.coordinator.store.events(null, 'rejected-request').length).toBe(before + 2);
    // status stays readable without a token (public by default)
    expect((await bare({ method: 'GET', url: '/status' })).statusCode).toBe(200);
  });

  it('keeps admin routes for the admin token: the join token is not enough', async () => {
    const asWorker = await inject({ method: 'POST', url: '/workers/pc-7/revoke', payload: { reason: 'test' } });
    expect(asWorker.statusCode).toBe(401);
    const asAdmin = await inject({
      method: 'POST',
      url: '/workers/pc-7/revoke',
      payload: { reason: 'memory errors on this PC' },
      headers: { authorization: `Bearer ${cluster.coordinator.secrets.adminToken}` },
    });
    expect(asAdmin.statusCode).toBe(200);
    // a revoked worker's heartbeats are refused from now on
    const hb = await inject({ method: 'POST', url: '/workers/heartbeat', payload: heartbeat({ state: 'training' }) });
    expect(hb.statusCode).toBe(403);
    expect(hb.json().error.code).toBe('NB_WORKER_REVOKED');
  });

  it('answers unknown routes, runs and datasets with a coded 404', async () => {
    expect((await inject({ method: 'GET', url: '/nowhere' })).json().error.code).toBe('NB_NOT_FOUND');
    expect((await inject({ method: 'GET', url: '/runs/r404/champion' })).json().error.code).toBe('NB_NO_RUN');
    expect((await inject({ method: 'GET', url: `/datasets/${'0'.repeat(64)}` })).json().error.code).toBe('NB_UNKNOWN_DATASET');
    expect((await inject({ method: 'GET', url: '/datasets/not-a-hash' })).statusCode).toBe(400);
  });
});

describe('a coordinator with private status', () => {
  let cluster: TestCluster;
  beforeAll(async () => {
    cluster = await TestCluster.start('private', { publicStatus: false });
  });
  afterAll(async () => {
    await cluster?.stop();
  });

  it('answers status only with a token, in a header or (for a browser) the query', async () => {
    const url = cluster.coordinator.url;
    expect((await fetch(`${url}/status`)).status).toBe(401);
    expect((await fetch(`${url}/status`, { headers: { authorization: `Bearer ${cluster.coordinator.secrets.joinToken}` } })).status).toBe(200);
    expect((await fetch(`${url}/status?token=${cluster.coordinator.secrets.adminToken}`)).status).toBe(200);
    expect((await fetch(`${url}/status?token=wrong`)).status).toBe(401);
    // the dashboard page itself holds no data and loads without a token
    expect((await fetch(`${url}/`)).status).toBe(200);
  });

  it("opens the champion's report with status access (the dashboard's link) while the export's files stay admin", async () => {
    const url = cluster.coordinator.url;
    const { joinToken, adminToken } = cluster.coordinator.secrets;
    expect((await fetch(`${url}/runs/r1/champion/report`)).status).toBe(401);
    // Past the access check with a status-level token: the run is unknown here.
    const asStatus = await fetch(`${url}/runs/r1/champion/report?token=${joinToken}`);
    expect(asStatus.status).toBe(404);
    expect(((await asStatus.json()) as { error: { code: string } }).error.code).toBe('NB_NO_RUN');
    for (const name of ['weights.bin', 'model.json', 'preprocessing.json', 'report.html']) {
      expect((await fetch(`${url}/runs/r1/champion/files/${name}?token=${joinToken}`)).status, name).toBe(401);
      expect((await fetch(`${url}/runs/r1/champion/files/${name}?token=${adminToken}`)).status, name).toBe(404);
    }
  });
});
