import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { parseWorkerArgs } from '@netbreeder/worker';
import { COORDINATOR_OPTIONS, readRunConfigFile } from '@netbreeder/coordinator';

/**
 * docker-compose.yml cannot be started here (no Docker engine on these machines), so its structure
 * is checked instead: the services exist, their commands parse with the real CLI parsers, every
 * file they name exists, and the workers point at the coordinator's service name and port.
 */
const root = join(import.meta.dirname, '..', '..');
const compose = parse(readFileSync(join(root, 'docker-compose.yml'), 'utf8')) as {
  services: Record<string, { image?: string; build?: string; command?: string[]; ports?: string[]; depends_on?: string[]; deploy?: { replicas?: number } }>;
  volumes?: Record<string, unknown>;
};

describe('docker-compose.yml', () => {
  it('has Redis, one coordinator and scalable workers', () => {
    expect(Object.keys(compose.services).sort()).toEqual(['coordinator', 'redis', 'worker']);
    expect(compose.services.redis!.image).toMatch(/^redis:/);
    expect(compose.services.coordinator!.build).toBe('.');
    expect(compose.services.worker!.build).toBe('.');
    expect(compose.services.worker!.deploy?.replicas).toBeGreaterThanOrEqual(1);
    expect(compose.services.worker!.depends_on).toContain('coordinator');
  });

  it("runs a coordinator command that the CLI accepts, with a run file that parses", async () => {
    const [command, ...args] = compose.services.coordinator!.command!;
    expect(command).toBe('coordinator');
    const { values } = parseArgs({ args, options: COORDINATOR_OPTIONS, strict: true });
    expect(values.redis).toBe('redis://redis:6379');
    expect(compose.services.coordinator!.ports).toContain(`${values.port}:${values.port}`);
    const config = await readRunConfigFile(join(root, values.run!));
    expect(config.dataset.kind).toBe('demo-tiles');
  });

  it('starts workers that the worker CLI accepts and that reach the coordinator service', () => {
    const [command, ...args] = compose.services.worker!.command!;
    expect(command).toBe('worker');
    const options = parseWorkerArgs(args, {});
    if (options === 'help') throw new Error('worker command asks for help');
    const coordinatorPort = parseArgs({ args: compose.services.coordinator!.command!.slice(1), options: COORDINATOR_OPTIONS }).values.port;
    expect(options.coordinatorUrl).toBe(`http://coordinator:${coordinatorPort}`);
    expect(options.redisUrl).toBe('redis://redis:6379');
  });

  it('gives workers the same join token as the coordinator, and the coordinator an admin token', () => {
    const env = (name: string) => (compose.services[name] as { environment?: Record<string, string> }).environment ?? {};
    expect(env('worker').NETBREEDER_JOIN_TOKEN).toBe(env('coordinator').NETBREEDER_JOIN_TOKEN);
    expect(env('coordinator').NETBREEDER_JOIN_TOKEN).toMatch(/^\$\{NETBREEDER_JOIN_TOKEN:\?/);
    expect(env('coordinator').NETBREEDER_ADMIN_TOKEN).toMatch(/^\$\{NETBREEDER_ADMIN_TOKEN:\?/);
  });

  const dockerfile = readFileSync(join(root, 'Dockerfile'), 'utf8');
  /** The stages of the Dockerfile by name (the unnamed last one is the default image). */
  const stages = new Map(dockerfile.split(/^(?=FROM )/m).slice(1).map((stage) => [/^FROM \S+(?: AS (\S+))?/.exec(stage)![1] ?? 'default', stage]));
  /** The file an ENTRYPOINT runs with node, as the TypeScript source it is compiled from. */
  const entrySource = (stage: string): string => {
    const entry = JSON.parse(`[${/ENTRYPOINT \[(.*)\]/.exec(stage)![1]}]`) as string[];
    expect(entry[0]).toBe('node');
    expect(entry[1]).toMatch(/\/dist\/.*\.js$/);
    return entry[1]!.replace(/^node_modules\/@netbreeder\//, '').replace('/dist/', '/src/').replace(/\.js$/, '.ts');
  };

  it('builds a default image whose entry point is the compiled coordinator CLI', () => {
    expect([...stages.keys()]).toEqual(['build', 'worker', 'default']);
    expect(stages.get('build')).toMatch(/npm ci/);
    expect(stages.get('build')).toMatch(/npm pack --workspace shared-types --workspace worker --pack-destination \/packs/);
    expect(existsSync(join(root, entrySource(stages.get('default')!)))).toBe(true);
  });

  it('builds a slim worker image from the packed worker alone, with no compiler and no install scripts', () => {
    const worker = stages.get('worker')!;
    expect(worker).toMatch(/npm install --omit=dev --omit=optional --ignore-scripts .*\/packs\/\*\.tgz/);
    expect(worker).not.toMatch(/g\+\+|python3|COPY coordinator/);
    expect(entrySource(worker)).toBe('worker/src/cli.ts');
  });
});
