/* netbreeder run watch: polls the coordinator's JSON routes and updates the page in place.
   GET /status (run, counts, workers, best, champion, reference), /runs/:id/evaluations?since= (incremental),
   /runs/:id/throughput, /runs/:id/top, /runs/:id/lineage/:hash, and once per champion /runs/:id/champion
   (its files). `?every=SECONDS` sets the pace. */
(function () {
  'use strict';
  const params = new URLSearchParams(location.search);
  const EVERY_MS = Math.max(1, Number(params.get('every')) || 3) * 1000;
  const $ = (id) => document.getElementById(id);
  const charts = window.NbCharts.create();
  const { pct, compact } = charts;
  // A regression run shows errors in the target's units, never its fitness as an accuracy.
  const rmse = (v) => `RMSE ${Number(v.toPrecision(4))}`;
  /** A genome's validation score as shown: RMSE in a regression run (its fitness is no accuracy), else accuracy. */
  const valScore = (g) => (state.regression ? (g.valRmse == null ? 'not scored' : rmse(g.valRmse)) : g.valAccuracy == null ? 'not scored' : pct(g.valAccuracy));

  const state = {
    runId: null,
    startMs: 0,
    cursor: 0,
    points: new Map(), // evaluationId → point; answers repeat the cursor's millisecond, so keyed
    leaderHash: null,
    pickedHash: null,
    lineageKey: null,
    sizeKey: 'params',
    front: null, // the last /runs/:id/front answer of a multi-objective run
    regression: false, // the run predicts a number (GET /status names its target column)
    filesKey: null, // run, champion and run state the "Champion files" card was drawn for
    lastOk: 0,
    polls: 0,
  };
  // For people poking at the page from the console, and for the page's browser test.
  window.netbreederDashboard = { charts, state };

  // A coordinator with private status is opened as /?token=…; the data requests carry it along.
  const token = params.get('token');
  async function getJson(path) {
    const headers = { accept: 'application/json' };
    if (token) headers.authorization = `Bearer ${token}`;
    const res = await fetch(path, { headers, cache: 'no-store' });
    if (!res.ok) throw new Error(`${path}: HTTP ${res.status}`);
    return res.json();
  }

  /** A link of the page's own coordinator, carrying the page's token (a plain link cannot send a header). */
  const withToken = (path) => (token ? `${path}?token=${encodeURIComponent(token)}` : path);

  const text = (el, value) => {
    el.textContent = value;
    return el;
  };
  const cell = (value, cls) => {
    const td = document.createElement('td');
    if (cls) td.className = cls;
    td.textContent = value;
    return td;
  };
  const ago = (seconds) => {
    if (seconds < 1) return 'just now';
    if (seconds < 90) return `${Math.round(seconds)} s ago`;
    if (seconds < 5400) return `${Math.round(seconds / 60)} min ago`;
    return `${(seconds / 3600).toFixed(1)} h ago`;
  };
  const duration = (seconds) => {
    const s = Math.round(seconds);
    const h = Math.floor(s / 3600);
    const m = Math.floor((s % 3600) / 60);
    return h ? `${h} h ${m} min` : m ? `${m} min ${s % 60} s` : `${s} s`;
  };
  const sortedPoints = () => [...state.points.values()].sort((a, b) => a.finishedAt - b.finishedAt || a.seq - b.seq);

  function showStatus(s) {
    const run = s.run;
    text($('foot-coordinator'), `coordinator ${s.coordinator.version}, up ${duration(s.coordinator.uptimeSeconds)}`);
    if (!run) return;
    text($('run-name'), run.name);
    // The phase says 'verifying' while a done search waits for open verifications (older coordinators send only the state).
    const phase = run.phase ?? run.state;
    const pill = $('run-state');
    pill.className = `pill pill-${phase}`;
    text(pill, phase.replace('-', ' '));
    text($('run-id'), run.id);
    text($('run-algorithm'), `${run.algorithm} · seed ${run.seed}`);
    text($('run-elapsed'), `${duration(run.elapsedSeconds)} of at most ${run.maxMinutes} min`);
    document.title = `${run.name} · ${phase} · netbreeder`;

    const e = s.evaluations;
    text($('tile-done'), String(e.done));
    text($('tile-done-note'), `of ${run.maxEvaluations} planned${e.failed ? ` · ${e.failed} failed` : ''}`);
    text($('tile-flight'), String(e.running + e.queued));
    text($('tile-flight-note'), `${e.running} training · ${e.queued} queued`);
    text($('tile-best'), s.best ? (s.best.valRegression ? rmse(s.best.valRegression.rmse) : pct(s.best.valAccuracy)) : '–');
    text($('tile-best-note'), s.best ? `${compact(s.best.paramCount)} params · ${compact(s.best.flops)} FLOPs` : 'no result yet');
    text($('tile-rate'), s.throughput.perMinuteLastMinute.toFixed(0));
    text($('tile-rate-note'), `last minute · ${s.throughput.perMinuteSinceStart.toFixed(1)} since start`);
    const alive = s.workers.filter((w) => w.alive);
    text($('tile-workers'), String(alive.length));
    const training = alive.filter((w) => w.state === 'training');
    text($('tile-workers-note'), `${s.workers.length} seen · ${training.length ? `${compact(training.reduce((t, w) => t + w.samplesPerSecond, 0))} samples/s now` : 'none training'}`);
    const reg = s.champion?.testRegression;
    text($('tile-champion'), s.champion ? (reg ? rmse(reg.rmse) : pct(s.champion.testAccuracy)) : '–');
    text($('tile-champion-note'), s.champion ? (reg ? `test · predicting the mean: ${rmse(reg.baselineRmse)}` : `validation ${pct(s.champion.valAccuracy)}`) : run.state === 'training-champion' ? 'training now…' : phase === 'verifying' ? 'once verifications are in' : 'after the search');
    showReference(s.reference);
    showWorkers(s.workers);
    showTrust(s);
  }

  /** The reference network's test score beside the champion's, and the plain line comparing them. */
  function showReference(r) {
    const scored = r?.state === 'scored';
    if (state.regression) {
      text($('tile-reference'), r?.referenceTestRmse != null ? rmse(r.referenceTestRmse) : '–');
      text($('tile-reference-note'), !r ? '' : r.state === 'pending' ? 'trained beside the champion' : scored && r.championTestRmse != null ? `test · the champion's ${rmse(r.championTestRmse)}` : r.state);
    } else {
      text($('tile-reference'), r?.referenceTestAccuracy != null ? pct(r.referenceTestAccuracy) : '–');
      text($('tile-reference-note'), !r ? '' : r.state === 'pending' ? 'trained beside the champion' : scored && r.points != null ? `${r.points >= 0 ? '+' : ''}${r.points.toFixed(2)} points for the champion` : r.state);
    }
    const line = $('reference-line');
    line.hidden = !r || r.state !== 'scored';
    if (r) text(line, r.line);
  }

  /** CPU time and energy (marked when it rests on the default watts), verification verdicts and quarantined workers. */
  function showTrust(s) {
    const a = s.accounting;
    if (a) {
      text($('tile-cpu'), `${compact(a.total.cpuSeconds)} s`);
      const assumed = a.total.assumedWattHours > 0 ? ` (${a.total.assumedWattHours >= a.total.wattHours ? 'all' : 'partly'} assumed: ${a.defaultWatts} W/core)` : '';
      text($('tile-cpu-note'), `${a.total.wattHours.toFixed(2)} Wh${assumed} · ${a.search.cpuSecondsPerEvaluation.toFixed(1)} s per evaluation`);
    }
    const v = s.verification;
    if (v) {
      const q = v.quarantinedWorkers.length ? ` · quarantined: ${v.quarantinedWorkers.join(', ')}` : '';
      text($('trust-note'), `verification (${pct(v.spotCheckFraction)} of results spot-checked): ${v.confirmed} confirmed · ${v.rejected} rejected · ${v.disputed} disputed · ${v.unverified} unverified · ${v.open} open${q}`);
    }
  }

  function showWorkers(workers) {
    const body = $('workers-table').tBodies[0];
    const rows = workers
      .slice()
      .sort((a, b) => Number(b.alive) - Number(a.alive) || a.workerId.localeCompare(b.workerId))
      .map((w) => {
        const tr = document.createElement('tr');
        const quarantined = Boolean(w.trust && w.trust.quarantined);
        const label = quarantined ? 'quarantined' : w.alive ? w.state : 'lost';
        tr.className = quarantined ? 'quarantined' : w.alive ? 'alive' : 'lost';
        tr.dataset.workerId = w.workerId;
        tr.append(
          cell(w.workerId, 'mono'),
          cell(w.host),
          cell(w.backend ?? '–'),
          cell(String(w.cores), 'num'),
          cell(w.currentEvaluationId ?? '–', 'mono'),
          cell(String(w.evaluationsDone), 'num'),
          cell(w.samplesPerSecond ? compact(w.samplesPerSecond) : '–', 'num'),
          cell(ago(w.secondsSinceHeartbeat)),
        );
        const st = document.createElement('td');
        const span = document.createElement('span');
        span.className = `state ${label}`;
        span.textContent = label;
        if (quarantined) span.title = w.trust.quarantineReason || '';
        st.append(span);
        tr.append(
          st,
          cell(w.trust ? w.trust.reliability.toFixed(2) : '–', 'num'),
          cell(w.cpu ? compact(w.cpu.cpuSeconds) : '–', 'num'),
          cell(w.cpu ? `${w.cpu.wattHours.toFixed(2)} Wh${w.wattsAssumed === false ? '' : ' (assumed)'}` : '–', 'num'),
        );
        return tr;
      });
    if (!rows.length) return;
    body.replaceChildren(...rows);
    text($('workers-hint'), `${workers.filter((w) => w.alive).length} alive of ${workers.length}`);
  }

  async function pullEvaluations() {
    for (let i = 0; i < 20; i++) {
      const answer = await getJson(`/runs/${state.runId}/evaluations?since=${state.cursor}`);
      for (const p of answer.evaluations) state.points.set(p.evaluationId, p);
      state.cursor = answer.cursor;
      if (!answer.more) break;
    }
  }

  function showTop(top) {
    const body = $('top-table').tBodies[0];
    if (!top.genomes.length) return;
    body.replaceChildren(
      ...top.genomes.map((g) => {
        const tr = document.createElement('tr');
        tr.dataset.genomeHash = g.genomeHash;
        if (g.genomeHash === (state.pickedHash ?? state.leaderHash)) tr.className = 'picked';
        tr.title = `evaluation ${g.evaluationId}`;
        tr.append(cell(String(g.rank), 'num'), cell(g.summary, 'summary'), cell(valScore(g), 'num'), cell(compact(g.params), 'num'), cell(compact(g.flops), 'num'));
        tr.addEventListener('click', () => {
          state.pickedHash = g.genomeHash === state.leaderHash ? null : g.genomeHash;
          for (const row of body.rows) row.classList.toggle('picked', row.dataset.genomeHash === g.genomeHash);
          refreshLineage(true).catch(() => undefined);
        });
        return tr;
      }),
    );
  }

  function genomeLines(g) {
    const box = document.createElement('div');
    const figures = document.createElement('div');
    figures.className = 'figures';
    const b = document.createElement('b');
    b.textContent = valScore(g);
    figures.append(b, ` · ${compact(g.params)} params · ${compact(g.flops)} FLOPs · `, Object.assign(document.createElement('span'), { className: 'mono', textContent: g.genomeHash.slice(0, 10) }));
    const genome = document.createElement('div');
    genome.className = 'genome';
    genome.textContent = g.summary;
    box.append(genome, figures);
    return box;
  }

  function showLineage(lineage, whose) {
    const list = $('lineage');
    const items = [];
    const root = document.createElement('li');
    root.className = 'root';
    const head = document.createElement('div');
    head.append(Object.assign(document.createElement('span'), { className: 'op', textContent: 'first ancestor' }));
    root.append(head, genomeLines(lineage.ancestor));
    items.push(root);
    lineage.steps.forEach((step, i) => {
      const li = document.createElement('li');
      if (i === lineage.steps.length - 1) li.className = 'leaf';
      const line = document.createElement('div');
      line.append(Object.assign(document.createElement('span'), { className: 'op', textContent: step.operator }), ' ', Object.assign(document.createElement('span'), { className: 'detail', textContent: step.detail }));
      li.append(line, genomeLines(step.child));
      items.push(li);
    });
    list.replaceChildren(...items);
    text($('lineage-hint'), `${whose}: ${lineage.steps.length} mutation${lineage.steps.length === 1 ? '' : 's'} from its first ancestor (a fresh genome)`);
  }

  async function refreshLineage(force) {
    const hash = state.pickedHash ?? state.leaderHash;
    if (!hash || !state.runId) return;
    const whose = state.pickedHash ? 'the selected genome' : state.leaderIs;
    const key = `${state.runId}:${hash}:${whose}`;
    if (!force && key === state.lineageKey) return;
    const lineage = await getJson(`/runs/${state.runId}/lineage/${hash}`);
    state.lineageKey = key;
    showLineage(lineage, whose);
  }

  /**
   * The champion's export, once it exists: the report (status access, like this page) and the
   * files of the export and of its ensemble, which need the admin token. They are links only when
   * the page's own token may read them (asked once per champion with a HEAD request).
   */
  async function refreshChampionFiles(run, champion) {
    const box = $('champion-files');
    if (!champion) {
      box.hidden = true;
      state.filesKey = null;
      return;
    }
    const key = `${run.id}:${champion.evaluationId}:${run.state}`;
    if (key === state.filesKey) return;
    const doc = await getJson(`/runs/${run.id}/champion`);
    const probe = token ? await fetch(`/runs/${run.id}/champion/files/champion.json`, { method: 'HEAD', headers: { authorization: `Bearer ${token}` }, cache: 'no-store' }) : null;
    const admin = Boolean(probe && probe.ok);
    const item = (name, path) => {
      const li = document.createElement('li');
      li.append(admin ? Object.assign(document.createElement('a'), { href: withToken(path), textContent: name, download: name }) : Object.assign(document.createElement('span'), { textContent: name }));
      return li;
    };
    $('champion-report-link').href = withToken(`/runs/${run.id}/champion/report`);
    $('champion-file-list').replaceChildren(...doc.files.filter((f) => f !== 'report.html').map((f) => item(f, `/runs/${run.id}/champion/files/${f}`)));
    const ensemble = doc.ensemble ? doc.ensemble.files : [];
    $('ensemble-files').hidden = ensemble.length === 0;
    $('ensemble-file-list').replaceChildren(...ensemble.map((f) => item(f, `/runs/${run.id}/ensemble/files/${f}`)));
    text(
      $('champion-files-access'),
      admin
        ? 'read with this page\'s admin token'
        : `the model and its files need the admin token: npm run netbreeder -- export --run ${run.id} --out DIR, or open this page as /?token=ADMIN_TOKEN`,
    );
    box.hidden = false;
    state.filesKey = key;
  }

  async function poll() {
    const status = await getJson('/status');
    state.regression = Boolean(status.run?.target);
    charts.setRegression(state.regression);
    $('top-score').textContent = state.regression ? 'val. RMSE' : 'val. acc.';
    for (const el of document.querySelectorAll('.score-name')) el.textContent = state.regression ? 'RMSE' : 'accuracy';
    showStatus(status);
    const run = status.run;
    if (!run) return;
    if (run.id !== state.runId) {
      Object.assign(state, { runId: run.id, cursor: 0, points: new Map(), pickedHash: null, lineageKey: null });
    }
    // The search starts when the run is created (GET /status counts its elapsed time from there).
    state.startMs = Date.parse(run.createdAt);
    const endMs = state.startMs + run.elapsedSeconds * 1000;
    // The champion, once there is one, else the best so far, is the leader whose lineage is shown.
    state.leaderHash = status.champion?.genomeHash ?? status.best?.genomeHash ?? null;
    state.leaderIs = status.champion ? 'the champion' : 'the best so far';

    const [, throughput, top] = await Promise.all([pullEvaluations(), getJson(`/runs/${run.id}/throughput`), getJson(`/runs/${run.id}/top?limit=8`)]);
    const points = sortedPoints();
    charts.setBest(points, state.startMs, endMs);
    charts.setEvaluations(points, state.leaderHash);
    charts.setThroughput(throughput, state.startMs);
    text($('throughput-hint'), `from finished evaluations, ${throughput.bucketSeconds} s buckets`);
    const failed = points.filter((p) => p.state === 'failed').length;
    text($('scatter-caption'), `${points.length - failed} scored evaluations${failed ? ` (${failed} failed, not drawn)` : ''} · validation ${state.regression ? `RMSE (${status.run.target})` : 'accuracy'} against size, log scale`);
    showTop(top);
    await refreshChampionFiles(run, status.champion);
    await refreshFront(run);
    await refreshLineage(false);
  }

  /** Multi-objective runs: the accuracy-against-cost front (RMSE against cost in a regression run) for the size shown, highlighted on the scatter. */
  async function refreshFront(run) {
    if (run.algorithm !== 'pareto-evolution') {
      state.front = null;
      return;
    }
    const answer = await getJson(`/runs/${run.id}/front?objective=${state.sizeKey}`);
    state.front = answer;
    $('size-latency').hidden = answer.runObjective !== 'latency';
    charts.setFront(answer);
    const hint = $('front-hint');
    hint.hidden = false;
    const cost = { params: 'parameters', flops: 'FLOPs', latency: 'latency' }[answer.objective];
    text(hint, `front (triangles): ${answer.front.length} of ${answer.points.length} results that no other beats on both ${state.regression ? 'RMSE' : 'accuracy'} and ${cost}${answer.objective === answer.runObjective ? ', the trade-off this run searches' : ''}; pick one as champion with netbreeder pick RUN GENOME`);
  }

  function setSize(key) {
    state.sizeKey = key;
    for (const [id, k] of [['size-params', 'params'], ['size-flops', 'flops'], ['size-latency', 'latency']]) {
      $(id).classList.toggle('on', k === key);
      $(id).setAttribute('aria-pressed', String(k === key));
    }
    charts.setSizeKey(key, sortedPoints(), state.leaderHash);
    if (state.front && state.runId) refreshFront({ id: state.runId, algorithm: 'pareto-evolution' }).catch(() => undefined);
  }
  $('size-params').addEventListener('click', () => setSize('params'));
  $('size-flops').addEventListener('click', () => setSize('flops'));
  $('size-latency').addEventListener('click', () => setSize('latency'));

  async function loop() {
    try {
      await poll();
      state.lastOk = Date.now();
      state.polls += 1;
      $('live-dot').className = 'live-dot ok';
      text($('updated'), `updated ${new Date().toLocaleTimeString()}`);
    } catch (err) {
      $('live-dot').className = 'live-dot stale';
      text($('updated'), `cannot reach the coordinator (${err.message}); retrying`);
    }
    setTimeout(loop, EVERY_MS);
  }
  loop();
})();
