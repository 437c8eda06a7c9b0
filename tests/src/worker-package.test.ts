import { spawnSync, type SpawnSyncReturns } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';

/**
 * The worker installs alone, as a PC that only trains would install it: shared-types and worker
 * packed with `npm pack` (which builds them, their `prepack`), the two tarballs installed into an
 * empty folder with production dependencies only and no install scripts, then the installed command
 * run. The registry packages come from the npm cache that `npm ci` filled (`--prefer-offline`).
 *
 * The native-build rule: the installed tree holds no `binding.gyp` (a package that would need
 * node-gyp, unusable with scripts off), no node-gyp output (`build/config.gypi`) and no `.node`
 * file at all, prebuilt or not. The worker's only native package, @tensorflow/tfjs-node, is an
 * optional dependency and stays out (`--omit=optional`); the wasm backend needs none.
 */
const root = join(import.meta.dirname, '..', '..');
const scratch = mkdtempSync(join(tmpdir(), 'nb-worker-package-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

/** The environment for nested npm commands: an outer `npm test` sets npm_* variables (its prefix, its workspace) that must not steer them; where packages come from is kept. */
function npmEnv(): NodeJS.ProcessEnv {
  const kept = new Set(['npm_config_cache', 'npm_config_registry', 'npm_config_userconfig']);
  return Object.fromEntries(Object.entries(process.env).filter(([key]) => !/^npm_/i.test(key) || kept.has(key.toLowerCase())));
}

function npm(args: string[], cwd: string): SpawnSyncReturns<string> {
  return spawnSync('npm', args, { cwd, env: npmEnv(), encoding: 'utf8', timeout: 240_000 });
}

/** Every file below `dir`, as paths relative to it. */
function filesBelow(dir: string): string[] {
  return readdirSync(dir, { recursive: true, withFileTypes: true })
    .filter((entry) => entry.isFile())
    .map((entry) => relative(dir, join(entry.parentPath, entry.name)));
}

interface PackedPackage {
  name: string;
  filename: string;
  files: { path: string }[];
}

describe('the packed worker', () => {
  const packs = join(scratch, 'packs');
  const app = join(scratch, 'app');
  let packed: PackedPackage[] = [];

  it('packs shared-types and worker as compiled JavaScript', () => {
    mkdirSync(packs);
    const pack = npm(['pack', '--workspace', 'shared-types', '--workspace', 'worker', '--pack-destination', packs, '--json'], root);
    expect(pack.status, `npm pack failed:\n${pack.stderr}`).toBe(0);
    packed = JSON.parse(pack.stdout) as PackedPackage[];
    expect(packed.map((p) => p.name)).toEqual(['@netbreeder/shared-types', '@netbreeder/worker']);
    for (const p of packed) {
      const paths = p.files.map((f) => f.path);
      expect(paths).toContain('dist/index.js');
      expect(paths).toContain('dist/index.d.ts');
      // Besides dist/, the worker ships its WebAssembly kernels (worker/native).
      const extra = p.name === '@netbreeder/worker' ? ['native/kernels.wasm'] : [];
      expect(paths.filter((path) => path !== 'package.json' && !path.startsWith('dist/')), `${p.name} ships only dist/${extra.length ? ' and its kernel module' : ''}`).toEqual(extra);
      expect(paths.filter((path) => path.endsWith('.tsbuildinfo') || path.endsWith('.test.js')), `${p.name} ships no build state or tests`).toEqual([]);
    }
    expect(packed[1]!.files.map((f) => f.path)).toContain('dist/cli.js');
  });

  it('installs alone with production dependencies, without any native build, and prints its help', () => {
    expect(packed, 'the packing test ran first').toHaveLength(2);
    mkdirSync(app);
    // A package.json of its own, so npm installs here and not into a project further up.
    writeFileSync(join(app, 'package.json'), JSON.stringify({ name: 'worker-install-check', private: true }));
    const flags = ['--omit=dev', '--omit=optional', '--ignore-scripts', '--prefer-offline', '--no-audit', '--no-fund'];
    const install = npm(['install', ...flags, ...packed.map((p) => join(packs, p.filename))], app);
    if (install.status !== 0) {
      const offline = /ENOTCACHED|ENOTFOUND|EAI_AGAIN|ETIMEDOUT|ECONNREFUSED|ECONNRESET|network/i.test(install.stderr);
      const hint = offline
        ? 'npm needed the registry and could not reach it: run `npm ci` first (it fills the npm cache this install reads) or allow access to the npm registry'
        : 'npm install of the packed worker failed';
      throw new Error(`${hint}:\n${install.stderr}`);
    }

    const modules = join(app, 'node_modules');
    const files = filesBelow(modules);
    expect(files.filter((f) => f.endsWith('.node')), 'no native addon (.node) in the installed tree').toEqual([]);
    expect(files.filter((f) => /(^|\/)binding\.gyp$/.test(f) || /(^|\/)build\/config\.gypi$/.test(f)), 'no package that needs or ran node-gyp').toEqual([]);
    for (const coordinatorOnly of ['@netbreeder/coordinator', 'better-sqlite3', 'fastify', 'prom-client', 'chart.js', 'tsx', 'typescript', '@tensorflow/tfjs-node']) {
      expect(existsSync(join(modules, coordinatorOnly)), `${coordinatorOnly} is not installed with the worker`).toBe(false);
    }

    const help = spawnSync(process.execPath, ['node_modules/.bin/netbreeder-worker', '--help'], { cwd: app, encoding: 'utf8', timeout: 60_000 });
    expect(help.status, help.stderr).toBe(0);
    expect(help.stdout).toMatch(/--coordinator URL/);
  });

  it('starts its training child from the compiled JavaScript', () => {
    expect(existsSync(join(app, 'node_modules', '@netbreeder', 'worker', 'dist', 'training', 'training-child.js'))).toBe(true);
    // Where dist/training/kernels/native-kernels.js looks for it.
    expect(existsSync(join(app, 'node_modules', '@netbreeder', 'worker', 'native', 'kernels.wasm'))).toBe(true);
    const script = "import { TrainingProcess } from '@netbreeder/worker'; const p = new TrainingProcess({ prefer: ['wasm'] }); console.log(JSON.stringify(await p.start())); await p.close();";
    const started = spawnSync(process.execPath, ['--input-type=module', '-e', script], { cwd: app, encoding: 'utf8', timeout: 120_000 });
    expect(started.status, started.stderr).toBe(0);
    expect(JSON.parse(started.stdout) as { backend: string }).toMatchObject({ backend: 'wasm' });
  });
});
