import { existsSync } from 'node:fs';
import { mkdir } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromium, type Browser, type Page } from 'playwright-core';
import {
  evaluationsResponseValidator,
  lineageResponseValidator,
  throughputResponseValidator,
  topGenomesResponseValidator,
  type EvaluationsResponse,
} from '@netbreeder/shared-types';
import type { RunRecord } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';
import { smallRunConfig } from './support/small-run.js';

/**
 * The dashboard page in a real headless browser (Debian's chromium, driven by playwright-core)
 * against a coordinator with a real run: two worker processes training real tiny models.
 * Screenshots land in test-artifacts/ (dashboard-live.png, dashboard-finished.png, dashboard-print.png).
 */
const EVALUATIONS = 10;
const CHROMIUM = '/usr/bin/chromium';
const ARTIFACTS = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'test-artifacts');

/** What the page's charts hold and have drawn, read from Chart.js inside the page. */
interface DrawnChart {
  points: number;
  drawn: number;
}
type DrawnCharts = Record<'bestTime' | 'bestCount' | 'scatter' | 'throughput', DrawnChart[]>;

/** For each chart and dataset: how many data points it holds and how many it placed inside its plot area. */
const drawnCharts = (page: Page): Promise<DrawnCharts> =>
  page.evaluate(() => {
    const dash = (globalThis as unknown as { netbreederDashboard: { charts: Record<string, unknown> } }).netbreederDashboard;
    type Element = { x: number; y: number; skip?: boolean };
    type ChartLike = {
      data: { datasets: Array<{ data: unknown[] }> };
      chartArea: { left: number; right: number; top: number; bottom: number };
      getDatasetMeta(i: number): { data: Element[] };
    };
    const out: Record<string, Array<{ points: number; drawn: number }>> = {};
    for (const name of ['bestTime', 'bestCount', 'scatter', 'throughput']) {
      const chart = dash.charts[name] as ChartLike;
      const a = chart.chartArea;
      out[name] = chart.data.datasets.map((ds, i) => ({
        points: ds.data.length,
        drawn: chart
          .getDatasetMeta(i)
          .data.filter((el) => !el.skip && Number.isFinite(el.x) && Number.isFinite(el.y) && el.x >= a.left - 1 && el.x <= a.right + 1 && el.y >= a.top - 1 && el.y <= a.bottom + 1).length,
      }));
    }
    return out as DrawnCharts;
  });

/** Every axis of every chart: its title as drawn (empty when hidden), its type, and the labels of the ticks it drew. */
const chartAxes = (page: Page) =>
  page.evaluate(() => {
    const dash = (globalThis as unknown as { netbreederDashboard: { charts: Record<string, unknown> } }).netbreederDashboard;
    type ScaleLike = { id: string; type: string; options: { title: { display: boolean; text: string } }; ticks: Array<{ label?: string | string[] }>; getLabels?: () => unknown[] };
    type ChartLike = { scales: Record<string, ScaleLike>; data: { labels?: unknown[] } };
    return ['bestTime', 'bestCount', 'scatter', 'throughput'].flatMap((name) =>
      Object.values((dash.charts[name] as ChartLike).scales).map((s) => ({
        axis: `${name}.${s.id}`,
        type: s.type,
        categories: (dash.charts[name] as ChartLike).data.labels?.length ?? 0,
        title: s.options.title.display ? s.options.title.text : '',
        labels: s.ticks.map((t) => (Array.isArray(t.label) ? t.label.join(' ') : (t.label ?? ''))).filter((l) => l !== ''),
      })),
    );
  });

const pageState = (page: Page) =>
  page.evaluate(() => {
    const s = (globalThis as unknown as { netbreederDashboard: { state: { polls: number; points: Map<string, unknown>; runId: string | null } } }).netbreederDashboard.state;
    return { polls: s.polls, points: s.points.size, runId: s.runId };
  });

