import type { Logger } from 'pino';
import { NetbreederError, heartbeatReplyValidator, workerHeartbeatValidator, type HeartbeatReply, type WorkerHeartbeat } from '@netbreeder/shared-types';
import { authHeader } from './auth-header.js';

/**
 * Posts the worker's heartbeat to the coordinator: when the worker's state changes, and otherwise
 * `intervalMs` after the last one, so two are never further apart than that and a busy worker,
 * whose state changes tell the coordinator it lives, sends no extra ones. While the coordinator
 * cannot be reached (it may be restarting) it keeps trying with backoff, up to
 * {@link MAX_RETRY_MS} apart; it says so at the first failure, with the URL and the cause, and then
 * about once a minute, so a worker never spins or floods its log. A refused token (401) or a
 * revoked worker id (403), a coordinator of another netbreeder version (409 `NB_WORKER_INCOMPATIBLE`,
 * or 400 from one that does not understand the heartbeat) cannot be fixed by retrying: `onRefused`
 * gets one sentence saying what to do.
 */
export class HeartbeatSender {
  private refused = false;
  private firstFailureAt = 0;
  private lastWarnedAt = 0;
  private timer: NodeJS.Timeout | null = null;
  private started = false;
  private stopped = false;
  private failures = 0;
  private inFlight: Promise<void> | null = null;
  private again = false;
  private lastNotifiedAt = -Infinity;
  private trailing: NodeJS.Timeout | null = null;

  constructor(
    private readonly coordinatorUrl: string,
    private readonly intervalMs: number,
    private readonly snapshot: () => WorkerHeartbeat,
    private readonly log: Logger,
    private readonly joinToken: string | null = null,
    /** Called, with a sentence naming the fix, when the coordinator refuses this worker for good (token, id or version). */
    private readonly onRefused: (sentence: string) => void = () => {},
    /** Called with the coordinator's reply when it sends one (a quarantine). */
    private readonly onReply: (reply: HeartbeatReply) => void = () => {},
    /** State changes closer together than this are sent as one heartbeat (very short jobs). @default 1000 */
    private readonly minChangeGapMs = 1000,
    /**
     * A job's end waits this long, so the next job's start, moments later, goes in the same
     * heartbeat. @default 200
     */
    private readonly changeDelayMs = 200,
  ) {}

  /** Sends one now; from then on one follows `intervalMs` after the last, until {@link stop}. */
  start(): void {
    if (this.started) return;
    this.started = true;
    void this.send();
  }

  /**
   * Tells the coordinator about a state change. A job's start (`{ now: true }`) is sent at once; a
   * job's end waits `changeDelayMs`, and a start that follows within it goes in the same heartbeat,
   * so one between two jobs costs the coordinator one, not two. Either waits longer when the last
   * change was sent less than `minChangeGapMs` ago, and the heartbeat then carries the newest
   * state: a worker finishing many tiny jobs a second costs one heartbeat a second.
   */
  notifyChange(opts: { now?: boolean } = {}): void {
    if (this.stopped) return;
    const wait = Math.max(opts.now ? 0 : this.changeDelayMs, this.lastNotifiedAt + this.minChangeGapMs - Date.now());
    if (this.trailing) {
      // The one waiting will carry this change too, unless this one may go now.
      if (wait > 0) return;
      clearTimeout(this.trailing);
      this.trailing = null;
    }
    if (wait <= 0) {
      this.lastNotifiedAt = Date.now();
      void this.send();
      return;
    }
    this.trailing = setTimeout(() => {
      this.trailing = null;
      this.lastNotifiedAt = Date.now();
      void this.send();
    }, wait);
    this.trailing.unref();
  }

  /** Sends a heartbeat now; while one is on its way, one more follows it with the newest state. */
  send(): Promise<void> {
    if (this.refused) return Promise.resolve();
    if (this.inFlight) {
      this.again = true;
      return this.inFlight;
    }
    this.inFlight = (async () => {
      do {
        this.again = false;
        await this.post();
      } while (this.again);
    })().finally(() => {
      this.inFlight = null;
      this.scheduleNext();
    });
    return this.inFlight;
  }

  /** The next periodic heartbeat, `intervalMs` after the one just sent; after failures, doubling up to {@link MAX_RETRY_MS}. */
  private scheduleNext(): void {
    if (!this.started || this.stopped) return;
    if (this.timer) clearTimeout(this.timer);
    const delay = this.failures === 0 ? this.intervalMs : Math.min(this.intervalMs * 2 ** (this.failures - 1), Math.max(this.intervalMs, MAX_RETRY_MS));
    this.timer = setTimeout(() => void this.send(), delay);
    this.timer.unref();
  }

