import { createReadStream, existsSync } from 'node:fs';
import Fastify, { LogController, type FastifyBaseLogger, type FastifyInstance } from 'fastify';
import { Type } from '@sinclair/typebox';
import { StatusResponseSchema, WORKER_PROTOCOL_VERSION, WorkerHeartbeatSchema, workerHeartbeatValidator, type HeartbeatReply, type WorkerHeartbeat } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { RunManager } from '../run/run-manager.js';
import { buildStatus } from '../run/status-report.js';
import { CHAMPION_FILES, championDocument, championFiles, championSummary, type ChampionFileName } from '../champion/champion-files.js';
import { errorAnswer } from './error-answer.js';
import { HTTP_ERRORS, HttpError, type HttpErrorCode } from './error-codes.js';
import { accessHook, type AccessTokens } from './access.js';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import { registerDashboardRoutes } from './dashboard-routes.js';
import { registerCheckpointRoutes } from './checkpoint-routes.js';
import { registerChampionChoiceRoutes } from './champion-choice-routes.js';

export interface HttpServerOptions {
  manager: RunManager;
  logger: Logger;
  version: string;
  startedAt: number;
  tokens: AccessTokens;
  /** The job queue, for queue depth in /metrics; without it that metric is left out. */
  queue?: EvaluationQueue;
}

const RunIdParams = Type.Object({ id: Type.String({ pattern: '^[A-Za-z0-9_-]{1,64}$' }) });
const WorkerIdParams = Type.Object({ id: Type.String({ pattern: '^[A-Za-z0-9_.:-]{1,128}$' }) });

/**
 * The coordinator's HTTP API (fastify). Schemas are declared with each route and compiled at
 * start-up. Errors answer `{ error: { code, message, fix } }` with codes from {@link HTTP_ERRORS};
 * who may call which route is set by `config.access` (see ./access.ts).
 */
