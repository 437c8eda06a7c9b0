import { parseArgs } from 'node:util';
import { CoordinatorClient } from './coordinator-client.js';
import { DEFAULT_PORT } from '../coordinator.js';
import { NetbreederError } from '@netbreeder/shared-types';

export const PICK_HELP = `netbreeder pick: choose a run's champion yourself, such as a genome of its accuracy-against-size front.

Usage: netbreeder pick RUN_ID GENOME_HASH [--coordinator URL] [--admin-token T]

The genome must have a finished search result in the run (GET /runs/RUN_ID/front lists the
front; the dashboard shows it). While the run searches or is paused: when the search ends, that
genome alone gets the final training and becomes the champion. Once the run has finished: it is
trained now, replaces the champion and is exported again (ask the coordinator that ran the run).
The report says it was picked. A later pick replaces an earlier one. Needs the admin token
(--admin-token or NETBREEDER_ADMIN_TOKEN).

Example:
  NETBREEDER_ADMIN_TOKEN=… netbreeder pick r1abc 3f2a…(64 hex digits) --coordinator http://build-server:${DEFAULT_PORT}
`;

export async function pickCommand(argv: string[], out: NodeJS.WritableStream = process.stdout): Promise<number> {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: { coordinator: { type: 'string' }, 'admin-token': { type: 'string' }, help: { type: 'boolean', short: 'h' } },
  });
  if (values.help) return void out.write(PICK_HELP), 0;
  const [runId, genomeHash] = positionals;
  if (!runId || !genomeHash || positionals.length > 2) throw new NetbreederError('NB_BAD_USAGE', 'pick needs a run id and a genome hash: netbreeder pick RUN_ID GENOME_HASH');
  const token = values['admin-token'] ?? process.env.NETBREEDER_ADMIN_TOKEN;
  const base = values.coordinator ?? process.env.NETBREEDER_COORDINATOR_URL ?? `http://127.0.0.1:${DEFAULT_PORT}`;
  const picked = await new CoordinatorClient(base, token).pick(runId, genomeHash);
  const when = picked.retraining ? 'is being trained again and will replace the champion' : 'will be the champion when the search ends';
  out.write(`run ${picked.runId}: ${picked.genomeHash.slice(0, 12)} (evaluation ${picked.evaluationId}, ${picked.validation ?? `validation ${(picked.valAccuracy * 100).toFixed(2)}%`}) ${when}\n`);
  return 0;
}
