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

  it('builds from a Dockerfile whose entry point exists', () => {
    const dockerfile = readFileSync(join(root, 'Dockerfile'), 'utf8');
    const entry = /ENTRYPOINT \[(.*)\]/.exec(dockerfile)?.[1];
    expect(entry).toBeDefined();
    const script = JSON.parse(`[${entry}]`).find((p: string) => p.endsWith('.ts')) as string;
    expect(existsSync(join(root, script))).toBe(true);
    expect(dockerfile).toMatch(/npm ci/);
  });
});
