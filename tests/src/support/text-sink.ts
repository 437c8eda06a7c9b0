import { Writable } from 'node:stream';

/** A writable stream that keeps what is written, for commands that take their output streams. */
export function textSink(): Writable & { text: () => string } {
  const parts: string[] = [];
  const w = new Writable({ write: (chunk, _enc, done) => (parts.push(String(chunk)), done()) }) as Writable & { text: () => string };
  w.text = () => parts.join('');
  return w;
}
