import { pino, type Logger } from 'pino';

export type { Logger };

/**
 * The coordinator's structured logger. JSON lines on stderr, so stdout stays free for the CLI's
 * human output. `NETBREEDER_LOG_LEVEL` sets the level (default `info`; tests use `warn`).
 */
export function createLogger(component: string, level = process.env.NETBREEDER_LOG_LEVEL ?? 'info'): Logger {
  return pino({ level, base: { component } }, pino.destination(2));
}
