// Run first by `npm test`: says in one line what the tests need and this machine lacks, before
// anything starts, instead of failing test files minutes later. Plain Node, no dependencies.
// The tests need a Redis answering at $REDIS_URL (default redis://127.0.0.1:6379) and Debian's
// chromium at /usr/bin/chromium (the dashboard's browser tests drive it; nothing is downloaded).
import { existsSync } from 'node:fs';
import { connect } from 'node:net';

const CHROMIUM = '/usr/bin/chromium';
const redisUrl = process.env.REDIS_URL ?? 'redis://127.0.0.1:6379';

/** True when something at the URL's host and port answers a Redis PING (an answer asking for a password counts). */
function redisAnswers(url) {
  const { hostname, port, protocol } = new URL(url);
  if (protocol === 'rediss:') return Promise.resolve(true); // TLS: left to the tests, which say what fails
  return new Promise((resolve) => {
    const socket = connect({ host: hostname || '127.0.0.1', port: Number(port || 6379) });
    const done = (ok) => {
      socket.destroy();
      resolve(ok);
    };
    socket.setTimeout(2000, () => done(false));
    socket.once('error', () => done(false));
    socket.once('connect', () => socket.write('PING\r\n'));
    socket.once('data', (data) => done(/^(\+PONG|-NOAUTH|-ERR)/.test(data.toString())));
  });
}

const missing = [];
if (!(await redisAnswers(redisUrl))) missing.push(`a Redis answering at ${redisUrl} (apt-get install redis-server, or set REDIS_URL)`);
if (!existsSync(CHROMIUM)) missing.push(`Debian's chromium at ${CHROMIUM} (apt-get install chromium)`);
if (missing.length) {
  process.stderr.write(`npm test needs ${missing.join(' and ')}; the pure-logic tests alone need neither: npx vitest run --project unit\n`);
  process.exit(1);
}
