import { describe, expect, it } from 'vitest';
import { logFormat, takeLogFormatOption } from './create-logger.js';

describe('log format', () => {
  it('is readable on a terminal and JSON lines otherwise, unless set', () => {
    expect(logFormat({}, true)).toBe('pretty');
    expect(logFormat({}, false)).toBe('json');
    expect(logFormat({ NETBREEDER_LOG_FORMAT: 'json' }, true)).toBe('json');
    expect(logFormat({ NETBREEDER_LOG_FORMAT: 'pretty' }, false)).toBe('pretty');
    expect(() => logFormat({ NETBREEDER_LOG_FORMAT: 'xml' }, true)).toThrow(/--log-format must be pretty or json, got 'xml'/);
  });

  it('takes --log-format out of a command line, in either spelling, and records it for child processes', () => {
    const env: NodeJS.ProcessEnv = {};
    expect(takeLogFormatOption(['worker', '--log-format', 'json', '--id', 'a'], env)).toEqual(['worker', '--id', 'a']);
    expect(env.NETBREEDER_LOG_FORMAT).toBe('json');
    expect(takeLogFormatOption(['--log-format=pretty', 'demo'], env)).toEqual(['demo']);
    expect(env.NETBREEDER_LOG_FORMAT).toBe('pretty');
    expect(() => takeLogFormatOption(['--log-format', 'fancy'], env)).toThrow(/got 'fancy'/);
    expect(() => takeLogFormatOption(['demo', '--log-format'], env)).toThrow(/--log-format must be pretty or json, got ''/);
  });
});
