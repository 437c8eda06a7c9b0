import { mkdir, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { ensembleRequestResponseValidator, type EnsembleRequestResponse } from '@netbreeder/shared-types';

/** Downloads a run's champion export from a coordinator into `outDir` (its averaging ensemble, if any, into `outDir/ensemble/`); returns the files written. */
export async function downloadChampion(
  coordinatorUrl: string,
  runId: string,
  outDir: string,
  adminToken: string | null,
  onFile?: (name: string, bytes: number) => void,
): Promise<string[]> {
  const headers = adminToken ? { authorization: `Bearer ${adminToken}` } : undefined;
  const base = new URL(`/runs/${encodeURIComponent(runId)}/champion`, coordinatorUrl);
  const res = await fetch(base, { headers });
  if (!res.ok) {
    const body = (await res.json().catch(() => null)) as { error?: { message?: string; fix?: string } } | null;
    throw new Error(`coordinator answered ${res.status} for run ${runId}: ${body?.error?.message ?? res.statusText}${body?.error?.fix ? ` (${body.error.fix})` : ''}`);
  }
  const summary = (await res.json()) as { files: string[]; ensemble?: { files: string[] } | null };
  await mkdir(outDir, { recursive: true });
  const written: string[] = [];
  for (const name of summary.files) {
    const fileRes = await fetch(`${base.toString()}/files/${encodeURIComponent(name)}`, { headers });
    if (!fileRes.ok) throw new Error(`cannot download ${name}: HTTP ${fileRes.status}${fileRes.status === 401 ? ' (export needs the admin token: --admin-token or NETBREEDER_ADMIN_TOKEN)' : ''}`);
    const bytes = Buffer.from(await fileRes.arrayBuffer());
    await writeFile(join(outDir, name), bytes);
    onFile?.(name, bytes.length);
    written.push(resolve(outDir, name));
  }
  // The averaging ensemble, when the run has one, goes into its own folder.
  for (const name of summary.ensemble?.files ?? []) {
    const fileRes = await fetch(new URL(`/runs/${encodeURIComponent(runId)}/ensemble/files/${encodeURIComponent(name)}`, coordinatorUrl), { headers });
    if (!fileRes.ok) throw new Error(`cannot download ensemble file ${name}: HTTP ${fileRes.status}`);
    const bytes = Buffer.from(await fileRes.arrayBuffer());
    await mkdir(join(outDir, 'ensemble'), { recursive: true });
    await writeFile(join(outDir, 'ensemble', name), bytes);
    onFile?.(`ensemble/${name}`, bytes.length);
    written.push(resolve(outDir, 'ensemble', name));
  }
  return written;
}

/**
 * Asks a coordinator for a new averaging ensemble of `size` members for a finished run
 * (`POST /runs/:id/ensemble`) and waits until it is trained and scored (the run is `finished`
 * again and its champion summary shows the ensemble of that round). Throws when refused or when
 * the run fails.
 */
export async function requestEnsembleAndWait(
  coordinatorUrl: string,
  runId: string,
  settings: { size: number; diversityPenalty?: number },
  adminToken: string | null,
  onAccepted?: (answer: EnsembleRequestResponse) => void,
  pollMs = 2000,
): Promise<EnsembleRequestResponse> {
  const auth: Record<string, string> = adminToken ? { authorization: `Bearer ${adminToken}` } : {};
  const res = await fetch(new URL(`/runs/${encodeURIComponent(runId)}/ensemble`, coordinatorUrl), { method: 'POST', headers: { ...auth, 'content-type': 'application/json' }, body: JSON.stringify(settings) });
  const body = (await res.json()) as { error?: { code: string; message: string; fix: string } };
  if (res.status !== 202) throw new Error(`ensemble refused (${res.status} ${body.error?.code}): ${body.error?.message}; ${body.error?.fix}`);
  const answer = ensembleRequestResponseValidator.parse(body);
  onAccepted?.(answer);
  for (;;) {
    await new Promise((r) => setTimeout(r, pollMs));
    const runs = (await (await fetch(new URL('/runs', coordinatorUrl), { headers: auth })).json()) as Array<{ id: string; state: string }>;
    const state = runs.find((r) => r.id === runId)?.state;
    if (state === 'failed' || state === 'stopped') throw new Error(`run ${runId} ended ${state} while its ensemble trained; see the coordinator's events`);
    if (state !== 'finished') continue;
    const summary = (await (await fetch(new URL(`/runs/${encodeURIComponent(runId)}/champion`, coordinatorUrl), { headers: auth })).json()) as { ensemble?: { round: number } | null };
    if (summary.ensemble?.round === answer.round) return answer;
    throw new Error(`run ${runId} finished its ensemble round ${answer.round} without scoring an ensemble (fewer than two members trained); see the coordinator's events`);
  }
}