  /** A refusal retrying cannot fix: no more heartbeats, and `onRefused` gets the sentence. */
  private refuse(sentence: string): void {
    this.refused = true;
    this.onRefused(sentence);
  }

  private async post(): Promise<void> {
    const body = workerHeartbeatValidator.parse(this.snapshot());
    try {
      const res = await fetch(new URL('/workers/heartbeat', this.coordinatorUrl), {
        method: 'POST',
        headers: { 'content-type': 'application/json', ...authHeader(this.joinToken) },
        body: JSON.stringify(body),
        signal: AbortSignal.timeout(Math.max(2000, this.intervalMs)),
      });
      if (res.status === 401 || res.status === 403) {
        await res.body?.cancel();
        return this.refuse(
          res.status === 401
            ? `the coordinator at ${this.coordinatorUrl} refused this worker's join token (HTTP 401): pass the token from the coordinator's secrets.json with --join-token or NETBREEDER_JOIN_TOKEN`
            : `the coordinator at ${this.coordinatorUrl} revoked this worker id (HTTP 403): ask the coordinator's admin why; this PC takes no more jobs until they allow it again`,
        );
      }
      if (res.status === 409 || res.status === 400) {
        // Another version of netbreeder: the coordinator says which (409), or an older one refuses a
        // heartbeat it does not understand (400). Retrying cannot help.
        const text = await res.text();
        const error = errorOf(text);
        if (res.status === 409 && error?.code === 'NB_WORKER_INCOMPATIBLE') return this.refuse(`the coordinator at ${this.coordinatorUrl} refused this worker: ${error.message}`);
        if (res.status === 400) {
          return this.refuse(
            `the coordinator at ${this.coordinatorUrl} does not understand this worker's heartbeat (HTTP 400: ${error?.message ?? text.slice(0, 200)}); it is probably another netbreeder version: install the same version on both`,
          );
        }
        throw new NetbreederError('NB_COORDINATOR_REFUSED', `HTTP ${res.status}: ${text.slice(0, 300)}`);
      }
      if (!res.ok) throw new NetbreederError('NB_COORDINATOR_REFUSED', `HTTP ${res.status}: ${(await res.text()).slice(0, 300)}`);
      if (res.status === 200) {
        const reply: unknown = await res.json();
        const issues = heartbeatReplyValidator.issues(reply);
        if (issues.length) this.log.warn({ issues: issues.slice(0, 3) }, 'the coordinator sent a heartbeat reply this worker does not understand; ignored');
        else this.onReply(reply as HeartbeatReply);
      } else {
        await res.body?.cancel();
      }
      if (this.failures > 0) this.log.info({ coordinatorUrl: this.coordinatorUrl, after: this.failures }, 'coordinator reachable again');
      this.failures = 0;
    } catch (err) {
      this.failures++;
      const now = Date.now();
      const cause = causeOf(err);
      if (this.failures === 1) {
        this.firstFailureAt = this.lastWarnedAt = now;
        this.log.warn({ coordinatorUrl: this.coordinatorUrl, err: cause }, `cannot reach the coordinator at ${this.coordinatorUrl} (${cause}); retrying with backoff`);
      } else if (now - this.lastWarnedAt >= WARN_EVERY_MS) {
        this.lastWarnedAt = now;
        const seconds = Math.round((now - this.firstFailureAt) / 1000);
        this.log.warn({ coordinatorUrl: this.coordinatorUrl, err: cause, failures: this.failures, seconds }, `still cannot reach the coordinator at ${this.coordinatorUrl} after ${seconds} s (${cause}); still retrying`);
      }
    }
  }

  async stop(): Promise<void> {
    this.stopped = true;
    if (this.timer) clearTimeout(this.timer);
    if (this.trailing) clearTimeout(this.trailing);
    this.timer = null;
    this.trailing = null;
    await this.inFlight;
  }
}

/** Longest wait between two tries while the coordinator cannot be reached. */
export const MAX_RETRY_MS = 30_000;
/** How often a worker that still cannot reach the coordinator says so. */
const WARN_EVERY_MS = 60_000;

/** What went wrong, with fetch's underlying reason (`fetch failed` alone says nothing). */
function causeOf(err: unknown): string {
  const e = err as Error & { cause?: { code?: string; message?: string } };
  const inner = e.cause?.code ?? e.cause?.message;
  return inner && !e.message.includes(inner) ? `${e.message}: ${inner}` : e.message;
}

/** The `{ error: { code, message } }` of a coordinator's error reply, or null when the body is not one. */
function errorOf(text: string): { code: string; message: string } | null {
  try {
    const e = (JSON.parse(text) as { error?: { code?: unknown; message?: unknown } }).error;
    return typeof e?.code === 'string' && typeof e.message === 'string' ? { code: e.code, message: e.message } : null;
  } catch {
    return null;
  }
}
