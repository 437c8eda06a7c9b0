import { runEventValidator, type RunEventDetail, type RunEventKind } from '@netbreeder/shared-types';
import type Database from 'better-sqlite3';
import type { EvaluationJob, EvaluationResult, RunConfig, RunState, SearchStep, WorkerHeartbeat } from '@netbreeder/shared-types';
import { ChampionsTable } from './champions-table.js';
import { CheckpointsTable } from './checkpoints-table.js';
import { EvaluationsTable } from './evaluations-table.js';
import { EventLog } from './event-log.js';
import type {
  ChampionRecord,
  CheckpointRecord,
  EnsembleMemberRecord,
  EvaluationRecord,
  EvaluationState,
  EventRecord,
  FinishedSearchEvaluation,
  GenomeRecord,
  LineageLink,
  RankedEvaluation,
  RecordOutcome,
  RunRecord,
  StoredDataset,
  TrainingSpan,
  WorkerSeen,
} from './records.js';
import { RunsTable } from './runs-table.js';
import { SearchLogTable } from './search-log-table.js';
import { StoreDatabase, type StoreDatabaseOptions } from './store-database.js';
import { WorkersTable } from './workers-table.js';

export type {
  ChampionRecord,
  CheckpointRecord,
  EnsembleMemberRecord,
  EvaluationRecord,
  EvaluationState,
  GenomeRecord,
  LineageLink,
  RecordOutcome,
  RunRecord,
  StoredDataset,
} from './records.js';

export interface RunStoreOptions {
  /** See {@link StoreDatabaseOptions.backgroundCheckpoints}. */
  backgroundCheckpoints?: StoreDatabaseOptions['backgroundCheckpoints'];
  /**
   * Told when heartbeats taken with {@link RunStore.takeHeartbeat} could not be written (soft
   * state: each worker sends its next one within seconds). @default the error is thrown
   */
  onHeartbeatWriteError?: (err: Error, heartbeats: number) => void;
}

/** Each store's connection, for the store's companion tables (./trust-store.ts). */
const databases = new WeakMap<RunStore, StoreDatabase>();

/** The connection of `store`: for the store's companion tables (./trust-store.ts) only, so their writes join its transactions. */
export function storeDatabase(store: RunStore): StoreDatabase {
  return databases.get(store)!;
}

/**
 * The coordinator's store: one SQLite file (./store-database.ts). Every write that must be atomic
 * with another goes through {@link RunStore.transaction}. Results are recorded by evaluation id
 * with a state guard, so a result delivered twice is counted once. This class only hands each call
 * to the module of its tables (./runs-table.ts, ./evaluations-table.ts, ./search-log-table.ts,
 * ./workers-table.ts, ./champions-table.ts, ./checkpoints-table.ts, ./event-log.ts); their
 * methods say what each does.
 */
export class RunStore {
  private readonly db: StoreDatabase;
  private readonly runs: RunsTable;
  private readonly evals: EvaluationsTable;
  private readonly searchLog: SearchLogTable;
  private readonly workers: WorkersTable;
  private readonly champions: ChampionsTable;
  private readonly checkpoints: CheckpointsTable;
  private readonly eventLog: EventLog;

  constructor(path: string, options: RunStoreOptions = {}) {
    this.db = new StoreDatabase(path, options);
    databases.set(this, this.db);
    this.runs = new RunsTable(this.db);
    this.evals = new EvaluationsTable(this.db);
    this.searchLog = new SearchLogTable(this.db);
    this.workers = new WorkersTable(this.db, this.evals, options.onHeartbeatWriteError);
    this.champions = new ChampionsTable(this.db);
    this.checkpoints = new CheckpointsTable(this.db);
    this.eventLog = new EventLog(this.db);
  }

  /** The cached prepared statement for `sql` (for checks of the store's query plans). */
  statement(sql: string): Database.Statement {
    return this.db.statement(sql);
  }

