import type { NodeAnalysis } from '@netbreeder/shared-types';
import type { ChampionSummaryDocument } from './champion-files.js';
import { inheritanceMarkdown } from './inheritance-summary.js';
import { championTrustMarkdown } from './champion-trust.js';
import { howToUseLines } from './how-to-use.js';
import { describeOnnxLatency } from './onnx-file.js';
import { choiceParagraph, choiceTable, ensembleLines, foundLines, referenceLines } from './report-choice-sections.js';
import { fourDigits } from './regression-scores.js';
import { describeSearchMethod } from '../search/rung-epochs.js';

const pct = (v: number | null | undefined) => (v == null ? 'n/a' : `${(v * 100).toFixed(2)}%`);

/** The score rows of a regression champion: errors in the target's units beside the predict-the-mean baseline. */
function regressionRows(c: ChampionSummaryDocument): string[] {
  const t = c.test.regression!;
  const unit = c.target ? ` (${c.target.column})` : '';
  return [
    `| held-out test RMSE${unit} | ${fourDigits(t.rmse)} on ${c.test.samples} rows never seen in search or training |`,
    `| always predicting the training mean (test RMSE) | ${fourDigits(t.baselineRmse)}: the baseline any regressor must beat |`,
    `| held-out test MAE / R² | ${fourDigits(t.mae)} / ${t.r2.toFixed(3)} |`,
    `| reference network (test RMSE) | ${c.reference.referenceTestRmse == null ? 'n/a' : fourDigits(c.reference.referenceTestRmse)} |`,
    `| validation RMSE (during search) | ${c.validation.regression ? fourDigits(c.validation.regression.rmse) : 'n/a'} |`,
  ];
}

/** A short Markdown report of a champion: what it is, how well it does, how it was found. */
/** Precision, recall and F1 per class on the test split, as a Markdown table (the HTML report renders the same lines). */
export function perClassLines(c: ChampionSummaryDocument): string[] {
  const three = (v: number | null) => (v === null ? 'n/a' : v.toFixed(3));
  return [
    '## Test split: per class',
    '',
    'Precision: of the samples predicted as the class, the share that are; recall: of the samples of the class, the share found; F1: their harmonic mean. n/a where nothing was predicted as the class or it has no test sample.',
    '',
    '| class | precision | recall | F1 | test samples |',
    '|---|---|---|---|---|',
    ...c.test.perClass.map((f, i) => `| ${c.settings.dataset.classNames[i]} | ${three(f.precision)} | ${three(f.recall)} | ${three(f.f1)} | ${f.support} |`),
    '',
  ];
}

