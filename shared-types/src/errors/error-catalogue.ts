/**
 * Every error code netbreeder raises, in one table: the HTTP status it answers with (null when it
 * never crosses HTTP), whether the same attempt, unchanged, may succeed later (`retryable`), and
 * one sentence on how to fix it. {@link NetbreederError} takes its status, retry advice and fix
 * from here; docs/error-codes.md is generated from it (`npm run docs:errors`), and a test fails
 * when the page and the table differ.
 */
export interface ErrorCatalogueEntry {
  /** The HTTP status of the coordinator's answer, or null when the error is never sent over HTTP. */
  status: number | null;
  /** True when trying again unchanged (later, or on another worker) may succeed. */
  retryable: boolean;
  /** One sentence: what to do about it. */
  fix: string;
}

export const ERROR_CATALOGUE = {
  // The coordinator's HTTP API: every answer `{ error: { code, message, fix } }` uses one of these.
  NB_BAD_REQUEST: { status: 400, retryable: false, fix: 'fix the request body or parameters as the message says' },
  NB_NOT_FOUND: { status: 404, retryable: false, fix: 'check the path; GET /status lists the current run' },
  NB_NO_RUN: { status: 404, retryable: false, fix: 'start a run first (netbreeder coordinator --run FILE)' },
  NB_NO_CHAMPION: { status: 404, retryable: true, fix: "wait until the run's state is 'finished'" },
  NB_UNKNOWN_DATASET: { status: 404, retryable: false, fix: 'the dataset hash is not one of this coordinator; check the job payload' },
  NB_UNAUTHORIZED: { status: 401, retryable: false, fix: 'pass the join token (workers) or the admin token (run control, export)' },
  NB_WORKER_REVOKED: { status: 403, retryable: false, fix: 'this worker id was revoked by an admin; ask them, or stop this worker' },
  NB_WORKER_INCOMPATIBLE: { status: 409, retryable: false, fix: 'install the same netbreeder version on the worker as on the coordinator, then start the worker again' },
  NB_RUN_STATE: { status: 409, retryable: false, fix: "check the run's state in GET /status; the action does not apply to it" },
  NB_GENOME_REJECTED: { status: 400, retryable: false, fix: "change the genome as the issues say; it must obey the run's search space" },
  NB_CHECKPOINT_HASH_MISMATCH: { status: 400, retryable: true, fix: 'the body is not the checkpoint its sha256 names (corrupted on the way or in memory); nothing was stored, upload it again' },
  NB_BAD_CHECKPOINT: { status: 400, retryable: false, fix: 'send a checkpoint file of the documented format as application/octet-stream' },
  NB_CHECKPOINT_TOO_LARGE: { status: 413, retryable: false, fix: "the checkpoint is above the run's evaluation.checkpointMaxMb; raise it in the run file or use smaller genomes" },
  NB_CHECKPOINT_REFUSED: { status: 409, retryable: false, fix: 'the checkpoint names no evaluation this coordinator is waiting for (unknown, finished, or another genome); nothing was stored' },
  NB_UNKNOWN_CHECKPOINT: { status: 404, retryable: false, fix: 'no checkpoint with that hash (or for that evaluation) is held; train from epoch 0' },
  NB_NOT_A_RESULT: { status: 400, retryable: false, fix: 'pick a genome with a finished search result in this run (GET /runs/:id/front lists them)' },
  NB_NO_ENSEMBLE: { status: 404, retryable: false, fix: 'set champion.ensemble in the run file; the ensemble is scored when the run finishes' },
  NB_INTERNAL: { status: 500, retryable: true, fix: "a bug in netbreeder: see the log for the stack and report it with the message" },

  // Messages, files and settings read at a boundary.
  NB_INVALID_MESSAGE: { status: null, retryable: false, fix: 'send a message that matches its schema in shared-types; the message lists every field at fault' },
  NB_BAD_USAGE: { status: null, retryable: false, fix: 'run the command again with the arguments the message names (--help lists them)' },
  NB_BAD_RUN_FILE: { status: null, retryable: false, fix: 'give a readable run file of valid JSON (netbreeder init drafts one)' },
  NB_INVALID_GENOME: { status: null, retryable: false, fix: 'check the genome with checkGenome and change it as the issues say; no retry can fix it' },

  // Datasets refused before a run starts (coordinator/src/datasets, importers, init).
  NB_DATASET_BAD_OPTIONS: { status: null, retryable: false, fix: 'pass a value in the range the message names' },
  NB_DATASET_SHAPE_MISMATCH: { status: null, retryable: false, fix: 'build the samples so that features.length = count × product(inputShape) and labels.length = count' },
  NB_DATASET_TOO_FEW_CLASSES: { status: null, retryable: false, fix: 'give at least two classes' },
  NB_DATASET_BAD_LABEL: { status: null, retryable: false, fix: 'map every label to the index of its class name' },
  NB_DATASET_CLASS_TOO_SMALL: { status: null, retryable: false, fix: 'add samples of that class, or drop or merge the class' },
  NB_DATASET_NO_TRAINING_DATA: { status: null, retryable: false, fix: 'make validation + test smaller than 1' },
  NB_DATASET_UNREADABLE: { status: null, retryable: false, fix: "check the path (relative to the run file's folder) and its permissions" },
  NB_DATASET_EMPTY: { status: null, retryable: false, fix: 'point the run file at the file that holds the data' },
  NB_DATASET_BAD_CSV: { status: null, retryable: false, fix: 'fix the line the message names (one value per column; quote fields that contain the delimiter)' },
  NB_DATASET_NO_SUCH_COLUMN: { status: null, retryable: false, fix: 'use a name from the header the message lists' },
  NB_DATASET_NOT_A_NUMBER: { status: null, retryable: false, fix: 'fix the cell, mark it missing, or list the column in categoricalColumns' },
  NB_DATASET_MISSING_VALUE: { status: null, retryable: false, fix: 'fill the cell, or choose missing: "fill" or "drop-row"' },
  NB_DATASET_BAD_IMAGE: { status: null, retryable: false, fix: 'replace or remove the file' },
  NB_DATASET_MIXED_IMAGE_SIZES: { status: null, retryable: false, fix: 'set dataset.imageSize so every image is resized' },
  NB_DATASET_BAD_IDX: { status: null, retryable: false, fix: 'use the IDX file itself (not an archive of it), whole' },
  NB_DATASET_COUNT_MISMATCH: { status: null, retryable: false, fix: 'pair the images file with its own labels file' },
  NB_DATASET_NUMERIC_LABEL: { status: null, retryable: false, fix: 'set dataset.task to "regression" (or "classification" if the numbers are class codes)' },
  NB_DATASET_CONSTANT_TARGET: { status: null, retryable: false, fix: 'point labelColumn at a column whose values vary' },
  NB_DATASET_TOO_LARGE: { status: null, retryable: false, fix: "use fewer or smaller samples (a smaller imageSize), or raise maxDatasetMb and every worker's --memory-cap" },
  NB_DATASET_NO_LABEL_COLUMN: { status: null, retryable: false, fix: 'name the column to predict with --label COLUMN' },
  NB_DATASET_NO_FEATURES: { status: null, retryable: false, fix: 'give a table with at least one usable feature column besides the label' },

  // The search (coordinator/src/search) and the store (coordinator/src/store).
  NB_NO_VALID_MUTATION: { status: null, retryable: true, fix: 'widen the search space (more layer kinds, larger caps) so mutations can find valid children' },
  NB_NO_MINIMAL_GENOME: { status: null, retryable: false, fix: "raise the search space's maxParams or maxFlops: even the smallest network breaks them" },
  NB_BAD_SEARCH_SNAPSHOT: { status: null, retryable: false, fix: 'resume the run with the algorithm and settings it started with, on the netbreeder version that wrote it' },
  NB_BAD_SEARCH_SETTINGS: { status: null, retryable: false, fix: "set the run file's search object within the ranges docs/run-file.md gives" },
  NB_ILLEGAL_RUN_TRANSITION: { status: null, retryable: false, fix: "a bug in the caller: check the run's state (store/run-lifecycle.ts) before changing it" },
  NB_NO_STORE: { status: null, retryable: false, fix: "pass the coordinator's --data-dir, the folder that holds its store" },
  NB_STORE_VERSION: { status: null, retryable: false, fix: 'open the store with the netbreeder version that wrote it' },
  NB_STORE_DAMAGED: { status: null, retryable: false, fix: 'restore the store file from a copy; a run cannot continue from a damaged one' },
  NB_STORE_CHECKPOINT_FAILED: { status: null, retryable: true, fix: "check the disk under --data-dir (space, permissions); the store falls back to SQLite's own checkpoints meanwhile" },
  NB_REPLAY_UNAVAILABLE: { status: null, retryable: false, fix: 'replay only runs recorded by a coordinator with the decision log (store migration 5 or later)' },

  // Talking to other processes.
  NB_REDIS_UNREACHABLE: { status: null, retryable: true, fix: 'start Redis (apt-get install redis-server) or pass --redis URL of one that runs' },
  NB_COORDINATOR_UNREACHABLE: { status: null, retryable: true, fix: 'start the coordinator, or pass --coordinator URL of the one that runs' },
  NB_COORDINATOR_REFUSED: { status: null, retryable: false, fix: "do what the coordinator's message says; it names what it refused and why" },

  // The worker's training engine (worker/src/training) and dataset cache (worker/src/agent).
  NB_TRAINING_FAILED: { status: null, retryable: true, fix: "nothing to do: another attempt trains the genome again; if every attempt fails, see the worker's log" },
  NB_GENOME_TOO_LARGE: { status: null, retryable: false, fix: "cap the search space's parameters, FLOPs or batch size lower, or raise the worker's --memory-cap" },
  NB_TRAINING_PROCESS_FAILED: { status: null, retryable: true, fix: "nothing to do: the job is retried in a fresh training process; if it keeps failing, see the worker's log" },
  NB_TRAINING_ABORTED: { status: null, retryable: true, fix: 'nothing to do: the training was cancelled on purpose and its job runs again' },
  NB_SHARD_MISMATCH: { status: null, retryable: false, fix: "the training shard does not match the job's dataset manifest: start the run again so the coordinator writes the shard anew" },
  NB_BAD_SHARD: { status: null, retryable: true, fix: "delete the worker's cached copy and fetch the shard again" },
  NB_CHECKPOINT_MISMATCH: { status: null, retryable: false, fix: 'nothing to do: the training starts from epoch 0 instead of the checkpoint' },
  NB_BACKEND_UNAVAILABLE: { status: null, retryable: true, fix: 'on this worker, reinstall @tensorflow/tfjs and @tensorflow/tfjs-backend-wasm at the versions package.json names (npm ci)' },
  NB_DATASET_DOWNLOAD_FAILED: { status: null, retryable: true, fix: 'check that the coordinator is running and reachable from this worker; the download is tried again' },
  NB_DATASET_CACHE_TOO_SMALL: { status: null, retryable: true, fix: "raise the worker's --cache-max-mb above the dataset's size" },

  // `netbreeder predict` on new data (coordinator/src/predict).
  NB_PREDICT_NO_EXPORT: { status: null, retryable: false, fix: 'export the run again with this version (netbreeder export)' },
  NB_PREDICT_BAD_EXPORT: { status: null, retryable: false, fix: 'use the netbreeder version that wrote the export' },
  NB_PREDICT_MISSING_COLUMN: { status: null, retryable: false, fix: 'add the named columns (same header as training)' },
  NB_PREDICT_BAD_CELL: { status: null, retryable: false, fix: 'fix the named line' },
  NB_PREDICT_BAD_IMAGE: { status: null, retryable: false, fix: 'replace, resize or remove the named file' },
  NB_PREDICT_BAD_IDX: { status: null, retryable: false, fix: 'use IDX samples of the shape preprocessing.json names' },
  NB_PREDICT_WRONG_INPUT: { status: null, retryable: false, fix: 'prepare the inputs as preprocessing.json says and call predictPrepared' },
  NB_ONNX_EXPORT: { status: null, retryable: false, fix: 'export the run again; if it fails again, report it with the export\'s genome.json (model.json and weights.bin are not affected)' },
} as const satisfies Record<string, ErrorCatalogueEntry>;

/** A code of the catalogue. */
export type ErrorCode = keyof typeof ERROR_CATALOGUE;

/** The codes the coordinator's HTTP API answers with (those with a status). */
export type HttpErrorCode = { [C in ErrorCode]: (typeof ERROR_CATALOGUE)[C]['status'] extends number ? C : never }[ErrorCode];

/** True when `code` is a code of the catalogue (say, one read from another process). */
export const isErrorCode = (code: unknown): code is ErrorCode => typeof code === 'string' && Object.hasOwn(ERROR_CATALOGUE, code);

/** The catalogue's entry for `code`. */
export const errorEntry = (code: ErrorCode): ErrorCatalogueEntry => ERROR_CATALOGUE[code];