  /** Runs `fn` in one transaction: all of its writes land, or none ({@link StoreDatabase.transaction}). */
  transaction<T>(fn: () => T): T {
    return this.db.transaction(fn);
  }

  close(): void {
    this.db.close();
  }

  // ---- runs (./runs-table.ts) ----------------------------------------------------------------

  createRun(run: { id: string; name: string; config: RunConfig; seed: number; dataset: StoredDataset; now: number }): void {
    this.runs.create(run);
  }

  getRun(id: string): RunRecord | null {
    return this.runs.get(id);
  }

  listRuns(): RunRecord[] {
    return this.runs.list();
  }

  /** The newest run that has not ended, to resume after a restart. */
  unfinishedRun(): RunRecord | null {
    return this.runs.unfinished();
  }

  /** Moves a run to `state`; throws `IllegalRunTransitionError` (./run-lifecycle.ts) for a change its lifecycle does not allow. */
  setRunState(id: string, state: RunState, opts: { now?: number; failure?: string } = {}): void {
    this.runs.setState(id, state, opts);
  }

  /** The search algorithm's last saved state (parsed JSON), or null before the first proposal. */
  searchSnapshot(runId: string): unknown {
    return this.runs.searchSnapshot(runId);
  }

  saveSearchSnapshot(runId: string, snapshot: unknown): void {
    this.runs.saveSearchSnapshot(runId, snapshot);
  }

  // ---- genomes and evaluations (./evaluations-table.ts) --------------------------------------

  putGenome(g: GenomeRecord): void {
    this.evals.putGenome(g);
  }

  getGenome(hash: string): GenomeRecord | null {
    return this.evals.getGenome(hash);
  }

  /** Inserts a queued evaluation; with `countsAsProposal` the run's proposal counter moves too. */
  addEvaluation(job: EvaluationJob, seq: number, now: number, countsAsProposal: boolean): void {
    this.evals.add(job, seq, now);
    if (countsAsProposal) this.runs.countProposal(job.runId);
  }

  getEvaluation(id: string): EvaluationRecord | null {
    return this.evals.get(id);
  }

  pendingEvaluations(runId: string): EvaluationRecord[] {
    return this.evals.pending(runId);
  }

  markRunning(id: string, workerId: string, now: number): boolean {
    return this.evals.markRunning(id, workerId, now);
  }

  recordResult(id: string, result: EvaluationResult, now: number): RecordOutcome {
    return this.evals.recordResult(id, result, now);
  }

  recordFailure(id: string, error: string, now: number): RecordOutcome {
    return this.evals.recordFailure(id, error, now);
  }

  counts(runId: string, kind: 'search' | 'champion' = 'search'): Record<EvaluationState, number> {
    return this.evals.counts(runId, kind);
  }

  doneSince(runId: string, since: number): number {
    return this.evals.doneSince(runId, since);
  }

  topEvaluations(runId: string, limit: number): RankedEvaluation[] {
    return this.evals.top(runId, limit);
  }

  evaluations(runId: string, kind?: EvaluationRecord['kind']): EvaluationRecord[] {
    return this.evals.list(runId, kind);
  }

  finishedSearchEvaluationsSince(runId: string, since: number, limit: number): FinishedSearchEvaluation[] {
    return this.evals.finishedSearchSince(runId, since, limit);
  }

  trainingSpans(runId: string): TrainingSpan[] {
    return this.evals.trainingSpans(runId);
  }

  bestAccuracyByGenome(runId: string, hashes: readonly string[]): Map<string, number> {
    return this.evals.bestAccuracyByGenome(runId, hashes);
  }

  // ---- search log and lineage (./search-log-table.ts) ----------------------------------------

  addLineage(runId: string, link: LineageLink): void {
    this.searchLog.addLineage(runId, link);
  }

  lineageChain(runId: string, genomeHash: string, maxDepth = 1000): LineageLink[] {
    return this.searchLog.lineageChain(runId, genomeHash, maxDepth);
  }

  addSearchStep(step: Omit<SearchStep, 'step'>): number {
    return this.searchLog.addStep(step);
  }