export function championReport(c: ChampionSummaryDocument, layers: NodeAnalysis[]): string {
  const regression = c.test.regression !== null;
  const lines = [
    `# Champion of run ${c.runName} (${c.runId})`,
    '',
    `**${c.summary}**`,
    '',
    `${c.reference.line.charAt(0).toUpperCase()}${c.reference.line.slice(1)}.`,
    '',
    `| measure | value |`,
    `|---|---|`,
    ...(regression
      ? regressionRows(c)
      : [
          `| held-out test accuracy | ${pct(c.test.accuracy)} on ${c.test.samples} samples never seen in search or training |`,
          ...(c.test.majorityClass ? [`| always predicting the most common class ("${c.test.majorityClass.className}", counted on the ${c.test.majorityClass.countedOn}) | ${pct(c.test.majorityClass.accuracy)} on the same test samples |`] : []),
          ...(c.test.macroF1 === null ? [] : [`| macro F1 (test, mean over classes) | ${c.test.macroF1.toFixed(3)} |`]),
          `| reference network (test) | ${c.reference.referenceTestAccuracy === null ? 'n/a' : pct(c.reference.referenceTestAccuracy)} |`,
          `| validation accuracy (during search) | ${pct(c.validation.accuracy)} |`,
        ]),
    `| parameters | ${c.paramCount.toLocaleString('en-US')} |`,
    `| forward FLOPs per sample | ${c.flops.toLocaleString('en-US')} |`,
    `| CPU latency per sample | ${c.latency.msPerSample == null ? 'n/a' : `${c.latency.msPerSample.toFixed(2)} ms (one sample alone, median, ${c.latency.backend} backend on the coordinator)`} |`,
    `| ONNX Runtime latency (model.onnx) | ${describeOnnxLatency(c.latency.onnxRuntime)} |`,
    `| final training | ${c.finalTraining.epochs} epochs on ${c.finalTraining.data}, ${c.finalTraining.seconds.toFixed(1)} s on ${c.finalTraining.backend} (${c.finalTraining.workerId}) |`,
    `| genome hash | \`${c.genomeHash}\` |`,
    '',
    '## Layers',
    '',
    '| node | kind | output shape | parameters | FLOPs |',
    '|---|---|---|---|---|',
    ...layers.map((n) => `| ${n.id} | ${n.kind} | ${n.outputShape.join('×')} | ${n.params} | ${n.flops} |`),
    '',
    ...(regression
      ? []
      : [
          '## Test split: confusion matrix',
          '',
          'Rows are the true class, columns the predicted class.',
          '',
          `| true \\ predicted | ${c.settings.dataset.classNames.join(' | ')} |`,
          `|---|${c.settings.dataset.classNames.map(() => '---').join('|')}|`,
          ...c.test.confusion.map((row, i) => `| ${c.settings.dataset.classNames[i]} | ${row.join(' | ')} |`),
          '',
          ...perClassLines(c),
        ]),
    '## Final training curve',
    '',
    ...(regression
      ? ['| epoch | train loss (mean squared error, standardised target) |', '|---|---|', ...c.trainingCurve.map((h) => `| ${h.epoch} | ${h.trainLoss.toFixed(4)} |`)]
      : ['| epoch | train loss | train accuracy |', '|---|---|---|', ...c.trainingCurve.map((h) => `| ${h.epoch} | ${h.trainLoss.toFixed(4)} | ${pct(h.trainAccuracy)} |`)]),
    '',
    '## Feeding the model',
    '',
    `Input shape [${c.settings.dataset.inputShape.join(', ')}] (after the batch axis); ${c.input}.`,
    c.target
      ? `Output: one number, the standardised ${c.target.column}; multiply it by ${fourDigits(c.target.std)} and add ${fourDigits(c.target.mean)} to read it in ${c.target.column}'s units.`
      : `Output: ${c.settings.dataset.numClasses} softmax probabilities, in the class order ${c.settings.dataset.classNames.map((n) => `\`${n}\``).join(', ')}.`,
    '',
    ...howToUseLines(c.ensemble !== null, c.target !== null),
    '## Training genes',
    '',
    ...Object.entries(c.genome.training).map(([k, v]) => `- ${k}: ${v}`),
    '',
    '## How it was chosen',
    '',
    choiceParagraph(c),
    '',
    ...choiceTable(c),
    '',
    ...referenceLines(c),
    '## How it was found',
    '',
    ...foundLines(c),
    '',
    ...inheritanceMarkdown(c.inheritance),
    ...championTrustMarkdown(c.trust),
    ...ensembleLines(c),
    '## Reproduce',
    '',
    `Search algorithm ${describeSearchMethod(c.settings.config.search)}, population ${c.settings.config.search.populationSize}, sample ${c.settings.config.search.sampleSize}, seed ${c.settings.seed}; dataset shard \`${c.settings.dataset.sha256}\`. The full run configuration is in champion.json.`,
    '',
    `Files: \`model.json\` + \`weights.bin\` (TensorFlow.js layers model; load as "How to use it" shows), \`model.onnx\` (the same network as an ONNX graph, opset ${c.onnx.opset}: ${c.onnx.description}), \`preprocessing.json\`, \`genome.json\`, \`champion.json\`.`,
    '',
  ];
  return lines.join('\n');
}
