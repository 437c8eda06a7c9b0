import type { Logger } from 'pino';
import { heartbeatReplyValidator, workerHeartbeatValidator, type HeartbeatReply, type WorkerHeartbeat } from '@netbreeder/shared-types';
import { authHeader } from './auth-header.js';

/**
 * Posts the worker's heartbeat to the coordinator: when the worker's state changes, and otherwise
 * `intervalMs` after the last one, so two are never further apart than that and a busy worker,
 * whose state changes tell the coordinator it lives, sends no extra ones. While the coordinator
 * cannot be reached it keeps trying at the same pace, logging the first failure and then every
 * tenth, so a worker never spins or floods its log.
 */
export class HeartbeatSender {
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
    /** Called when the coordinator answers that this worker id is revoked. */
    private readonly onRevoked: () => void = () => {},
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

  /** The next periodic heartbeat, `intervalMs` after the one just sent (or tried). */
  private scheduleNext(): void {
    if (!this.started || this.stopped) return;
    if (this.timer) clearTimeout(this.timer);
    this.timer = setTimeout(() => void this.send(), this.intervalMs);
    this.timer.unref();
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
      if (res.status === 403) {
        this.log.error('the coordinator revoked this worker; stopping');
        this.onRevoked();
        return;
      }
      if (!res.ok) throw new Error(`HTTP ${res.status}: ${(await res.text()).slice(0, 300)}`);
      if (res.status === 200) {
        const reply: unknown = await res.json();
        const issues = heartbeatReplyValidator.issues(reply);
        if (issues.length) this.log.warn({ issues: issues.slice(0, 3) }, 'the coordinator sent a heartbeat reply this worker does not understand; ignored');
        else this.onReply(reply as HeartbeatReply);
      } else {
        await res.body?.cancel();
      }
      if (this.failures > 0) this.log.info({ after: this.failures }, 'coordinator reachable again');
      this.failures = 0;
    } catch (err) {
      this.failures++;
      if (this.failures === 1 || this.failures % 10 === 0) {
        this.log.warn({ failures: this.failures, coordinatorUrl: this.coordinatorUrl, err: (err as Error).message }, 'cannot reach the coordinator; will keep trying');
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
