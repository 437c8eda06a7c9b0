import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { FastifyInstance } from 'fastify';
import { Type } from '@sinclair/typebox';
import {
  EvaluationsResponseSchema,
  LineageResponseSchema,
  rmseFromFitness,
  ThroughputResponseSchema,
  TopGenomesResponseSchema,
  type BackendName,
  type EvaluationsResponse,
  type LineageGenome,
  type LineageResponse,
  type ThroughputResponse,
  type TopGenomesResponse,
} from '@netbreeder/shared-types';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import type { RunManager } from '../run/run-manager.js';
import type { RunRecord } from '../store/run-store.js';
import { HttpError } from './error-codes.js';
import { registerMetricsRoute } from './metrics.js';
import { chooseBucketSeconds, throughputBuckets } from './throughput-buckets.js';

/** What the dashboard and metrics routes read from. */
export interface DashboardRouteOptions {
  manager: RunManager;
  /** The job queue, for queue depth in `/metrics`; without it that metric is left out. */
  queue?: EvaluationQueue;
}

/**
 * The page's own files (in `src/dashboard/`, read from there by the compiled `dist/http/` too, so the
 * build copies nothing), and the charting library from node_modules.
 */
const DASHBOARD_DIR = fileURLToPath(new URL('../../src/dashboard/', import.meta.url));
const PAGE_FILES = {
  'index.html': 'text/html; charset=utf-8',
  'dashboard.css': 'text/css; charset=utf-8',
  'print.css': 'text/css; charset=utf-8',
  'dashboard.js': 'text/javascript; charset=utf-8',
  'charts.js': 'text/javascript; charset=utf-8',
} as const;

/** Chart.js's self-contained browser build (the package's exports hide it, so it is found beside its main file). */
const chartLibraryPath = (): string => join(dirname(createRequire(import.meta.url).resolve('chart.js')), 'chart.umd.min.js');

const RunIdParams = Type.Object({ id: Type.String({ pattern: '^[A-Za-z0-9_-]{1,64}$' }) });
const Digits = (max: number) => Type.String({ pattern: `^[0-9]{1,${max}}$` });

/**
 * Registers everything for watching a run: the dashboard page (`GET /`, `/dashboard` and its
 * files under `/dashboard/`), its JSON routes (evaluations, throughput, top genomes, lineage) and
 * the Prometheus metrics (`GET /metrics`). Every answer is computed from the store, so it is the
 * same after a coordinator restart. The page's files are read here, so a missing one fails at boot.
 */
