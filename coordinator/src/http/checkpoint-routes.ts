import { createReadStream, existsSync } from 'node:fs';
import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { Type } from '@sinclair/typebox';
import { CheckpointFormatError, decodeCheckpointHeader, sha256Hex, type CheckpointHeader } from '@netbreeder/shared-types';
import type { RunManager } from '../run/run-manager.js';
import { checkpointRef } from '../checkpoints/checkpoint-files.js';
import { checkpointSettings } from '../checkpoints/checkpoint-policy.js';
import { HttpError, type HttpErrorCode } from './error-codes.js';

/** The largest body the upload route reads at all; each run's own cap (`evaluation.checkpointMaxMb`, at most this) is checked too. */
const MAX_CHECKPOINT_BYTES = 1024 * 2 ** 20;
const Sha256Params = Type.Object({ sha256: Type.String({ pattern: '^[0-9a-f]{64}$' }) });
const EvaluationParams = Type.Object({ id: Type.String({ pattern: '^[A-Za-z0-9_-]{1,80}$' }) });

interface CheckpointRouteParts {
  manager: RunManager;
  /** Records a refused request in the event log. */
  reject: (req: { method: string; url: string }, reason: string) => void;
  send: (reply: FastifyReply, code: HttpErrorCode, message: string, extra?: Record<string, unknown>) => FastifyReply;
}

/**
 * Training checkpoints, for workers (join token):
 * - `PUT /checkpoints/:sha256`: a checkpoint file as `application/octet-stream`. Stored only when
 *   the body's sha256 is the one named, its header is valid, it fits the run's size cap and it
 *   belongs to a search evaluation still owed a result; otherwise refused and nothing changes.
 * - `GET /checkpoints/:sha256`: the file (the worker verifies the hash).
 * - `GET /evaluations/:id/checkpoint`: the latest checkpoint of that evaluation's sequence (any attempt).
 */
export function registerCheckpointRoutes(app: FastifyInstance, parts: CheckpointRouteParts): void {
  const { manager, reject, send } = parts;
  const store = manager.store;
  const capOf = (runId: string | undefined) => {
    const run = runId ? store.getRun(runId) : manager.currentRun();
    return run ? checkpointSettings(run.config).maxBytes : MAX_CHECKPOINT_BYTES;
  };
  app.addContentTypeParser('application/octet-stream', { parseAs: 'buffer', bodyLimit: MAX_CHECKPOINT_BYTES }, (_req, body, done) => done(null, body));

  app.put(
    '/checkpoints/:sha256',
    {
      config: { access: 'join' },
      bodyLimit: MAX_CHECKPOINT_BYTES,
      schema: { params: Sha256Params },
      // Refuse an announced oversize body before reading it.
      onRequest: async (req: FastifyRequest, reply: FastifyReply) => {
        const length = Number(req.headers['content-length'] ?? 0);
        if (length > capOf(undefined)) {
          reject(req, `checkpoint of ${length} bytes is above the cap`);
          return send(reply, 'NB_CHECKPOINT_TOO_LARGE', `a checkpoint of ${length} bytes is above this run's cap of ${capOf(undefined)} bytes`);
        }
      },
    },
    async (req, reply) => {
      const { sha256 } = req.params as { sha256: string };
      const body = req.body;
      if (!Buffer.isBuffer(body) || body.length === 0) throw new HttpError('NB_BAD_CHECKPOINT', 'the body must be a checkpoint file sent as application/octet-stream');
      const actual = sha256Hex(body);
      if (actual !== sha256) {
        store.logEvent(null, 'checkpoint-refused', { claimed: sha256, actual, bytes: body.length, reason: 'hash mismatch' });
        reject(req, `checkpoint body has sha256 ${actual}, not ${sha256}`);
        return send(reply, 'NB_CHECKPOINT_HASH_MISMATCH', `the body (${body.length} bytes) has sha256 ${actual}, not the ${sha256} it was sent as`);
      }
      let header: CheckpointHeader;
      try {
        header = decodeCheckpointHeader(body).header;
      } catch (err) {
        if (err instanceof CheckpointFormatError) reject(req, err.message); // answered as NB_BAD_CHECKPOINT, its code
        throw err;
      }
      const ev = store.getEvaluation(header.evaluationId);
      const problem = !ev
        ? `no evaluation ${header.evaluationId}`
        : ev.kind !== 'search' || ev.runId !== header.runId || ev.genomeHash !== header.genomeHash
          ? `evaluation ${ev.id} is not a search training of genome ${header.genomeHash.slice(0, 12)} in run ${header.runId}`
          : ev.state !== 'queued' && ev.state !== 'running'
            ? `evaluation ${ev.id} is already ${ev.state}`
            : null;
      if (problem) {
        store.logEvent(ev?.runId ?? null, 'checkpoint-refused', { evaluationId: header.evaluationId, sha256, reason: problem });
        throw new HttpError('NB_CHECKPOINT_REFUSED', problem);
      }
      const cap = capOf(ev!.runId);
      if (body.length > cap) throw new HttpError('NB_CHECKPOINT_TOO_LARGE', `the checkpoint has ${body.length} bytes, above this run's cap of ${cap} bytes`);
      const { latest } = await manager.checkpoints.put(body, sha256, header, ev!, Date.now());
      return reply.status(201).send({ sha256, evaluationId: ev!.id, epoch: header.epoch, final: header.final, latest });
    },
  );

  app.get('/checkpoints/:sha256', { config: { access: 'join' }, schema: { params: Sha256Params } }, async (req, reply) => {
    const { sha256 } = req.params as { sha256: string };
    const held = store.checkpointBySha(sha256);
    if (!held || !existsSync(held.path)) throw new HttpError('NB_UNKNOWN_CHECKPOINT', `no checkpoint ${sha256} on this coordinator`);
    return reply.type('application/octet-stream').send(createReadStream(held.path));
  });

  app.get('/evaluations/:id/checkpoint', { config: { access: 'join' }, schema: { params: EvaluationParams } }, async (req) => {
    const { id } = req.params as { id: string };
    const ev = store.getEvaluation(id);
    const held = ev ? store.latestCheckpoint(ev.runId, ev.seq) : null;
    if (!held) throw new HttpError('NB_UNKNOWN_CHECKPOINT', `no checkpoint held for evaluation ${id}`);
    return checkpointRef(held);
  });
}
