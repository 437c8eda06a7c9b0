import { createReadStream, existsSync } from 'node:fs';
import Fastify, { LogController, type FastifyBaseLogger, type FastifyInstance } from 'fastify';
import { Type } from '@sinclair/typebox';
import { StatusResponseSchema, WorkerHeartbeatSchema, workerHeartbeatValidator, type WorkerHeartbeat } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { RunManager } from '../run/run-manager.js';
import { buildStatus } from '../run/status-report.js';
import { CHAMPION_FILES, championFiles, championSummary, type ChampionFileName } from '../champion/champion-files.js';
import { HTTP_ERRORS, HttpError } from './error-codes.js';

export interface HttpServerOptions {
  manager: RunManager;
  logger: Logger;
  version: string;
  startedAt: number;
}

const RunIdParams = Type.Object({ id: Type.String({ pattern: '^[A-Za-z0-9_-]{1,64}$' }) });

/**
 * The coordinator's HTTP API (fastify). Schemas are declared with each route and compiled at
 * start-up. Errors answer `{ error: { code, message, fix } }` with codes from {@link HTTP_ERRORS}.
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

  app.setErrorHandler((err: Error & { validation?: unknown; statusCode?: number }, req, reply) => {
    if (err instanceof HttpError) {
      return reply.status(err.status).send({ error: { code: err.code, message: err.message, fix: HTTP_ERRORS[err.code].fix } });
    }
    if (err.validation || (err.statusCode && err.statusCode < 500)) {
      store.logEvent(null, 'rejected-request', { method: req.method, url: req.url, reason: err.message });
      return reply.status(400).send({ error: { code: 'NB_BAD_REQUEST', message: err.message, fix: HTTP_ERRORS.NB_BAD_REQUEST.fix } });
    }
    opts.logger.error({ err: err.message, stack: err.stack, url: req.url }, 'request failed');
    return reply.status(500).send({ error: { code: 'NB_INTERNAL', message: err.message, fix: HTTP_ERRORS.NB_INTERNAL.fix } });
  });
  app.setNotFoundHandler((req, reply) =>
    reply.status(404).send({ error: { code: 'NB_NOT_FOUND', message: `no route ${req.method} ${req.url}`, fix: HTTP_ERRORS.NB_NOT_FOUND.fix } }),
  );

  const runOr404 = (id: string) => {
    const run = store.getRun(id);
    if (!run) throw new HttpError('NB_NO_RUN', `no run with id ${id}`);
    return run;
  };

  app.get('/health', async () => ({ ok: true }));

  app.get('/status', { schema: { response: { 200: StatusResponseSchema } } }, async () =>
    buildStatus(manager, { version: opts.version, startedAt: opts.startedAt }),
  );

  app.get('/runs', async () =>
    store.listRuns().map((r) => ({ id: r.id, name: r.name, state: r.state, createdAt: new Date(r.createdAt).toISOString(), proposals: r.proposals })),
  );

  app.get('/runs/:id/champion', { schema: { params: RunIdParams } }, async (req) => {
    const { id } = req.params as { id: string };
    const summary = championSummary(store, runOr404(id));
    if (!summary) throw new HttpError('NB_NO_CHAMPION', `run ${id} has no champion yet`);
    return summary;
  });

  app.get('/runs/:id/champion/files/:name', { schema: { params: Type.Object({ id: RunIdParams.properties.id, name: Type.Union(CHAMPION_FILES.map((f) => Type.Literal(f))) }) } }, async (req, reply) => {
    const { id, name } = req.params as { id: string; name: ChampionFileName };
    const files = championFiles(store, runOr404(id));
    if (!files) throw new HttpError('NB_NO_CHAMPION', `run ${id} has no champion yet`);
    const type = name.endsWith('.json') ? 'application/json' : name.endsWith('.md') ? 'text/markdown; charset=utf-8' : 'application/octet-stream';
    return reply.type(type).send(files.get(name));
  });

  app.get('/datasets/:sha256', { schema: { params: Type.Object({ sha256: Type.String({ pattern: '^[0-9a-f]{64}$' }) }) } }, async (req, reply) => {
    const { sha256 } = req.params as { sha256: string };
    const run = store.listRuns().find((r) => r.dataset.manifest.sha256 === sha256);
    if (!run || !existsSync(run.dataset.shardPath)) throw new HttpError('NB_UNKNOWN_DATASET', `no dataset ${sha256} on this coordinator`);
    return reply.type('application/octet-stream').header('content-length', run.dataset.manifest.bytes).send(createReadStream(run.dataset.shardPath));
  });

  app.post('/workers/heartbeat', { schema: { body: WorkerHeartbeatSchema } }, async (req, reply) => {
    // fastify has checked the body against the schema; the shared validator is the same rule set.
    manager.recordHeartbeat(workerHeartbeatValidator.parse(req.body) as WorkerHeartbeat);
    return reply.status(204).send();
  });

  await app.ready();
  return app;
}
