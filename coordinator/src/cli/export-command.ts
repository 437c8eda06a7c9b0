import { mkdir, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';

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
