import type { Logger } from '../logger.js';

/**
 * Runs a reconcile pass every `tickMs`, and soon after a job finishes: `passDelayMs` later, so the
 * jobs that finish meanwhile share one pass and its commit (0: at once). Never runs two passes at
 * once: a pass asked for while one runs makes that one go again. A pass that throws is logged and
 * the loop goes on.
 */
export class ReconcileLoop {
  private timer: NodeJS.Timeout | null = null;
  private ticking: Promise<void> | null = null;
  private tickAgain = false;
  /** The pass that finished jobs asked for, while it waits out `passDelayMs`. */
  private passSoon: NodeJS.Timeout | null = null;

  constructor(
    private readonly pass: () => Promise<void>,
    private readonly o: { tickMs: number; passDelayMs: number; log: Logger },
  ) {}

  /** Starts the timer and runs a first pass. */
  async start(): Promise<void> {
    this.timer = setInterval(() => void this.tick(), this.o.tickMs);
    await this.tick();
  }

  /** Stops the timer and waits for the pass that runs. */
  async stop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    if (this.passSoon) clearTimeout(this.passSoon);
    this.passSoon = null;
    await this.ticking;
  }

  /** A job finished: a pass after `passDelayMs` (one pass for every job that finishes meanwhile), or right after the running one. */
  passAfterFinish(): void {
    if (this.ticking || this.o.passDelayMs <= 0) return void this.tick(); // tick() marks a running pass to go again
    if (this.passSoon || !this.timer) return;
    this.passSoon = setTimeout(() => {
      this.passSoon = null;
      void this.tick();
    }, this.o.passDelayMs);
  }

  /** One pass now (or the running one goes again); resolves when no pass runs. */
  tick(): Promise<void> {
    if (this.ticking) {
      this.tickAgain = true;
      return this.ticking;
    }
    this.ticking = (async () => {
      do {
        this.tickAgain = false;
        try {
          await this.pass();
        } catch (err) {
          this.o.log.error({ err: (err as Error).message, stack: (err as Error).stack }, 'reconcile pass failed; will retry');
        }
      } while (this.tickAgain);
    })().finally(() => {
      this.ticking = null;
    });
    return this.ticking;
  }
}
