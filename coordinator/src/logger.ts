import type { Logger } from 'pino';
import { createProcessLogger } from '@netbreeder/worker';

export type { Logger };

/**
 * The coordinator's structured logger: on stderr, so stdout stays free for the CLI's human output;
 * readable lines on a terminal, JSON lines otherwise or with `--log-format json`.
 * `NETBREEDER_LOG_LEVEL` sets the level (default `info`; tests use `warn`).
 */
export function createLogger(component: string, level = process.env.NETBREEDER_LOG_LEVEL ?? 'info'): Logger {
  return createProcessLogger({ component }, level);
}
