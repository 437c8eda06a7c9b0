import { createRequire } from 'node:module';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { defaultSearchSpace, statusResponseValidator } from '@netbreeder/shared-types';
import { parseRunConfig, type RunRecord } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';

/**
 * GET /metrics against a coordinator with a real run (two worker processes, real training): the
 * answer follows the Prometheus text exposition format, and every count equals the store's.
 */
const EVALUATIONS = 6;

interface Family {
  name: string;
  help: string;
  type: string;
  metrics: Array<{ value: string; labels?: Record<string, string> }>;
}
/** A parser of the format from npm (parse-prometheus-text-format; it ships no types). */
const parseWithLibrary = createRequire(import.meta.url)('parse-prometheus-text-format') as (text: string) => Family[];

/**
 * A strict reading of the text format, by its rules (Prometheus documentation, "Exposition formats",
 * text-based format, version 0.0.4): lines end in \n; `# HELP name text` and `# TYPE name type` with
 * type one of counter, gauge, histogram, summary, untyped; a family's TYPE comes before its samples
 * and at most once; sample lines are `name{label="value",...} value [timestamp]` with metric names
 * [a-zA-Z_:][a-zA-Z0-9_:]*, label names [a-zA-Z_][a-zA-Z0-9_]*, label values escaping \\, \" and \n;
 * values are Go floats (or NaN, +Inf, -Inf); no series appears twice.
 */
