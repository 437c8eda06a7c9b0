import { NetbreederError } from '@netbreeder/shared-types';
/** Milliseconds from `now` until the next local clock time `hhmm` ("07:30"); throws on a bad time. */
export function msUntilClockTime(hhmm: string, now: Date): number {
  const m = /^([01]?\d|2[0-3]):([0-5]\d)$/.exec(hhmm);
  if (!m) throw new NetbreederError('NB_BAD_USAGE', `stop time '${hhmm}' is not HH:MM (24-hour clock), for example 07:30`);
  const target = new Date(now);
  target.setHours(Number(m[1]), Number(m[2]), 0, 0);
  if (target.getTime() <= now.getTime()) target.setDate(target.getDate() + 1);
  return target.getTime() - now.getTime();
}
