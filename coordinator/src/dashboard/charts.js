/* netbreeder run watch: the four charts (Chart.js, served from the coordinator's node_modules).
   Exposes window.NbCharts.create() → { bestTime, bestCount, scatter, throughput, ...setters }. */
(function () {
  'use strict';
  const css = getComputedStyle(document.documentElement);
  const colour = (name, fallback) => (css.getPropertyValue(name) || fallback).trim();
  const C = {
    ink: colour('--ink', '#1e2a2e'),
    soft: colour('--ink-soft', '#56666b'),
    rule: colour('--rule', '#ddd5c4'),
    glaze: colour('--glaze', '#1f6f78'),
    clay: colour('--clay', '#bf5430'),
    ochre: colour('--ochre', '#c39122'),
  };
  const alpha = (hex, a) => {
    const n = parseInt(hex.replace('#', ''), 16);
    return `rgba(${(n >> 16) & 255}, ${(n >> 8) & 255}, ${n & 255}, ${a})`;
  };

  const pct = (v) => `${(v * 100).toFixed(v >= 0.999 ? 0 : 1)}%`;
  const compact = (v) => {
    const a = Math.abs(v);
    if (a >= 1e9) return `${+(v / 1e9).toPrecision(3)}G`;
    if (a >= 1e6) return `${+(v / 1e6).toPrecision(3)}M`;
    if (a >= 1e3) return `${+(v / 1e3).toPrecision(3)}k`;
    return `${+v.toPrecision(3)}`;
  };
  /** Minutes since the search began as a clock reading: 0:45, 12:05, 2:10:00. */
  const clock = (v) => {
    const total = Math.round(v * 60);
    const h = Math.floor(total / 3600);
    const m = Math.floor((total % 3600) / 60);
    const sec = String(total % 60).padStart(2, '0');
    return h ? `${h}:${String(m).padStart(2, '0')}:${sec}` : `${m}:${sec}`;
  };

  function setDefaults() {
    const d = window.Chart.defaults;
    d.animation = false; // live updates and print alike: no motion
    d.responsive = true;
    d.maintainAspectRatio = false;
    d.font.family = "'DejaVu Sans', 'Segoe UI', system-ui, sans-serif";
    d.font.size = 11;
    d.color = C.soft;
    d.borderColor = alpha(C.rule, 0.9);
    d.plugins.legend.display = false;
    d.plugins.tooltip.backgroundColor = C.ink;
    d.plugins.tooltip.padding = 8;
  }

  const accuracyAxis = () => ({ min: 0, max: 1, ticks: { callback: (v) => pct(v), stepSize: 0.2 }, title: { display: true, text: 'validation accuracy' } });
  const rmseAxis = () => ({ min: 0, ticks: { callback: (v) => Number(v.toPrecision(3)) }, title: { display: true, text: "validation RMSE (target's units, lower is better)" } });

  /**
   * What the charts plot: validation accuracy (higher is better), or in a regression run the
   * validation RMSE in the target's units (lower is better), never the fitness behind it.
   */
  const ACCURACY = { of: (p) => p.valAccuracy, better: (a, b) => a > b, show: (v) => pct(v), axis: accuracyAxis };
  const RMSE = { of: (p) => p.valRmse, better: (a, b) => a < b, show: (v) => `RMSE ${Number(v.toPrecision(4))}`, axis: rmseAxis };

  function create() {
    setDefaults();
    const Chart = window.Chart;

    const bestTime = new Chart(document.getElementById('chart-best-time'), {
      type: 'line',
      data: { datasets: [{ label: 'best so far', data: [], borderColor: C.glaze, backgroundColor: alpha(C.glaze, 0.12), fill: 'origin', stepped: 'after', pointRadius: 2.5, pointBackgroundColor: C.glaze, borderWidth: 2 }] },
      options: {
        parsing: false,
        scales: { x: { type: 'linear', min: 0, ticks: { callback: (v) => clock(v), maxTicksLimit: 8 }, title: { display: true, text: 'time since the search began' } }, y: accuracyAxis() },
        plugins: { tooltip: { callbacks: { label: (c) => `best ${score.show(c.parsed.y)} at ${clock(c.parsed.x)}` } } },
      },
    });

    const bestCount = new Chart(document.getElementById('chart-best-count'), {
      type: 'line',
      data: {
        datasets: [
          { label: 'best so far', data: [], borderColor: C.clay, stepped: 'after', pointRadius: 0, borderWidth: 2, order: 1 },
          { label: 'each evaluation', type: 'scatter', data: [], pointRadius: 2.5, pointBackgroundColor: alpha(C.ink, 0.35), pointBorderWidth: 0, order: 2 },
        ],
      },
      options: {
        parsing: false,
        scales: { x: { type: 'linear', min: 0, ticks: { precision: 0 }, title: { display: true, text: 'evaluations finished' } }, y: accuracyAxis() },
        plugins: { tooltip: { callbacks: { label: (c) => `${c.dataset.label}: ${score.show(c.parsed.y)} (#${c.parsed.x})` } } },
      },
    });

    let score = ACCURACY;
    /** Regression runs plot RMSE on every score axis. */
    function setRegression(regression) {
      const next = regression ? RMSE : ACCURACY;
      if (next === score) return;
      score = next;
      for (const c of [bestTime, bestCount, scatter]) {
        c.options.scales.y = score.axis();
        c.update('none');
      }
    }
    /** Validation RMSE of the evaluations seen, by id: the front route carries only the fitness. */
    const rmseById = new Map();

    let sizeKey = 'params';
    // With parsing off the charting library expects each dataset sorted by x: it reads the range
    // from the ends, so unsorted points past them were placed outside the plot.
    const byX = (a, b) => a.x - b.x;
    /** 1, 2 or 5 times a power of ten: the log axis labels only those (when it holds two or more), so close ticks do not overlap. */
    const isOneTwoFive = (v) => [1, 2, 5].some((m) => Math.abs(v / 10 ** Math.floor(Math.log10(v)) - m) < 1e-9);
    const scatter = new Chart(document.getElementById('chart-scatter'), {
      type: 'scatter',
      data: {
        datasets: [
          { label: 'evaluations', data: [], pointRadius: 3.5, pointBackgroundColor: alpha(C.glaze, 0.55), pointBorderColor: C.glaze, pointBorderWidth: 1 },
          { label: 'leader', data: [], pointRadius: 7, pointStyle: 'rectRot', pointBackgroundColor: C.clay, pointBorderColor: C.ink, pointBorderWidth: 1 },
          // Multi-objective runs: the non-dominated results (no other is as accurate for less cost), joined in cost order.
          { label: 'front', data: [], showLine: true, stepped: 'before', borderColor: C.ochre, borderWidth: 2, pointRadius: 5, pointStyle: 'triangle', pointBackgroundColor: C.ochre, pointBorderColor: C.ink, pointBorderWidth: 1 },
        ],
      },
      options: {
        parsing: false,
        scales: {
          // A narrow range (say 3k to 8k) holds one such value or none: then every tick is labelled.
          x: { type: 'logarithmic', ticks: { maxRotation: 0, autoSkipPadding: 6, callback: (v, _i, ticks) => (isOneTwoFive(v) || ticks.filter((t) => isOneTwoFive(t.value)).length < 2 ? compact(v) : '') }, title: { display: true, text: 'parameters (log scale)' } },
          y: accuracyAxis(),
        },
        plugins: {
          tooltip: {
            callbacks: {
              label: (c) => {
                const p = c.raw;
                if (p.cost !== undefined) return `${c.dataset.label === 'front' ? 'front: ' : ''}${score.show(p.y)} · ${sizeKey === 'latency' ? `${p.cost.toFixed(2)} ms` : compact(p.cost)} · ${p.genomeHash.slice(0, 10)}`;
                return `${score.show(p.y)} · ${compact(p.params)} params · ${compact(p.flops)} FLOPs${p.workerId ? ` · ${p.workerId}` : ''}`;
              },
            },
          },
        },
      },
    });

    const throughput = new Chart(document.getElementById('chart-throughput'), {
      data: {
        labels: [],
        datasets: [
          { type: 'bar', label: 'evaluations / min', data: [], backgroundColor: alpha(C.ochre, 0.75), borderColor: C.ochre, borderWidth: 1, yAxisID: 'y', order: 2 },
          { type: 'line', label: 'samples / s', data: [], borderColor: C.glaze, backgroundColor: C.glaze, pointRadius: 0, borderWidth: 2, tension: 0.25, yAxisID: 'y2', order: 1 },
        ],
      },
      options: {
        scales: {
          x: { ticks: { maxTicksLimit: 10, autoSkip: true }, title: { display: true, text: 'time since the search began' } },
          y: { beginAtZero: true, position: 'left', title: { display: true, text: 'evaluations / min' }, ticks: { precision: 1 } },
          y2: { beginAtZero: true, position: 'right', grid: { drawOnChartArea: false }, title: { display: true, text: 'samples / s' }, ticks: { callback: (v) => compact(v) } },
        },
        plugins: { legend: { display: true, position: 'top', align: 'end', labels: { boxWidth: 10, boxHeight: 10 } } },
      },
    });

    let front = null;
    /** The answer of /runs/:id/front for the current size key (null: not a multi-objective run): its front is drawn over the points. */
    function setFront(answer) {
      front = answer;
      const y = (p) => (score === RMSE ? rmseById.get(p.evaluationId) : p.valAccuracy);
      const toPoint = (p) => ({ x: p.cost, y: y(p), cost: p.cost, genomeHash: p.genomeHash });
      scatter.data.datasets[2].data = answer ? answer.points.filter((p) => p.onFront && p.cost > 0 && y(p) != null).sort((a, b) => a.cost - b.cost).map(toPoint) : [];
      // Latency is known to the front route only, so its points come from there (and no leader mark).
      if (sizeKey === 'latency') {
        scatter.data.datasets[0].data = answer ? answer.points.filter((p) => p.cost > 0 && y(p) != null).map(toPoint).sort(byX) : [];
        scatter.data.datasets[1].data = [];
      }
      scatter.update('none');
    }
    /** Rebuilds the scatter's points from every evaluation; `leaderHash` is drawn larger. */
    function setEvaluations(points, leaderHash) {
      if (sizeKey === 'latency') return setFront(front && front.objective === 'latency' ? front : null);
      for (const p of points) if (p.valRmse != null) rmseById.set(p.evaluationId, p.valRmse);
      const done = points.filter((p) => p.state === 'done' && score.of(p) != null && p[sizeKey] > 0);
      const toPoint = (p) => ({ x: p[sizeKey], y: score.of(p), params: p.params, flops: p.flops, workerId: p.workerId });
      scatter.data.datasets[0].data = done.map(toPoint).sort(byX);
      scatter.data.datasets[1].data = done.filter((p) => p.genomeHash === leaderHash).slice(0, 1).map(toPoint);
      scatter.update('none');
    }
    function setSizeKey(key, points, leaderHash) {
      sizeKey = key;
      scatter.options.scales.x.title.text = `${{ params: 'parameters', flops: 'FLOPs per sample', latency: 'ms per sample alone on a worker' }[key]} (log scale)`;
      setEvaluations(points, leaderHash);
    }
    /** Running best over time and over evaluations, from evaluations sorted by finish time. */
    function setBest(points, startMs, nowMs) {
      const timeline = [];
      const byCount = [];
      const dots = [];
      let best = null;
      let n = 0;
      for (const p of points) {
        const v = p.state === 'done' ? score.of(p) : null;
        if (v == null) continue;
        n += 1;
        dots.push({ x: n, y: v });
        if (best === null || score.better(v, best)) {
          best = v;
          timeline.push({ x: Math.max(0, (p.finishedAt - startMs) / 60000), y: best });
          byCount.push({ x: n, y: best });
        }
      }
      if (timeline.length) {
        const end = Math.max(timeline[timeline.length - 1].x, (nowMs - startMs) / 60000);
        timeline.push({ x: end, y: best });
        byCount.push({ x: n, y: best });
      }
      bestTime.data.datasets[0].data = timeline;
      bestTime.data.datasets[0].pointRadius = timeline.map((_, i) => (i === timeline.length - 1 ? 0 : 2.5));
      bestCount.data.datasets[0].data = byCount;
      bestCount.data.datasets[1].data = dots;
      bestTime.update('none');
      bestCount.update('none');
    }
    function setThroughput(answer, startMs) {
      throughput.data.labels = answer.buckets.map((b) => clock(Math.max(0, (b.start - startMs) / 60000)));
      throughput.data.datasets[0].data = answer.buckets.map((b) => b.evaluationsPerMinute);
      throughput.data.datasets[1].data = answer.buckets.map((b) => b.samplesPerSecond);
      throughput.update('none');
    }

    const all = [bestTime, bestCount, scatter, throughput];
    // Redraw to the print boxes (see print.css), and back.
    window.addEventListener('beforeprint', () => all.forEach((c) => c.resize()));
    window.addEventListener('afterprint', () => all.forEach((c) => c.resize()));

    return { bestTime, bestCount, scatter, throughput, setRegression, setEvaluations, setSizeKey, setFront, setBest, setThroughput, pct, compact };
  }

  window.NbCharts = { create };
})();