describe('the dashboard page, live, in headless chromium', () => {
  let cluster: TestCluster;
  let run: RunRecord;
  let startRun: () => Promise<RunRecord>;
  let browser: Browser;
  let page: Page;
  const consoleErrors: string[] = [];

  beforeAll(async () => {
    if (!existsSync(CHROMIUM)) throw new Error(`no browser at ${CHROMIUM}: install Debian's chromium (apt-get install chromium); .ci/run does this`);
    await mkdir(ARTIFACTS, { recursive: true });
    cluster = await TestCluster.start('dashboard');
    const config = smallRunConfig('dashboard check', EVALUATIONS);
    cluster.spawnWorker('dash-w1');
    cluster.spawnWorker('dash-w2');
    await cluster.waitForReadyWorkers(2);
    startRun = () => cluster.coordinator.startRun(config);
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'],
    });
    page = await browser.newPage({ viewport: { width: 1440, height: 1000 } });
    page.on('console', (m) => {
      if (m.type() === 'error') consoleErrors.push(m.text());
    });
    page.on('pageerror', (e) => consoleErrors.push(e.message));
  });

  afterAll(async () => {
    await browser?.close();
    await cluster?.stop();
  });

  it('serves the page, its files and the charting library without a network', async () => {
    const url = cluster.coordinator.url;
    for (const path of ['/', '/dashboard']) {
      const res = await fetch(`${url}${path}`);
      expect(res.status).toBe(200);
      expect(res.headers.get('content-type')).toContain('text/html');
      expect(await res.text()).toContain('/dashboard/dashboard.js');
    }
    const lib = await fetch(`${url}/dashboard/vendor/chart.umd.min.js`);
    expect(lib.status).toBe(200);
    expect((await lib.text()).length).toBeGreaterThan(50_000);
    expect((await fetch(`${url}/dashboard/nothing.js`)).status).toBe(404); // only the page's own files
    expect((await fetch(`${url}/dashboard/..%2Fhttp%2Fserver.ts`)).status).toBe(404);
  });

  it('updates live while the search runs: charts with points, the live workers in the table', async () => {
    // Opened just before the run starts (so a busy machine cannot finish the run before the page
    // loads); from then on the page must fill itself, without a reload.
    await page.goto(`${cluster.coordinator.url}/?every=1`);
    await waitFor('the page to poll once', async () => ((await pageState(page)).polls >= 1 ? true : null), 20_000, 200);
    const atLoad = (await pageState(page)).points;
    run = await startRun();
    const workerRowIds = () =>
      page.$$eval('#workers-table tbody tr', (trs) => trs.map((tr) => (tr as unknown as { dataset: { workerId?: string } }).dataset.workerId ?? '').filter(Boolean).sort());
    await waitFor(
      'the page to show both workers and three results more than at load',
      async () => ((await pageState(page)).points >= Math.max(3, atLoad + 1) && (await workerRowIds()).length === 2 ? true : null),
      180_000,
      250,
    ).catch((err: Error) => {
      throw new Error(`${err.message}\nworker logs:\n${cluster.workerLogs.slice(-30).join('')}`);
    });
    // The export's card stays hidden until there is an export: a page that shows it saw a champion, which the store then holds.
    const filesShown = await page.isVisible('#champion-files');
    expect(filesShown && cluster.coordinator.store.getChampion(run.id) === null, 'champion files shown before the champion exists').toBe(false);
    const doneNow = cluster.coordinator.store.counts(run.id).done;
    // It keeps up: it holds at least every result the store had a moment ago.
    await waitFor('the page to hold every finished evaluation', async () => ((await pageState(page)).points >= doneNow ? true : null), 20_000, 250);
    const charts = await drawnCharts(page);
    expect(charts.scatter[0]!.points).toBeGreaterThanOrEqual(doneNow);
    expect(charts.scatter[0]!.drawn).toBe(charts.scatter[0]!.points);
    expect(charts.bestTime[0]!.drawn).toBeGreaterThanOrEqual(2); // the first result and the line's end
    expect(charts.bestCount[1]!.drawn).toBeGreaterThanOrEqual(doneNow); // a dot per evaluation
    expect(charts.throughput[0]!.points).toBeGreaterThanOrEqual(1);
    expect(charts.throughput[0]!.drawn).toBe(charts.throughput[0]!.points);

    const rows = await page.$$eval('#workers-table tbody tr', (trs) =>
      trs.map((tr) => {
        const row = tr as unknown as { dataset: { workerId?: string }; querySelectorAll(s: string): ArrayLike<{ textContent: string | null }> };
        return { id: row.dataset.workerId ?? '', cells: Array.from(row.querySelectorAll('td')).map((td) => td.textContent ?? '') };
      }),
    );
    expect(rows.map((r) => r.id).sort()).toEqual(['dash-w1', 'dash-w2']);
    for (const r of rows) {
      expect(['wasm', 'tensorflow', 'cpu']).toContain(r.cells[2]);
      expect(['training', 'idle', 'starting']).toContain(r.cells[8]); // alive, not 'lost'
    }
    await page.screenshot({ path: join(ARTIFACTS, 'dashboard-live.png'), fullPage: true });
  });

  it('answers the JSON routes from the store: incremental evaluations, throughput, top, lineage', async () => {
    const url = cluster.coordinator.url;
    await waitFor('the run to finish', () => ['finished', 'failed'].includes(cluster.coordinator.store.getRun(run.id)!.state), 240_000, 500);
    const store = cluster.coordinator.store;
    expect(store.getRun(run.id)!.state, store.getRun(run.id)!.failure ?? '').toBe('finished');

    const all: EvaluationsResponse = evaluationsResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/evaluations`)).json());
    const finished = store.evaluations(run.id).filter((e) => e.kind === 'search' && (e.state === 'done' || e.state === 'failed'));
    expect(all.evaluations.map((e) => e.evaluationId).sort()).toEqual(finished.map((e) => e.id).sort());
    expect(all.more).toBe(false);
    // in finish order, and the cursor is the last finish time
    const times = all.evaluations.map((e) => e.finishedAt);
    expect(times).toEqual([...times].sort((a, b) => a - b));
    expect(all.cursor).toBe(times[times.length - 1]);
    // incremental: from a middle cursor only the later ones (and those of that same millisecond) come
    const middle = times[Math.floor(times.length / 2)]!;
    const later = evaluationsResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/evaluations?since=${middle}`)).json());
    expect(later.evaluations.map((e) => e.evaluationId).sort()).toEqual(all.evaluations.filter((e) => e.finishedAt >= middle).map((e) => e.evaluationId).sort());
    // paging with a limit walks the same list
    const paged = evaluationsResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/evaluations?limit=3`)).json());
    expect(paged.evaluations).toHaveLength(3);
    expect(paged.more).toBe(true);

    const throughput = throughputResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/throughput`)).json());
    expect(throughput.buckets.reduce((s, b) => s + b.evaluations, 0)).toBe(store.counts(run.id).done);
    expect(throughput.buckets.some((b) => b.samplesPerSecond > 0)).toBe(true);

    const top = topGenomesResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/top?limit=3`)).json());
    // one row per distinct genome, in the store's order (best accuracy, then fewest parameters)
    const expected = store.topEvaluations(run.id, 1000).filter((e, i, all) => all.findIndex((o) => o.genomeHash === e.genomeHash) === i).slice(0, 3);
    expect(top.genomes.map((g) => g.evaluationId)).toEqual(expected.map((e) => e.id));
    expect(top.genomes[0]!.valAccuracy).toBe(expected[0]!.valAccuracy);

    const champion = store.getChampion(run.id)!;
    const lineage = lineageResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/lineage/${champion.genomeHash}`)).json());
    const chain = store.lineageChain(run.id, champion.genomeHash);
    expect(lineage.steps.map((s) => s.operator)).toEqual(chain.map((l) => l.operator));
    expect(lineage.steps.length ? lineage.steps[lineage.steps.length - 1]!.child.genomeHash : lineage.ancestor.genomeHash).toBe(champion.genomeHash);
    expect(store.lineageChain(run.id, lineage.ancestor.genomeHash)).toEqual([]); // the ancestor has no recorded parent

    expect((await fetch(`${url}/runs/${run.id}/lineage/${'0'.repeat(64)}`)).status).toBe(404);
    expect((await fetch(`${url}/runs/nope/top`)).status).toBe(404);
    expect((await fetch(`${url}/runs/${run.id}/evaluations?since=soon`)).status).toBe(400);
  });

  it('shows the finished run: champion, leading genomes and the lineage chain; prints on white', async () => {
    const store = cluster.coordinator.store;
    const champion = store.getChampion(run.id)!;
    const chain = store.lineageChain(run.id, champion.genomeHash);
    await waitFor('the page to show the champion', async () => ((await page.textContent('#tile-champion'))?.includes('%') ? true : null), 20_000, 250);
    await waitFor('the lineage to be drawn', async () => ((await page.$$('#lineage li:not(.empty)')).length === chain.length + 1 ? true : null), 20_000, 250);
    await waitFor('the page to show the run finished', async () => ((await page.textContent('#run-state')) === 'finished' ? true : null), 20_000, 250);
    expect(await page.textContent('#lineage-hint')).toContain('the champion');

    // The export, opened without a token: the report is a link (status access, like the page), the
    // export's files are named only, with how to get them; they stay admin.
    const url = cluster.coordinator.url;
    await waitFor('the champion files to show', async () => ((await page.isVisible('#champion-files')) ? true : null), 20_000, 250);
    const exported = (await (await fetch(`${url}/runs/${run.id}/champion`)).json()) as { files: string[]; ensemble: unknown };
    const listed = await page.$$eval('#champion-file-list li', (lis) => lis.map((li) => ({ name: li.textContent, linked: li.querySelector('a') !== null })));
    expect(listed.map((f) => f.name)).toEqual(exported.files.filter((f) => f !== 'report.html'));
    expect(listed.map((f) => f.name)).toEqual(expect.arrayContaining(['champion.json', 'model.json', 'weights.bin']));
    expect(listed.some((f) => f.linked)).toBe(false);
    expect(await page.isHidden('#ensemble-files')).toBe(exported.ensemble === null);
    expect(await page.textContent('#champion-files-access')).toContain('admin token');
    const reportHref = await page.getAttribute('#champion-report-link', 'href');
    expect(reportHref).toBe(`/runs/${run.id}/champion/report`);
    const report = await fetch(`${url}${reportHref}`);
    expect(report.status).toBe(200);
    expect(report.headers.get('content-type')).toContain('text/html');
    const reportHtml = await report.text();
    expect(reportHtml).toContain(`Champion of run ${store.getRun(run.id)!.name}`);
    // Its training curve has labelled axes: tick values and the titles of epochs, loss and accuracy.
    for (const title of ['epoch', 'training loss', 'training accuracy']) expect(reportHtml).toMatch(new RegExp(`class="axis-title[^"]*">${title}</text>`));
    expect(reportHtml).toMatch(/class="tick acc-label">100%<\/text>/);
    expect((await fetch(`${url}/runs/${run.id}/champion/files/weights.bin`)).status).toBe(401);
    const topRows = await page.$$eval('#top-table tbody tr', (trs) => trs.map((tr) => (tr as unknown as { dataset: { genomeHash?: string } }).dataset.genomeHash ?? ''));
    expect(topRows[0]).toBe(store.topEvaluations(run.id, 1)[0]!.genomeHash);
    const charts = await drawnCharts(page);
    expect(charts.scatter[0]!.points).toBe(store.counts(run.id).done);
    expect(charts.scatter[1]!.drawn).toBe(1); // the champion, marked
    // Every chart labels both axes: a title and drawn tick values (a time axis of one bucket has one).
    const axes = await chartAxes(page);
    expect(axes.map((a) => a.axis).sort()).toEqual(['bestCount.x', 'bestCount.y', 'bestTime.x', 'bestTime.y', 'scatter.x', 'scatter.y', 'throughput.x', 'throughput.y', 'throughput.y2']);
    for (const a of axes) {
      expect(a.title, a.axis).not.toBe('');
      expect(a.labels.length, `${a.axis}: ${a.labels.join(', ')}`).toBeGreaterThanOrEqual(a.type === 'category' ? Math.min(2, a.categories) : 2);
    }
    expect(axes.find((a) => a.axis === 'bestCount.y')!.labels).toContain('100%');
    // the FLOPs view redraws the same points
    await page.click('#size-flops');
    expect((await drawnCharts(page)).scatter[0]!.drawn).toBe(store.counts(run.id).done);
    await page.click('#size-params');
    await page.screenshot({ path: join(ARTIFACTS, 'dashboard-finished.png'), fullPage: true });
    // A laptop and a desktop screen: nothing wider than the window, and no tile cuts its text.
    for (const width of [1280, 1920]) {
      await page.setViewportSize({ width, height: 900 });
      await page.waitForTimeout(300);
      const layout = await page.evaluate(() => {
        type Box = { scrollWidth: number; clientWidth: number; id: string; textContent: string | null };
        const doc = (globalThis as unknown as { document: { documentElement: Box; querySelectorAll(s: string): ArrayLike<Box> } }).document;
        const cut = Array.from(doc.querySelectorAll('.tile-label, .tile-value, .tile-note'))
          .filter((e) => e.scrollWidth > e.clientWidth)
          .map((e) => `${e.id || 'a label'}: "${e.textContent ?? ''}"`);
        return { overflow: doc.documentElement.scrollWidth - doc.documentElement.clientWidth, cut, notes: Array.from(doc.querySelectorAll('.tile-note')).filter((e) => e.textContent).length };
      });
      expect(layout.overflow, `at ${width} px`).toBe(0);
      expect(layout.notes).toBeGreaterThanOrEqual(6); // the check looked at filled tiles
      expect(layout.cut, `tiles that cut their text at ${width} px`).toEqual([]);
      await page.screenshot({ path: join(ARTIFACTS, `dashboard-${width}.png`) });
    }

    // The pill shows the phase the coordinator reports: here the real status of this run, with the
    // phase a searching run has while its done search waits for open verifications (when the
    // coordinator says so is checked in run-lifecycle.test.ts).
    const statusUrl = (url: URL) => url.pathname === '/status';
    await page.route(statusUrl, async (route) => {
      const real = (await (await route.fetch()).json()) as { run: Record<string, unknown> };
      await route.fulfill({ json: { ...real, run: { ...real.run, state: 'searching', phase: 'verifying' } } });
    });
    await waitFor('the page to show the run verifying', async () => ((await page.textContent('#run-state')) === 'verifying' ? true : null), 20_000, 250);
    await page.unroute(statusUrl);
    await waitFor('the page to show the run finished again', async () => ((await page.textContent('#run-state')) === 'finished' ? true : null), 20_000, 250);

    await page.emulateMedia({ media: 'print' });
    type Page = { getComputedStyle(e: unknown): { backgroundColor: string }; document: { body: unknown } };
    const background = await page.evaluate(() => (globalThis as unknown as Page).getComputedStyle((globalThis as unknown as Page).document.body).backgroundColor);
    expect(background).toBe('rgb(255, 255, 255)');
    await page.setViewportSize({ width: 794, height: 1123 }); // A4 at 96 dpi
    await page.screenshot({ path: join(ARTIFACTS, 'dashboard-print.png'), fullPage: true });
    await page.pdf({ path: join(ARTIFACTS, 'dashboard-print.pdf'), format: 'A4', printBackground: true });
    await page.emulateMedia({ media: 'screen' });
    expect(consoleErrors).toEqual([]);
  });

  it('links every file of the export, and of an ensemble asked for later, on a page opened with the admin token', async () => {
    const url = cluster.coordinator.url;
    const store = cluster.coordinator.store;
    const admin = cluster.coordinator.secrets.adminToken;
    const asked = await fetch(`${url}/runs/${run.id}/ensemble`, { method: 'POST', headers: { authorization: `Bearer ${admin}`, 'content-type': 'application/json' }, body: JSON.stringify({ size: 2 }) });
    expect(asked.status, await asked.clone().text()).toBe(202);
    await waitFor('the ensemble to be trained and scored', () => store.getRun(run.id)!.state === 'finished' && store.events(run.id, 'ensemble-scored').length > 0, 180_000, 500);

    const adminPage = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    adminPage.on('pageerror', (e) => consoleErrors.push(e.message));
    try {
      await adminPage.goto(`${url}/?every=1&token=${encodeURIComponent(admin)}`);
      await waitFor('the ensemble files to show', async () => ((await adminPage.isVisible('#ensemble-files')) ? true : null), 20_000, 250);
      const exported = (await (await fetch(`${url}/runs/${run.id}/champion`)).json()) as { files: string[]; ensemble: { files: string[] } };
      const links = (selector: string) => adminPage.$$eval(selector, (as) => as.map((a) => ({ name: a.textContent ?? '', href: a.getAttribute('href') ?? '' })));
      const files = await links('#champion-file-list a');
      const ensemble = await links('#ensemble-file-list a');
      expect(files.map((f) => f.name)).toEqual(exported.files.filter((f) => f !== 'report.html'));
      expect(ensemble.map((f) => f.name)).toEqual(exported.ensemble.files);
      expect(ensemble.map((f) => f.name)).toEqual(expect.arrayContaining(['ensemble.json', 'member-1.model.json', 'member-2.weights.bin']));
      expect(await adminPage.textContent('#champion-files-access')).toContain("this page's admin token");
      // Every link opens its file (each carries the page's token); the same address without it is refused.
      for (const { name, href } of [...files, ...ensemble, { name: 'report', href: (await adminPage.getAttribute('#champion-report-link', 'href'))! }]) {
        const res = await fetch(`${url}${href}`);
        expect(res.status, `${name}: ${href}`).toBe(200);
        const body = Buffer.from(await res.arrayBuffer());
        expect(body.length, name).toBeGreaterThan(0);
        if (name === 'model.json') expect((JSON.parse(body.toString()) as { weightsManifest: unknown[] }).weightsManifest).toHaveLength(1);
        if (name !== 'report') expect((await fetch(`${url}${href.replace(/\?.*$/, '')}`)).status, name).toBe(401);
      }
    } finally {
      await adminPage.close();
    }
    expect(consoleErrors).toEqual([]);
  });
});