  searchSteps(runId: string, genomeHashes?: readonly string[]): SearchStep[] {
    return this.searchLog.steps(runId, genomeHashes);
  }

  // ---- workers (./workers-table.ts) ----------------------------------------------------------

  upsertWorker(hb: WorkerHeartbeat, now: number): void {
    this.workers.upsert(hb, now);
  }

  /** Stores a worker's heartbeat with the others taken within 50 ms, or before any other statement runs. */
  takeHeartbeat(hb: WorkerHeartbeat, now: number): void {
    this.workers.takeHeartbeat(hb, now);
  }

  countLiveWorkers(since: number): number {
    return this.workers.countLive(since);
  }

  hasLiveWorkerOutside(since: number, excluded: readonly string[]): boolean {
    return this.workers.hasLiveOutside(since, excluded);
  }

  listWorkers(): WorkerSeen[] {
    return this.workers.list();
  }

  // ---- champion and ensemble (./champions-table.ts) ------------------------------------------

  saveChampion(c: ChampionRecord, artifactsJson: string): void {
    this.champions.save(c, artifactsJson);
  }

  getChampion(runId: string): ChampionRecord | null {
    return this.champions.get(runId);
  }

  getChampionArtifactsJson(runId: string): string | null {
    return this.champions.artifactsJson(runId);
  }

  saveEnsembleMember(m: EnsembleMemberRecord, artifactsJson: string): void {
    this.champions.saveEnsembleMember(m, artifactsJson);
  }

  clearEnsembleMembers(runId: string): void {
    this.champions.clearEnsembleMembers(runId);
  }

  ensembleMembers(runId: string): Array<EnsembleMemberRecord & { artifactsJson: string }> {
    return this.champions.ensembleMembers(runId);
  }

  // ---- checkpoints (./checkpoints-table.ts) --------------------------------------------------

  recordCheckpoint(c: CheckpointRecord): { kept: boolean; replaced: CheckpointRecord | null } {
    return this.checkpoints.record(c);
  }

  latestCheckpoint(runId: string, seq: number): CheckpointRecord | null {
    return this.checkpoints.latest(runId, seq);
  }

  checkpointBySha(sha256: string): CheckpointRecord | null {
    return this.checkpoints.bySha(sha256);
  }

  finalCheckpointOfGenome(runId: string, genomeHash: string): CheckpointRecord | null {
    return this.checkpoints.finalOfGenome(runId, genomeHash);
  }

  deleteCheckpoint(runId: string, seq: number): CheckpointRecord | null {
    return this.checkpoints.delete(runId, seq);
  }

  checkpointFileUses(sha256: string): number {
    return this.checkpoints.fileUses(sha256);
  }

  // ---- events (./event-log.ts) ---------------------------------------------------------------

  /** Appends to the run's event log (rejections, reissues, state changes). */
  /** Appends an event, its detail checked against the kind's schema (`RUN_EVENT_SCHEMAS`); a detail that breaks it is a bug and throws. */
  logEvent<K extends RunEventKind>(runId: string | null, kind: K, detail: RunEventDetail<K>, now = Date.now()): void {
    this.eventLog.log(runId, kind, runEventValidator(kind).parse(detail), now);
  }

  countEventsNaming(runId: string | null, kind: RunEventKind, evaluationId: string): number {
    return this.eventLog.countNaming(runId, kind, evaluationId);
  }

  /** A run's events of one kind, oldest first, their detail typed by the kind (events are checked when written). */
  events<K extends RunEventKind>(runId: string | null, kind: K): Array<EventRecord<K>>;
  /** All of a run's events, oldest first. */
  events(runId: string | null): EventRecord[];
  events(runId: string | null, kind?: RunEventKind): EventRecord[] {
    return this.eventLog.list(runId, kind);
  }

  countEvents(kind: RunEventKind, runId?: string | null): number {
    return this.eventLog.count(kind, runId);
  }
}