export function registerDashboardRoutes(app: FastifyInstance, opts: DashboardRouteOptions): void {
  const store = opts.manager.store;
  const assets = new Map<string, { body: Buffer; type: string }>();
  for (const [name, type] of Object.entries(PAGE_FILES)) assets.set(name, { body: readFileSync(join(DASHBOARD_DIR, name)), type });
  assets.set('vendor/chart.umd.min.js', { body: readFileSync(chartLibraryPath()), type: 'text/javascript; charset=utf-8' });

  const runOr404 = (id: string): RunRecord => {
    const run = store.getRun(id);
    if (!run) throw new HttpError('NB_NO_RUN', `no run with id ${id}`);
    return run;
  };

  const page = assets.get('index.html')!;
  const sendPage = async (_req: unknown, reply: import('fastify').FastifyReply) => reply.type(page.type).header('cache-control', 'no-cache').send(page.body);
  // The page and its static files hold no run data: anyone may load them. The data routes below
  // keep the status access rule (a private coordinator: open the page as /?token=JOIN_OR_ADMIN).
  const PUBLIC = { config: { access: 'public' as const } };
  app.get('/', PUBLIC, sendPage);
  app.get('/dashboard', PUBLIC, sendPage);
  app.get('/dashboard/:file', PUBLIC, async (req, reply) => {
    const file = (req.params as { file: string }).file;
    const asset = Object.hasOwn(PAGE_FILES, file) ? assets.get(file) : undefined;
    if (!asset) throw new HttpError('NB_NOT_FOUND', `the dashboard has no file ${file}`);
    return reply.type(asset.type).header('cache-control', 'no-cache').send(asset.body);
  });
  app.get('/dashboard/vendor/chart.umd.min.js', PUBLIC, async (_req, reply) => {
    const asset = assets.get('vendor/chart.umd.min.js')!;
    return reply.type(asset.type).header('cache-control', 'max-age=3600').send(asset.body);
  });

  app.get(
    '/runs/:id/evaluations',
    {
      schema: {
        params: RunIdParams,
        querystring: Type.Object({ since: Type.Optional(Digits(15)), limit: Type.Optional(Digits(4)) }, { additionalProperties: false }),
        response: { 200: EvaluationsResponseSchema },
      },
    },
    async (req): Promise<EvaluationsResponse> => {
      const run = runOr404((req.params as { id: string }).id);
      const q = req.query as { since?: string; limit?: string };
      const since = Number(q.since ?? 0);
      const limit = Math.min(Math.max(Number(q.limit ?? 500), 1), 2000);
      const rows = store.finishedSearchEvaluationsSince(run.id, since, limit);
      return {
        runId: run.id,
        cursor: rows.length ? rows[rows.length - 1]!.finishedAt! : since,
        more: rows.length === limit,
        evaluations: rows.map((e) => ({
          evaluationId: e.id,
          seq: e.seq,
          attempt: e.attempt,
          state: e.state as 'done' | 'failed',
          genomeHash: e.genomeHash,
          finishedAt: e.finishedAt!,
          valAccuracy: e.state === 'done' ? e.valAccuracy : null,
          ...(e.state === 'done' && e.result?.valRegression ? { valRmse: e.result.valRegression.rmse } : {}),
          params: e.params,
          flops: e.flops,
          trainSeconds: e.trainSeconds,
          samplesPerSecond: e.samplesPerSecond,
          workerId: e.workerId,
          backend: e.backend as BackendName | null,
        })),
      };
    },
  );

  app.get(
    '/runs/:id/throughput',
    {
      schema: {
        params: RunIdParams,
        querystring: Type.Object({ bucketSeconds: Type.Optional(Digits(6)) }, { additionalProperties: false }),
        response: { 200: ThroughputResponseSchema },
      },
    },
    async (req): Promise<ThroughputResponse> => {
      const run = runOr404((req.params as { id: string }).id);
      const from = run.searchStartedAt ?? run.createdAt;
      const to = run.finishedAt ?? Date.now();
      const asked = Number((req.query as { bucketSeconds?: string }).bucketSeconds ?? 0);
      // At most 2000 buckets, whatever was asked.
      const bucketSeconds = Math.max(asked || chooseBucketSeconds(to - from), Math.ceil((to - from) / 1000 / 2000), 1);
      return { runId: run.id, bucketSeconds, buckets: throughputBuckets(store.trainingSpans(run.id), { from, to, bucketSeconds }) };
    },
  );

  app.get(
    '/runs/:id/top',
    {
      schema: {
        params: RunIdParams,
        querystring: Type.Object({ limit: Type.Optional(Digits(3)) }, { additionalProperties: false }),
        response: { 200: TopGenomesResponseSchema },
      },
    },
    async (req): Promise<TopGenomesResponse> => {
      const run = runOr404((req.params as { id: string }).id);
      const limit = Math.min(Math.max(Number((req.query as { limit?: string }).limit ?? 10), 1), 100);
      // The best evaluation of each distinct genome (a genome may be trained more than once).
      const seen = new Set<string>();
      const best = store.topEvaluations(run.id, Math.min(limit * 5, 500)).filter((e) => !seen.has(e.genomeHash) && seen.add(e.genomeHash)).slice(0, limit);
      return {
        runId: run.id,
        genomes: best.map((e, i) => ({
          rank: i + 1,
          evaluationId: e.id,
          seq: e.seq,
          genomeHash: e.genomeHash,
          summary: e.summary,
          valAccuracy: e.valAccuracy!,
          ...(e.result?.valRegression ? { valRmse: e.result.valRegression.rmse } : {}),
          params: e.params,
          flops: e.flops,
          trainSeconds: e.result?.trainSeconds ?? null,
          workerId: e.workerId,
        })),
      };
    },
  );

  app.get(
    '/runs/:id/lineage/:genomeHash',
    {
      schema: {
        params: Type.Object({ id: RunIdParams.properties.id, genomeHash: Type.String({ pattern: '^[0-9a-f]{64}$' }) }),
        response: { 200: LineageResponseSchema },
      },
    },
    async (req): Promise<LineageResponse> => {
      const { id, genomeHash } = req.params as { id: string; genomeHash: string };
      const run = runOr404(id);
      if (!store.getGenome(genomeHash)) throw new HttpError('NB_NOT_FOUND', `no genome ${genomeHash} in the store`);
      const chain = store.lineageChain(run.id, genomeHash);
      const ancestorHash = chain.length ? chain[0]!.parentHash : genomeHash;
      const scores = store.bestAccuracyByGenome(run.id, [ancestorHash, ...chain.map((l) => l.childHash)]);
      const target = run.dataset.manifest.target;
      const describe = (hash: string): LineageGenome => {
        const g = store.getGenome(hash);
        const fitness = scores.get(hash) ?? null;
        // A regression run's best fitness read back as RMSE in the target's units (fitness = 1 / (1 + RMSE / std)).
        const valRmse = target && fitness !== null ? { valRmse: rmseFromFitness(fitness) * target.std } : {};
        return { genomeHash: hash, summary: g?.summary ?? '(not in the store)', params: g?.params ?? 0, flops: g?.flops ?? 0, valAccuracy: fitness, ...valRmse };
      };
      return {
        runId: run.id,
        genomeHash,
        ancestor: describe(ancestorHash),
        steps: chain.map((l) => ({ evaluationId: l.evaluationId, operator: l.operator, detail: l.detail, parentHash: l.parentHash, child: describe(l.childHash) })),
      };
    },
  );

  registerMetricsRoute(app, { manager: opts.manager, queue: opts.queue });
}