function parseStrict(text: string): Map<string, { type: string; help: string; samples: Array<{ labels: Record<string, string>; value: number }> }> {
  expect(text.endsWith('\n'), 'the exposition ends with a line feed').toBe(true);
  const families = new Map<string, { type: string; help: string; samples: Array<{ labels: Record<string, string>; value: number }> }>();
  const seen = new Set<string>();
  const NAME = '[a-zA-Z_:][a-zA-Z0-9_:]*';
  const LABELS = '\\{(?:[a-zA-Z_][a-zA-Z0-9_]*="(?:[^"\\\\\\n]|\\\\[\\\\"n])*"(?:,[a-zA-Z_][a-zA-Z0-9_]*="(?:[^"\\\\\\n]|\\\\[\\\\"n])*")*,?)?\\}';
  const VALUE = '(?:[+-]?(?:\\d+\\.?\\d*(?:[eE][+-]?\\d+)?|\\.\\d+(?:[eE][+-]?\\d+)?)|NaN|[+-]Inf)';
  const sampleRe = new RegExp(`^(${NAME})(${LABELS})? (${VALUE})(?: -?\\d+)?$`);
  const lines = text.slice(0, -1).split('\n');
  for (const [i, line] of lines.entries()) {
    if (line === '') continue;
    const where = `line ${i + 1}: ${line}`;
    let m: RegExpExecArray | null;
    if ((m = new RegExp(`^# HELP (${NAME}) (.*)$`).exec(line))) {
      const f = families.get(m[1]!) ?? { type: 'untyped', help: '', samples: [] };
      f.help = m[2]!;
      families.set(m[1]!, f);
    } else if ((m = new RegExp(`^# TYPE (${NAME}) (counter|gauge|histogram|summary|untyped)$`).exec(line))) {
      const f = families.get(m[1]!);
      expect(f?.samples.length ?? 0, `${where}: TYPE after samples`).toBe(0);
      families.set(m[1]!, { type: m[2]!, help: f?.help ?? '', samples: [] });
    } else if (line.startsWith('#')) {
      // any other comment is allowed
    } else {
      m = sampleRe.exec(line);
      expect(m, `${where}: not a sample line`).not.toBeNull();
      const [, name, labelText, value] = m!;
      const family = families.get(name!) ?? families.get(name!.replace(/_(sum|count|bucket)$/, ''));
      expect(family, `${where}: sample before its TYPE line`).toBeDefined();
      const labels: Record<string, string> = {};
      for (const lm of (labelText ?? '').matchAll(/([a-zA-Z_][a-zA-Z0-9_]*)="((?:[^"\\\n]|\\[\\"n])*)"/g)) {
        expect(labels[lm[1]!], `${where}: label ${lm[1]} twice`).toBeUndefined();
        labels[lm[1]!] = lm[2]!.replace(/\\(["\\n])/g, (_, c: string) => (c === 'n' ? '\n' : c));
      }
      const series = `${name}${JSON.stringify(Object.entries(labels).sort())}`;
      expect(seen.has(series), `${where}: series twice`).toBe(false);
      seen.add(series);
      family!.samples.push({ labels, value: value === '+Inf' ? Infinity : value === '-Inf' ? -Infinity : Number(value) });
    }
  }
  return families;
}

const scrape = async (url: string) => {
  const res = await fetch(`${url}/metrics`);
  expect(res.status).toBe(200);
  expect(res.headers.get('content-type')).toMatch(/^text\/plain; version=0\.0\.4; charset=utf-8/);
  return res.text();
};

/** The one sample of `name` whose labels include `labels`. */
const sample = (families: ReturnType<typeof parseStrict>, name: string, labels: Record<string, string> = {}): number => {
  const found = (families.get(name)?.samples ?? []).filter((s) => Object.entries(labels).every(([k, v]) => s.labels[k] === v));
  expect(found, `${name} ${JSON.stringify(labels)}`).toHaveLength(1);
  return found[0]!.value;
};

describe('GET /metrics with a real run', () => {
  let cluster: TestCluster;
  let run: RunRecord;
  let duringRun: string | null = null;

  beforeAll(async () => {
    cluster = await TestCluster.start('metrics');
    const config = parseRunConfig({
      name: 'metrics check',
      seed: 21,
      dataset: { kind: 'demo-tiles', samplesPerClass: 80, seed: 21 },
      search: { algorithm: 'aging-evolution', populationSize: 3, sampleSize: 2 },
      budget: { maxEvaluations: EVALUATIONS, maxMinutes: 10 },
      evaluation: { maxSeconds: 30 },
      champion: { epochs: 3, maxSeconds: 60 },
      searchSpace: { ...defaultSearchSpace(), epochs: { min: 6, max: 10 }, maxFlops: 1_000_000, filters: { min: 4, max: 12 }, units: { min: 8, max: 32 } },
    });
    cluster.spawnWorker('met-w1');
    cluster.spawnWorker('met-w2');
    await cluster.waitForReadyWorkers(2);
    run = await cluster.coordinator.startRun(config);
    const url = cluster.coordinator.url;
    try {
      await waitFor(
        'the run to finish',
        async () => {
          const s = statusResponseValidator.parse(await (await fetch(`${url}/status`)).json());
          if (!duringRun && s.run?.state === 'searching' && s.evaluations.done >= 1 && s.workers.filter((w) => w.alive).length === 2) duringRun = await scrape(url);
          return s.run?.state === 'finished' || s.run?.state === 'failed';
        },
        240_000,
        150,
      );
    } catch (err) {
      throw new Error(`${(err as Error).message}\nworker logs:\n${cluster.workerLogs.slice(-30).join('')}`);
    }
  });

  afterAll(async () => {
    await cluster?.stop();
  });

  it('follows the text format, by a strict reading and by a parser from npm', async () => {
    expect(duringRun, 'a scrape while searching with two live workers').not.toBeNull();
    for (const text of [duringRun!, await scrape(cluster.coordinator.url)]) {
      const strict = parseStrict(text);
      const library = parseWithLibrary(text);
      expect(library.map((f) => f.name).sort()).toEqual([...strict.keys()].sort());
      for (const f of library) {
        expect(f.type.toLowerCase()).toBe(strict.get(f.name)!.type);
        expect(f.metrics.map((m) => Number(m.value))).toEqual(strict.get(f.name)!.samples.map((s) => s.value));
      }
      expect(strict.get('netbreeder_reissues_total')!.type).toBe('counter');
      expect(strict.get('netbreeder_evaluations')!.type).toBe('gauge');
    }
    // while searching: two workers alive and training speed reported
    const live = parseStrict(duringRun!);
    expect(sample(live, 'netbreeder_workers_alive')).toBe(2);
    expect(sample(live, 'netbreeder_evaluations', { run: run.id, kind: 'search', state: 'done' })).toBeGreaterThanOrEqual(1);
  });

  it("equals the store's counts", async () => {
    const url = cluster.coordinator.url;
    const store = cluster.coordinator.store;
    // A request the coordinator refuses (logged as 'rejected-request'), so that count is not just zero.
    expect((await fetch(`${url}/runs/${run.id}/evaluations?since=yesterday`)).status).toBe(400);
    const m = parseStrict(await scrape(url));
    expect(store.getRun(run.id)!.state, store.getRun(run.id)!.failure ?? '').toBe('finished');
    expect(sample(m, 'netbreeder_run_info', { run: run.id, state: 'finished' })).toBe(1);
    for (const kind of ['search', 'champion'] as const) {
      const counts = store.counts(run.id, kind);
      for (const state of ['queued', 'running', 'done', 'failed'] as const) expect(sample(m, 'netbreeder_evaluations', { run: run.id, kind, state }), `${kind} ${state}`).toBe(counts[state]);
    }
    expect(sample(m, 'netbreeder_evaluations', { kind: 'search', state: 'done' }) + sample(m, 'netbreeder_evaluations', { kind: 'search', state: 'failed' })).toBeGreaterThanOrEqual(EVALUATIONS);
    expect(sample(m, 'netbreeder_best_validation_accuracy', { run: run.id })).toBe(store.topEvaluations(run.id, 1)[0]!.valAccuracy);
    expect(sample(m, 'netbreeder_reissues_total', { run: run.id })).toBe(store.events(run.id, 'reissued').length);
    const rejected = (kind: 'rejected-request' | 'rejected-result') => store.events(null, kind).length + store.events(run.id, kind).length;
    expect(sample(m, 'netbreeder_rejected_inputs_total', { kind: 'request' })).toBe(rejected('rejected-request'));
    expect(sample(m, 'netbreeder_rejected_inputs_total', { kind: 'request' })).toBeGreaterThanOrEqual(1);
    expect(sample(m, 'netbreeder_rejected_inputs_total', { kind: 'result' })).toBe(rejected('rejected-result'));
    // The workers' part read between two equal GET /status answers: a heartbeat may land at any moment.
    const readStatus = async () => statusResponseValidator.parse(await (await fetch(`${url}/status`)).json());
    const workersOf = (st: Awaited<ReturnType<typeof readStatus>>) => JSON.stringify(st.workers.map((w) => [w.workerId, w.alive, w.state, w.samplesPerSecond]));
    const { status, live } = await waitFor('a scrape between two equal worker states', async () => {
      const before = await readStatus();
      const scraped = parseStrict(await scrape(url));
      const after = await readStatus();
      return workersOf(before) === workersOf(after) ? { status: after, live: scraped } : null;
    }, 20_000, 200);
    expect(sample(m, 'netbreeder_workers_known')).toBe(store.listWorkers().length);
    expect(sample(live, 'netbreeder_workers_alive')).toBe(status.workers.filter((w) => w.alive).length);
    const trainingNow = status.workers.filter((w) => w.alive && w.state === 'training').reduce((t, w) => t + w.samplesPerSecond, 0);
    expect(sample(live, 'netbreeder_training_samples_per_second')).toBeCloseTo(trainingNow, 6);
    // throughput since start agrees with GET /status (both from the store)
    expect(sample(m, 'netbreeder_throughput_evaluations_per_minute', { window: 'since_start' })).toBeCloseTo(status.throughput.perMinuteSinceStart, 6);
    // queue depth straight from BullMQ's job counts, read while the queue stands still (the
    // coordinator removes finished jobs, which may happen between a scrape and a count)
    const queue = cluster.coordinator.queue;
    const settled = await waitFor('a scrape between two equal queue counts', async () => {
      const before = JSON.stringify(await queue.counts());
      const scraped = parseStrict(await scrape(url));
      const after = await queue.counts();
      return before === JSON.stringify(after) ? { scraped, jobs: after } : null;
    }, 20_000, 200);
    for (const [state, n] of Object.entries(settled.jobs)) expect(sample(settled.scraped, 'netbreeder_queue_jobs', { state }), state).toBe(n);
  });

  it('reads the same after a coordinator restart: nothing is counted only in memory', async () => {
    const before = parseStrict(await scrape(cluster.coordinator.url));
    const throughputBefore = await (await fetch(`${cluster.coordinator.url}/runs/${run.id}/throughput`)).json();
    const { dataDir, prefix } = cluster;
    await cluster.stop({ keepData: true });
    cluster = await TestCluster.start('metrics', { dataDir, prefix });
    const after = parseStrict(await scrape(cluster.coordinator.url));
    const series = (f: ReturnType<typeof parseStrict>, name: string) => f.get(name)!.samples;
    for (const name of ['netbreeder_run_info', 'netbreeder_evaluations', 'netbreeder_best_validation_accuracy', 'netbreeder_reissues_total', 'netbreeder_workers_known']) {
      expect(series(after, name), name).toEqual(series(before, name));
    }
    expect(await (await fetch(`${cluster.coordinator.url}/runs/${run.id}/throughput`)).json()).toEqual(throughputBefore);
  });

  it('keeps one registry per coordinator: a second one in this process answers for itself', async () => {
    const other = await TestCluster.start('metrics-other');
    try {
      const m = parseStrict(await scrape(other.coordinator.url));
      expect(m.get('netbreeder_run_info')!.samples).toEqual([]); // no run there
      expect(sample(m, 'netbreeder_workers_known')).toBe(0);
      // and the first still answers for its run
      const first = parseStrict(await scrape(cluster.coordinator.url));
      expect(sample(first, 'netbreeder_run_info', { run: run.id })).toBe(1);
    } finally {
      await other.stop();
    }
  });
});
