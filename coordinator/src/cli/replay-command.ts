import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { RunStore } from '../store/run-store.js';
import { replayRun } from '../run/replay-run.js';
import { NetbreederError } from '@netbreeder/shared-types';

export const REPLAY_HELP = `netbreeder replay: re-run a stored run's search and check it decides exactly as recorded.

Usage: netbreeder replay RUN_ID [--data-dir DIR]

Makes the run's search algorithm again from its run file settings and seed, gives it the stored
results in the order they were recorded, and compares every proposal (genome, parents, budget),
every decision (tournaments, mutations, promotions, removals) and the final state with the store.
Prints 'agree' (exit 0) or where it first disagrees (exit 1). Reads the coordinator's store
(DIR/store.sqlite, default ./netbreeder-data); the coordinator may be running.

Example:
  netbreeder replay r1abc --data-dir /srv/netbreeder
`;

/** `netbreeder replay RUN_ID`: prints agree / disagree; exit code 0 when the replay agrees. */
export async function replayCommand(argv: string[], out: NodeJS.WritableStream = process.stdout): Promise<number> {
  const { values, positionals } = parseArgs({ args: argv, allowPositionals: true, options: { 'data-dir': { type: 'string' }, help: { type: 'boolean', short: 'h' } } });
  if (values.help) return void out.write(REPLAY_HELP), 0;
  const [runId] = positionals;
  if (!runId || positionals.length > 1) throw new NetbreederError('NB_BAD_USAGE', 'replay needs exactly one run id: netbreeder replay RUN_ID [--data-dir DIR]');
  const path = join(resolve(values['data-dir'] ?? './netbreeder-data'), 'store.sqlite');
  if (!existsSync(path)) throw new NetbreederError('NB_NO_STORE', `no store at ${path}; pass the coordinator's --data-dir`);
  const store = new RunStore(path);
  try {
    const r = replayRun(store, runId);
    const counts = `${r.steps} recorded steps: ${r.proposals} proposals, ${r.observations} results, ${r.decisions} decisions, ${r.skipped} not asked of the algorithm`;
    if (r.agree) {
      out.write(`agree: run ${runId} (${r.algorithm}) replays exactly; ${counts}\n`);
      return 0;
    }
    const d = r.disagreement!;
    out.write(`disagree: run ${runId} (${r.algorithm}) differs at step ${d.step} (${d.what})\n  recorded: ${d.recorded}\n  replayed: ${d.replayed}\n  before that: ${counts}\n`);
    return 1;
  } finally {
    store.close();
  }
}
