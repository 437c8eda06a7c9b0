import { randomBytes } from 'node:crypto';
import { chmod, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';

export interface CoordinatorSecrets {
  joinToken: string;
  adminToken: string;
}

/**
 * A new random token (192 bits) in hex. Never base64url: about one token in 64 would begin with
 * '-', and `--admin-token -x…` or `--join-token -x…` on a command line is then read as an option
 * (the command refuses it as ambiguous).
 */
export const newToken = (): string => randomBytes(24).toString('hex');

/**
 * The coordinator's tokens: those given (flags or environment) win; otherwise the ones kept in
 * `dataDir/secrets.json` (readable by its owner only), created with random values on first start.
 */
export async function loadSecrets(dataDir: string, given: Partial<CoordinatorSecrets>): Promise<CoordinatorSecrets & { path: string }> {
  const path = join(dataDir, 'secrets.json');
  let stored: Partial<CoordinatorSecrets> = {};
  try {
    stored = JSON.parse(await readFile(path, 'utf8')) as Partial<CoordinatorSecrets>;
  } catch {
    stored = {};
  }
  const secrets = {
    joinToken: stored.joinToken ?? newToken(),
    adminToken: stored.adminToken ?? newToken(),
  };
  if (secrets.joinToken !== stored.joinToken || secrets.adminToken !== stored.adminToken) {
    await writeFile(path, `${JSON.stringify(secrets, null, 2)}\n`, { mode: 0o600 });
    await chmod(path, 0o600);
  }
  return { joinToken: given.joinToken ?? secrets.joinToken, adminToken: given.adminToken ?? secrets.adminToken, path };
}
