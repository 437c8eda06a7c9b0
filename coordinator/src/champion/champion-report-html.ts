import { INPUT_ID, topologicalOrder, type NodeAnalysis } from '@netbreeder/shared-types';
import type { ChampionSummaryDocument } from './champion-files.js';
import { describeStart } from './inheritance-summary.js';
import { championTrustHtml } from './champion-trust.js';
import { choiceParagraph, choiceTable, ensembleLines, foundLines, referenceLines, sectionHtml } from './report-choice-sections.js';
import { howToUseHtml } from './how-to-use.js';
import { describeOnnxLatency } from './onnx-file.js';
import { perClassLines } from './champion-report.js';

import { predictedActualSvg, residualHistogramSvg } from './regression-plots.js';
import { trainingCurveSvg } from './training-curve-svg.js';
import { fourDigits } from './regression-scores.js';
import { describeSearchMethod } from '../search/rung-epochs.js';

const esc = (s: string) => s.replace(/[&<>"]/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' })[ch]!);
const pct = (v: number | null | undefined) => (v == null ? 'n/a' : `${(v * 100).toFixed(2)}%`);
/**
 * The architecture as an SVG: one box per layer (with its output shape), laid out in columns by
 * depth from the input, arrows along every connection, so skip connections show as long edges.
 */
export function architectureSvg(c: ChampionSummaryDocument, layers: NodeAnalysis[]): string {
  const topo = topologicalOrder(c.genome);
  const nodes = topo.ok ? topo.order : c.genome.nodes;
  const shapes = new Map(layers.map((l) => [l.id, l.outputShape]));
  const depth = new Map<string, number>([[INPUT_ID, 0]]);
  for (const n of nodes) depth.set(n.id, 1 + Math.max(...n.inputs.map((i) => depth.get(i) ?? 0)));
  const headDepth = (depth.get(c.genome.output) ?? 0) + 1;
  const all = [
    { id: INPUT_ID, label: 'input', inputs: [] as string[] },
    ...nodes.map((n) => ({ id: n.id, label: n.kind, inputs: n.inputs })),
    { id: 'head', label: c.target ? 'head: dense 1 linear' : `head: dense ${c.settings.dataset.numClasses} softmax`, inputs: [c.genome.output] },
  ];
  depth.set('head', headDepth);
  const columns = new Map<number, string[]>();
  for (const n of all) columns.set(depth.get(n.id)!, [...(columns.get(depth.get(n.id)!) ?? []), n.id]);
  const W = 150;
  const H = 58;
  const GAP_X = 40;
  const GAP_Y = 18;
  const pos = new Map<string, { x: number; y: number }>();
  for (const [d, ids] of columns) ids.forEach((id, row) => pos.set(id, { x: 10 + d * (W + GAP_X), y: 10 + row * (H + GAP_Y) }));
  const width = 20 + (headDepth + 1) * (W + GAP_X);
  const height = 20 + Math.max(...[...columns.values()].map((ids) => ids.length)) * (H + GAP_Y);
  const detail = (id: string): string => {
    const n = c.genome.nodes.find((x) => x.id === id);
    if (!n) return id === INPUT_ID ? `[${c.settings.dataset.inputShape.join('×')}]` : '';
    const parts: string[] = [];
    if ('units' in n) parts.push(`${n.units} units`);
    if ('filters' in n) parts.push(`${n.kernelSize}×${n.kernelSize}×${n.filters}`);
    if (n.kind === 'depthwise-conv2d') parts.push(`${n.kernelSize}×${n.kernelSize}×${n.depthMultiplier}`);
    if ('poolSize' in n) parts.push(`${n.poolSize}×${n.poolSize}`);
    if ('strides' in n && n.strides > 1) parts.push(`stride ${n.strides}`);
    if ('rate' in n) parts.push(`rate ${n.rate}`);
    if ('activation' in n) parts.push(n.activation);
    if (n.kind === 'repeat') parts.push(`motif ${n.motif} ×${n.times}`);
    return parts.join(', ');
  };
  const edges = all.flatMap((n) =>
    n.inputs.map((i) => {
      const a = pos.get(i)!;
      const b = pos.get(n.id)!;
      return `<line x1="${a.x + W}" y1="${a.y + H / 2}" x2="${b.x}" y2="${b.y + H / 2}" class="edge" marker-end="url(#arrow)"/>`;
    }),
  );
  const boxes = all.map((n) => {
    const p = pos.get(n.id)!;
    const shape = n.id === INPUT_ID ? c.settings.dataset.inputShape : n.id === 'head' ? [c.target ? 1 : c.settings.dataset.numClasses] : shapes.get(n.id);
    return `<g class="layer"><rect x="${p.x}" y="${p.y}" width="${W}" height="${H}" rx="6"/>
<text x="${p.x + 8}" y="${p.y + 18}" class="kind">${esc(n.label)}</text>
<text x="${p.x + 8}" y="${p.y + 34}">${esc(detail(n.id))}</text>
<text x="${p.x + 8}" y="${p.y + 50}" class="shape">${shape ? `→ ${shape.join('×')}` : ''}</text></g>`;
  });
  // Scales down to the page width (and to A4 when printed) instead of scrolling.
  return `<svg xmlns="http://www.w3.org/2000/svg" width="100%" style="max-width: ${width}px" viewBox="0 0 ${width} ${height}" role="img" aria-label="architecture">
<defs><marker id="arrow" viewBox="0 0 10 10" refX="10" refY="5" markerWidth="7" markerHeight="7" orient="auto-start-reverse"><path d="M 0 0 L 10 5 L 0 10 z"/></marker></defs>
${edges.join('\n')}
${boxes.join('\n')}
</svg>`;
}

/**
 * The champion report as one self-contained HTML page (no scripts, no external files): the
 * architecture drawn, the scores, the confusion matrix, the final training curve, how the
 * champion was chosen and found, and the settings to reproduce it. Prints on A4.
 */
export function championReportHtml(c: ChampionSummaryDocument, layers: NodeAnalysis[], regressionTest?: { actual: ArrayLike<number>; predicted: ArrayLike<number> }): string {
  const names = c.settings.dataset.classNames;
  const reg = c.test.regression;
  const maxCell = Math.max(1, ...c.test.confusion.flat());
  const confusion = `<table class="confusion"><tr><th>true \\ predicted</th>${names.map((n) => `<th>${esc(n)}</th>`).join('')}</tr>
${c.test.confusion.map((row, i) => `<tr><th>${esc(names[i]!)}</th>${row.map((v, j) => `<td style="background: rgba(${i === j ? '31,120,110' : '176,80,40'}, ${(0.08 + 0.6 * (v / maxCell)).toFixed(2)})">${v}</td>`).join('')}</tr>`).join('\n')}</table>`;
  const rows = (pairs: Array<[string, string]>) => pairs.map(([k, v]) => `<tr><th>${esc(k)}</th><td>${v}</td></tr>`).join('\n');
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>Champion of ${esc(c.runName)}</title>
<style>
body { font: 14px/1.45 system-ui, sans-serif; color: #1d2430; margin: 2rem auto; max-width: 60rem; padding: 0 1rem; }
h1 { font-size: 1.5rem; border-bottom: 3px solid #b5542b; padding-bottom: .3rem; } h2 { font-size: 1.1rem; margin-top: 2rem; color: #1f6f66; }
table { border-collapse: collapse; margin: .5rem 0; } th, td { border: 1px solid #cfd6de; padding: .25rem .6rem; text-align: left; }
.confusion td { text-align: right; min-width: 3rem; } .big { font-size: 1.2rem; font-weight: 600; }
svg text { font: 11px system-ui, sans-serif; fill: #1d2430; } svg .kind { font-weight: 700; } svg .shape { fill: #5b6675; }
.layer rect { fill: #f3efe7; stroke: #b5542b; } .edge { stroke: #1f6f66; stroke-width: 1.4; } marker path { fill: #1f6f66; }
.axis { stroke: #8a94a3; } .loss { fill: none; stroke: #b5542b; stroke-width: 2; } .acc { fill: none; stroke: #1f6f66; stroke-width: 2; }
.tick { fill: #5b6675; } .axis-title { font-weight: 600; } .dot { fill: #1f6f66; opacity: .6; } .diag { stroke: #b5542b; stroke-dasharray: 4 3; } .bar { fill: #1f6f66; opacity: .75; } .loss-label { fill: #b5542b; } .acc-label { fill: #1f6f66; } .diagram { overflow-x: auto; }
@media print { body { margin: 0; max-width: none; } .diagram { overflow: visible; } h2 { break-after: avoid; } table, svg { break-inside: avoid; } }
</style></head><body>
<h1>Champion of run ${esc(c.runName)} <small>(${esc(c.runId)})</small></h1>
${
    reg
      ? `<p class="big">Held-out test RMSE ${fourDigits(reg.rmse)} ${esc(c.target!.column)} on ${c.test.samples} rows never used in the search or its training; always predicting the training mean scores RMSE ${fourDigits(reg.baselineRmse)}.</p>`
      : `<p class="big">Held-out test accuracy ${pct(c.test.accuracy)} on ${c.test.samples} samples never used in the search or its training.</p>`
  }
<table>${rows([
    ['architecture', esc(c.summary)],
    ...((reg
      ? [
          ['test MAE / R²', `${fourDigits(reg.mae)} / ${reg.r2.toFixed(3)}`],
          ['validation RMSE (during search)', c.validation.regression ? fourDigits(c.validation.regression.rmse) : 'n/a'],
        ]
      : [
          ['validation accuracy (during search)', pct(c.validation.accuracy)],
          ...(c.test.majorityClass ? [[`always predicting the most common class ("${c.test.majorityClass.className}", counted on the ${c.test.majorityClass.countedOn})`, `${pct(c.test.majorityClass.accuracy)} on the same test samples`]] : []),
          ...(c.test.macroF1 === null ? [] : [['macro F1 (test, mean over classes)', c.test.macroF1.toFixed(3)]]),
        ]) as Array<[string, string]>),
    ['parameters', c.paramCount.toLocaleString('en-US')],
    ['forward FLOPs per sample', c.flops.toLocaleString('en-US')],
    ['CPU latency per sample', c.latency.msPerSample == null ? 'n/a' : `${c.latency.msPerSample.toFixed(2)} ms (one sample alone, median; ${esc(String(c.latency.backend))} backend, coordinator's CPU)`],
    ['ONNX Runtime latency (model.onnx)', esc(describeOnnxLatency(c.latency.onnxRuntime))],
    ['final training', `${c.finalTraining.epochs} epochs on ${c.finalTraining.data}, ${c.finalTraining.seconds.toFixed(1)} s on ${esc(c.finalTraining.backend)} (${esc(c.finalTraining.workerId)})`],
    ['genome hash', `<code>${c.genomeHash}</code>`],
  ])}</table>
<h2>Architecture</h2>
<div class="diagram">${architectureSvg(c, layers)}</div>
${
  reg
    ? regressionTest
      ? `<h2>Test split: predicted against actual, and residuals</h2>\n<div class="diagram">${predictedActualSvg(regressionTest.actual, regressionTest.predicted, c.target!.column)} ${residualHistogramSvg(regressionTest.actual, regressionTest.predicted)}</div>`
      : ''
    : `<h2>Test split: confusion matrix</h2>\n${confusion}\n${sectionHtml(perClassLines(c))}`
}
<h2>Final training</h2>
${trainingCurveSvg(c.trainingCurve, !c.target)}
<h2>How it was chosen</h2>
${sectionHtml([choiceParagraph(c), ...choiceTable(c)])}
${sectionHtml(referenceLines(c))}
<h2>How it was found</h2>
${sectionHtml(foundLines(c))}
${sectionHtml(ensembleLines(c))}
<h2>Checkpoints and weight inheritance</h2>
<p>Weight inheritance ${c.inheritance.weightInheritance ? 'on' : 'off'}. Finished search trainings: ${Object.entries(c.inheritance.byKind).filter(([, n]) => n > 0).map(([k, n]) => `${n} ${esc(k)}`).join(', ')}; ${c.inheritance.epochsReused} epoch(s) not trained again. The champion's search evaluation: ${esc(describeStart(c.inheritance.champion))}.</p>
<h2>Feeding the model</h2>
<p>Input [${c.settings.dataset.inputShape.join(', ')}] per sample; ${esc(c.input)}. ${c.target ? `Output: one number, the standardised ${esc(c.target.column)}; multiply it by ${fourDigits(c.target.std)} and add ${fourDigits(c.target.mean)}.` : `Output: ${names.length} softmax probabilities in the order ${names.map((n) => `<code>${esc(n)}</code>`).join(', ')}.`} <code>preprocessing.json</code> says exactly how to prepare an input.</p>
${howToUseHtml(c.ensemble !== null, c.target !== null)}
${championTrustHtml(c.trust, esc)}<h2>Reproduce</h2>
<p>Search ${esc(describeSearchMethod(c.settings.config.search))}, population ${c.settings.config.search.populationSize}, sample ${c.settings.config.search.sampleSize}, seed ${c.settings.seed}; dataset shard <code>${c.settings.dataset.sha256}</code>. The full run configuration is in <code>champion.json</code>.</p>
</body></html>
`;
}
