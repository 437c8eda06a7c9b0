/**
 * Every error the coordinator's HTTP API answers with: a stable code (what tests and clients check),
 * its HTTP status, and what to do about it. Documented as a table in DEVELOPERS.md.
 */
export const HTTP_ERRORS = {
  NB_BAD_REQUEST: { status: 400, fix: 'fix the request body or parameters as the message says' },
  NB_NOT_FOUND: { status: 404, fix: 'check the path; GET /status lists the current run' },
  NB_NO_RUN: { status: 404, fix: 'start a run first (netbreeder coordinator --run FILE)' },
  NB_NO_CHAMPION: { status: 404, fix: "wait until the run's state is 'finished'" },
  NB_UNKNOWN_DATASET: { status: 404, fix: 'the dataset hash is not one of this coordinator; check the job payload' },
  NB_UNAUTHORIZED: { status: 401, fix: 'pass the join token (workers) or the admin token (run control, export)' },
  NB_WORKER_REVOKED: { status: 403, fix: 'this worker id was revoked by an admin; ask them, or stop this worker' },
  NB_WORKER_INCOMPATIBLE: { status: 409, fix: 'install the same netbreeder version on the worker as on the coordinator, then start the worker again' },
  NB_RUN_STATE: { status: 409, fix: "check the run's state in GET /status; the action does not apply to it" },
  NB_GENOME_REJECTED: { status: 400, fix: "change the genome as the issues say; it must obey the run's search space" },
  NB_CHECKPOINT_HASH_MISMATCH: { status: 400, fix: 'the body is not the checkpoint its sha256 names (corrupted on the way or in memory); nothing was stored, upload it again' },
  NB_BAD_CHECKPOINT: { status: 400, fix: 'send a checkpoint file of the documented format as application/octet-stream' },
  NB_CHECKPOINT_TOO_LARGE: { status: 413, fix: "the checkpoint is above the run's evaluation.checkpointMaxMb; raise it in the run file or use smaller genomes" },
  NB_CHECKPOINT_REFUSED: { status: 409, fix: 'the checkpoint names no evaluation this coordinator is waiting for (unknown, finished, or another genome); nothing was stored' },
  NB_UNKNOWN_CHECKPOINT: { status: 404, fix: 'no checkpoint with that hash (or for that evaluation) is held; train from epoch 0' },
  NB_NOT_A_RESULT: { status: 400, fix: 'pick a genome with a finished search result in this run (GET /runs/:id/front lists them)' },
  NB_NO_ENSEMBLE: { status: 404, fix: 'set champion.ensemble in the run file; the ensemble is scored when the run finishes' },
  NB_INTERNAL: { status: 500, fix: "see the coordinator's log" },
} as const;

export type HttpErrorCode = keyof typeof HTTP_ERRORS;

/** An error that becomes an HTTP answer `{ error: { code, message, fix } }`. */
export class HttpError extends Error {
  constructor(
    readonly code: HttpErrorCode,
    message: string,
  ) {
    super(message);
    this.name = 'HttpError';
  }

  get status(): number {
    return HTTP_ERRORS[this.code].status;
  }
}
