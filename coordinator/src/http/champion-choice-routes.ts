import type { FastifyInstance } from 'fastify';
import { Type } from '@sinclair/typebox';
import { Value } from '@sinclair/typebox/value';
import {
  ChampionPickRequestSchema,
  ChampionPickResponseSchema,
  EnsembleRequestResponseSchema,
  EnsembleRequestSchema,
  EnsembleSettingsSchema,
  FrontResponseSchema,
  fitnessInWords,
  type EnsembleRequestResponse,
  type EnsembleSettings,
  type ChampionPickResponse,
  type FrontResponse,
} from '@netbreeder/shared-types';
import { paretoFront, type Observation, type SizeObjective } from '../search/index.js';
import type { RunManager } from '../run/run-manager.js';
import { pickChampion, requestEnsemble } from '../champion/champion-choice.js';
import type { RunRecord } from '../store/run-store.js';
import { ensembleFiles, ENSEMBLE_FILE_PATTERN } from '../champion/ensemble-files.js';
import { HttpError } from './error-codes.js';

const RunId = Type.String({ pattern: '^[A-Za-z0-9_-]{1,64}$' });

/**
 * Routes for choosing what a run hands over: its accuracy-against-cost front (`GET /runs/:id/front`,
 * status access, for the dashboard), the user's pick of the champion (`POST /runs/:id/champion/pick`,
 * admin; after the run finished the pick is trained and replaces the champion), a new averaging
 * ensemble for a finished run (`POST /runs/:id/ensemble`, admin) and the ensemble's files
 * (`GET /runs/:id/ensemble/files/:name`, admin, like the champion's).
 */
export function registerChampionChoiceRoutes(app: FastifyInstance, opts: { manager: RunManager }): void {
  const store = opts.manager.store;
  const runOr404 = (id: string) => {
    const run = store.getRun(id);
    if (!run) throw new HttpError('NB_NO_RUN', `no run with id ${id}`);
    return run;
  };

  // The dashboard asks every few seconds; the answer only changes when a result is recorded.
  const fronts = new Map<string, { done: number; answer: FrontResponse }>();

  app.get(
    '/runs/:id/front',
    {
      schema: {
        params: Type.Object({ id: RunId }),
        querystring: Type.Object({ objective: Type.Optional(Type.Union([Type.Literal('params'), Type.Literal('flops'), Type.Literal('latency')])) }, { additionalProperties: false }),
        response: { 200: FrontResponseSchema },
      },
    },
    async (req): Promise<FrontResponse> => {
      const run = runOr404((req.params as { id: string }).id);
      const runObjective: SizeObjective = run.config.search.objective ?? 'params';
      const objective = (req.query as { objective?: SizeObjective }).objective ?? runObjective;
      const done = store.counts(run.id).done;
      const cached = fronts.get(`${run.id}:${objective}`);
      if (cached?.done === done) return cached.answer;
      const rows = store.finishedSearchEvaluationsSince(run.id, 0, 100_000).filter((e) => e.state === 'done' && e.valAccuracy !== null);
      const observations: Observation[] = rows.map((e) => ({
        evaluationId: e.id,
        genomeHash: e.genomeHash,
        genome: e.job.genome,
        fitness: e.valAccuracy!,
        params: e.params,
        flops: e.flops,
        ...(e.result?.latencyMsPerSample === undefined ? {} : { latency: e.result.latencyMsPerSample }),
      }));
      const front = paretoFront(observations, objective);
      const onFront = new Set(front.map((o) => o.evaluationId));
      const withCost = observations.filter((o) => typeof o[objective] === 'number');
      const answer: FrontResponse = {
        runId: run.id,
        objective,
        multiObjective: run.config.search.algorithm === 'pareto-evolution',
        runObjective,
        points: withCost.map((o) => ({ evaluationId: o.evaluationId, genomeHash: o.genomeHash, valAccuracy: o.fitness, cost: o[objective]!, onFront: onFront.has(o.evaluationId) })),
        front: front.map((o) => o.evaluationId),
        withoutCost: observations.length - withCost.length,
      };
      fronts.set(`${run.id}:${objective}`, { done, answer });
      return answer;
    },
  );

  app.post(
    '/runs/:id/champion/pick',
    { config: { access: 'admin' }, schema: { params: Type.Object({ id: RunId }), body: ChampionPickRequestSchema, response: { 200: ChampionPickResponseSchema } } },
    async (req): Promise<ChampionPickResponse> => {
      const run = runOr404((req.params as { id: string }).id);
      const { genomeHash } = req.body as { genomeHash: string };
      // A refusal is a ChampionChoiceError, whose code (NB_RUN_STATE, NB_NOT_A_RESULT) the error handler answers with.
      const picked = pickChampion(store, run.id, genomeHash, Date.now(), opts.manager.currentRun()?.id ?? null);
      if (picked.retraining) void opts.manager.tick(); // queue its final training now, not at the next pass
      return { runId: run.id, genomeHash, evaluationId: picked.evaluationId, valAccuracy: picked.valAccuracy, validation: validationInWords(run, picked.valAccuracy), retraining: picked.retraining };
    },
  );

  app.post(
    '/runs/:id/ensemble',
    { config: { access: 'admin' }, schema: { params: Type.Object({ id: RunId }), body: EnsembleRequestSchema, response: { 202: EnsembleRequestResponseSchema } } },
    async (req, reply) => {
      const run = runOr404((req.params as { id: string }).id);
      const settings = Value.Default(EnsembleSettingsSchema, structuredClone(req.body)) as EnsembleSettings;
      const asked = requestEnsemble(store, run.id, settings, Date.now(), opts.manager.currentRun()?.id ?? null);
      void opts.manager.tick(); // queue the members' trainings now
      const answer: EnsembleRequestResponse = { runId: run.id, round: asked.round, members: asked.members.map((m) => ({ ...m, validation: validationInWords(run, m.valAccuracy) })) };
      return reply.status(202).send(answer);
    },
  );

  app.get(
    '/runs/:id/ensemble/files/:name',
    { config: { access: 'admin' }, schema: { params: Type.Object({ id: RunId, name: Type.String({ pattern: ENSEMBLE_FILE_PATTERN }) }) } },
    async (req, reply) => {
      const { id, name } = req.params as { id: string; name: string };
      const files = ensembleFiles(store, runOr404(id));
      const file = files?.get(name);
      if (!files) throw new HttpError('NB_NO_ENSEMBLE', `run ${id} has no scored ensemble`);
      if (!file) throw new HttpError('NB_NOT_FOUND', `the ensemble of run ${id} has no file ${name}`);
      return reply.type(name.endsWith('.json') ? 'application/json' : 'application/octet-stream').send(file);
    },
  );
}

/** A run's validation fitness for a person (a percentage, or a regression run's RMSE in its target's units). */
const validationInWords = (run: RunRecord, fitness: number): string => {
  const target = run.dataset.manifest.target;
  return `validation ${fitnessInWords(fitness, target)}${target ? ` ${target.column}` : ''}`;
};
