import { pino, type Logger } from 'pino';
import { PinoPretty } from 'pino-pretty';
import { NetbreederError } from '@netbreeder/shared-types';

export type LogFormat = 'pretty' | 'json';
const FORMATS: readonly LogFormat[] = ['pretty', 'json'];

/**
 * How log lines look: `--log-format` (carried to child processes in NETBREEDER_LOG_FORMAT), else
 * readable lines when the log's output (stderr) is a terminal and JSON lines when it is a file or pipe.
 */
export function logFormat(env: NodeJS.ProcessEnv = process.env, terminal = process.stderr.isTTY === true): LogFormat {
  const given = env.NETBREEDER_LOG_FORMAT;
  if (given === undefined || given === '') return terminal ? 'pretty' : 'json';
  if (!FORMATS.includes(given as LogFormat)) throw new NetbreederError('NB_BAD_USAGE', `--log-format must be ${FORMATS.join(' or ')}, got '${given}'`);
  return given as LogFormat;
}

/**
 * Takes `--log-format F` (or `--log-format=F`) out of a command line and records it in
 * NETBREEDER_LOG_FORMAT, where every logger of this process and of its children reads it.
 */
export function takeLogFormatOption(argv: string[], env: NodeJS.ProcessEnv = process.env): string[] {
  const rest: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i]!;
    if (arg === '--log-format') env.NETBREEDER_LOG_FORMAT = argv[++i] ?? '';
    else if (arg.startsWith('--log-format=')) env.NETBREEDER_LOG_FORMAT = arg.slice('--log-format='.length);
    else {
      rest.push(arg);
      continue;
    }
    if (!FORMATS.includes(env.NETBREEDER_LOG_FORMAT as LogFormat)) throw new NetbreederError('NB_BAD_USAGE', `--log-format must be ${FORMATS.join(' or ')}, got '${env.NETBREEDER_LOG_FORMAT}'`);
  }
  return rest;
}

/**
 * A process's structured logger, on stderr so stdout stays free for a command's own output.
 * `NETBREEDER_LOG_LEVEL` sets the level (default `info`); the format is {@link logFormat}'s.
 */
export function createLogger(base: Record<string, unknown>, level = process.env.NETBREEDER_LOG_LEVEL ?? 'info'): Logger {
  if (logFormat() === 'json') return pino({ level, base }, pino.destination(2));
  return pino({ level, base }, PinoPretty({ destination: 2, sync: true, translateTime: 'SYS:HH:MM:ss', singleLine: true, ignore: 'pid,hostname,component,workerId', messageFormat: '{if workerId}{workerId}: {end}{msg}' }));
}
