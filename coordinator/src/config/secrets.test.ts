import { mkdtemp, readFile, rm, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { afterEach, describe, expect, it } from 'vitest';
import { loadSecrets, newToken } from './secrets.js';

describe('coordinator tokens', () => {
  it('never begin with a dash, so they pass as the value of a command-line option', () => {
    // With base64url, one token in 64 began with '-' (a CI run failed on it); 2,000 tokens would
    // have held about 31 such. Hex has no dash at all.
    const tokens = Array.from({ length: 2000 }, newToken);
    for (const token of tokens) expect(token).toMatch(/^[0-9a-f]{48}$/);
    expect(new Set(tokens).size).toBe(tokens.length);
    for (const token of tokens.slice(0, 50)) {
      const { values } = parseArgs({ args: ['--admin-token', token], options: { 'admin-token': { type: 'string' } } });
      expect(values['admin-token']).toBe(token);
    }
  });

  describe('loadSecrets', () => {
    let dir = '';
    afterEach(async () => {
      if (dir) await rm(dir, { recursive: true, force: true });
    });

    it('creates the tokens once, keeps them in a file only its owner reads, and lets given ones win', async () => {
      dir = await mkdtemp(join(tmpdir(), 'nb-secrets-'));
      const first = await loadSecrets(dir, {});
      expect(first.joinToken).not.toBe(first.adminToken);
      expect((await stat(first.path)).mode & 0o777).toBe(0o600);
      expect(JSON.parse(await readFile(first.path, 'utf8'))).toEqual({ joinToken: first.joinToken, adminToken: first.adminToken });
      const again = await loadSecrets(dir, { adminToken: 'given-by-flag' });
      expect(again.joinToken).toBe(first.joinToken);
      expect(again.adminToken).toBe('given-by-flag');
    });
  });
});