export async function createHttpServer(opts: HttpServerOptions): Promise<FastifyInstance> {
  const { manager } = opts;
  const store = manager.store;
  const app = Fastify({
    loggerInstance: opts.logger as FastifyBaseLogger,
    bodyLimit: 1024 * 1024,
    logController: new LogController({ disableRequestLogging: true }),
    // Validate exactly as the shared schemas say: no silent stripping of unknown fields, no type coercion.
    ajv: { customOptions: { removeAdditional: false, coerceTypes: false, useDefaults: false } },
  });
  const reject = (req: { method: string; url: string }, reason: string) => store.logEvent(null, 'rejected-request', { method: req.method, url: req.url, reason });
  const send = (reply: import('fastify').FastifyReply, code: HttpErrorCode, message: string, extra: Record<string, unknown> = {}) =>
    reply.status(HTTP_ERRORS[code].status).send({ error: { code, message, fix: HTTP_ERRORS[code].fix, ...extra } });

  app.addHook(
    'onRequest',
    accessHook(opts.tokens, (req, access) => {
      reject(req, `missing or unknown token for ${access} access`);
      opts.logger.warn({ method: req.method, url: req.url, access, ip: req.ip }, 'request refused: missing or unknown token');
    }),
  );

  app.setErrorHandler((err: Error & { validation?: unknown; statusCode?: number }, req, reply) => {
    const answer = errorAnswer(err);
    if (answer.rejected) reject(req, err.message);
    if (answer.code === 'NB_INTERNAL') opts.logger.error({ err: err.message, stack: err.stack, url: req.url }, 'request failed');
    return send(reply, answer.code, answer.message, answer.extra);
  });
  app.setNotFoundHandler((req, reply) => {
    reject(req, 'unknown route');
    return send(reply, 'NB_NOT_FOUND', `no route ${req.method} ${req.url}`);
  });

  const runOr404 = (id: string) => {
    const run = store.getRun(id);
    if (!run) throw new HttpError('NB_NO_RUN', `no run with id ${id}`);
    return run;
  };

  app.get('/health', { config: { access: 'status' } }, async () => ({ ok: true }));

  // The schema documents the reply; it is written with JSON.stringify, not a serializer compiled from
  // the schema, whose unions made the first GET /status after a start take half a second (the reply
  // is built to the schema's type, and the tests check it against the schema).
  app.get('/status', { schema: { response: { 200: StatusResponseSchema } }, serializerCompiler: () => (data) => JSON.stringify(data) }, async () =>
    buildStatus(manager, { version: opts.version, startedAt: opts.startedAt }),
  );

  app.get('/runs', async () =>
    store.listRuns().map((r) => ({ id: r.id, name: r.name, state: r.state, createdAt: new Date(r.createdAt).toISOString(), proposals: r.proposals })),
  );

  app.get('/runs/:id/champion', { schema: { params: RunIdParams } }, async (req) => {
    const { id } = req.params as { id: string };
    const summary = championSummary(store, runOr404(id));
    if (!summary) throw new HttpError('NB_NO_CHAMPION', `run ${id} has no champion yet`);
    return championDocument(summary);
  });

  const sendChampionFile = (id: string, name: ChampionFileName, reply: import('fastify').FastifyReply) => {
    const files = championFiles(store, runOr404(id));
    if (!files) throw new HttpError('NB_NO_CHAMPION', `run ${id} has no champion yet`);
    const type = name.endsWith('.json') ? 'application/json' : name.endsWith('.md') ? 'text/markdown; charset=utf-8' : name.endsWith('.html') ? 'text/html; charset=utf-8' : 'application/octet-stream';
    return reply.type(type).send(files.get(name));
  };
  app.get(
    '/runs/:id/champion/files/:name',
    { config: { access: 'admin' }, schema: { params: Type.Object({ id: RunIdParams.properties.id, name: Type.Union(CHAMPION_FILES.map((f) => Type.Literal(f))) }) } },
    async (req, reply) => {
      const { id, name } = req.params as { id: string; name: ChampionFileName };
      return sendChampionFile(id, name, reply);
    },
  );
  // The report page with status access, for the dashboard's link: it draws what GET
  // /runs/:id/champion already tells (plus, for a regression run, the test split's predicted
  // against actual plot); the model, its weights and preprocessing.json stay admin.
  app.get('/runs/:id/champion/report', { schema: { params: RunIdParams } }, async (req, reply) => sendChampionFile((req.params as { id: string }).id, 'report.html', reply));

  for (const action of ['pause', 'resume', 'stop', 'finish'] as const) {
    app.post(`/runs/:id/${action}`, { config: { access: 'admin' }, schema: { params: RunIdParams } }, async (req) => {
      const { id } = req.params as { id: string };
      runOr404(id);
      const run = await manager.control(id, action);
      return { id: run.id, state: run.state };
    });
  }

  app.post('/runs/:id/genomes', { config: { access: 'admin' }, schema: { params: RunIdParams, body: Type.Object({ genome: Type.Unknown() }, { additionalProperties: false }) } }, async (req, reply) => {
    const { id } = req.params as { id: string };
    runOr404(id);
    const ev = await manager.submitGenome(id, (req.body as { genome: unknown }).genome);
    return reply.status(201).send({ evaluationId: ev.id, genomeHash: ev.genomeHash });
  });

  app.post('/workers/:id/revoke', { config: { access: 'admin' }, schema: { params: WorkerIdParams, body: Type.Object({ reason: Type.String({ minLength: 1, maxLength: 500 }) }, { additionalProperties: false }) } }, async (req) => {
    const { id } = req.params as { id: string };
    manager.workers.revoke(id, (req.body as { reason: string }).reason);
    return { workerId: id, revoked: true };
  });

  app.get('/datasets/:sha256', { config: { access: 'join' }, schema: { params: Type.Object({ sha256: Type.String({ pattern: '^[0-9a-f]{64}$' }) }) } }, async (req, reply) => {
    const { sha256 } = req.params as { sha256: string };
    const run = store.listRuns().find((r) => r.dataset.manifest.sha256 === sha256);
    if (!run || !existsSync(run.dataset.shardPath)) throw new HttpError('NB_UNKNOWN_DATASET', `no dataset ${sha256} on this coordinator`);
    return reply.type('application/octet-stream').header('content-length', run.dataset.manifest.bytes).send(createReadStream(run.dataset.shardPath));
  });

  app.post('/workers/heartbeat', { config: { access: 'join' }, schema: { body: WorkerHeartbeatSchema } }, async (req, reply) => {
    // fastify has checked the body against the schema; the shared validator is the same rule set.
    const hb = workerHeartbeatValidator.parse(req.body) as WorkerHeartbeat;
    if (manager.workers.isRevoked(hb.workerId)) {
      reject(req, `revoked worker ${hb.workerId}`);
      return send(reply, 'NB_WORKER_REVOKED', `worker ${hb.workerId} is revoked`);
    }
    const protocol = hb.protocol ?? 1;
    if (protocol !== WORKER_PROTOCOL_VERSION) {
      reject(req, `worker ${hb.workerId} speaks protocol ${protocol}, not ${WORKER_PROTOCOL_VERSION}`);
      return send(
        reply,
        'NB_WORKER_INCOMPATIBLE',
        `worker ${hb.workerId} (netbreeder ${hb.version}) speaks protocol ${protocol} and this coordinator (netbreeder ${opts.version}) speaks ${WORKER_PROTOCOL_VERSION}: upgrade this worker to netbreeder ${opts.version}`,
      );
    }
    manager.workers.recordHeartbeat(hb);
    if (manager.isQuarantined(hb.workerId)) {
      const reply200: HeartbeatReply = { quarantined: true, reason: manager.verifier.trust.trust(hb.workerId).quarantineReason ?? 'its results failed verification' };
      return reply.status(200).send(reply200);
    }
    return reply.status(204).send();
  });

  registerDashboardRoutes(app, { manager, queue: opts.queue });
  registerCheckpointRoutes(app, { manager, reject, send });
  registerChampionChoiceRoutes(app, { manager });

  await app.ready();
  return app;
}
