import type { NodeAnalysis } from '@netbreeder/shared-types';
import type { ChampionSummaryDocument } from './champion-files.js';
import { inheritanceMarkdown } from './inheritance-summary.js';
import { championTrustMarkdown } from '../trust/champion-trust.js';

const pct = (v: number | null | undefined) => (v == null ? 'n/a' : `${(v * 100).toFixed(2)}%`);

/** A short Markdown report of a champion: what it is, how well it does, how it was found. */
export function championReport(c: ChampionSummaryDocument, layers: NodeAnalysis[]): string {
  const lines = [
    `# Champion of run ${c.runName} (${c.runId})`,
    '',
    `**${c.summary}**`,
    '',
    `| measure | value |`,
    `|---|---|`,
    `| held-out test accuracy | ${pct(c.test.accuracy)} on ${c.test.samples} samples never seen in search or training |`,
    `| validation accuracy (during search) | ${pct(c.validation.accuracy)} |`,
    `| parameters | ${c.paramCount.toLocaleString('en-US')} |`,
    `| forward FLOPs per sample | ${c.flops.toLocaleString('en-US')} |`,
    `| CPU latency per sample | ${c.latency.msPerSample == null ? 'n/a' : `${c.latency.msPerSample.toFixed(2)} ms (one sample alone, median, ${c.latency.backend} backend on the coordinator)`} |`,
    `| final training | ${c.finalTraining.epochs} epochs on ${c.finalTraining.data}, ${c.finalTraining.seconds.toFixed(1)} s on ${c.finalTraining.backend} (${c.finalTraining.workerId}) |`,
    `| genome hash | \`${c.genomeHash}\` |`,
    '',
    '## Layers',
    '',
    '| node | kind | output shape | parameters | FLOPs |',
    '|---|---|---|---|---|',
    ...layers.map((n) => `| ${n.id} | ${n.kind} | ${n.outputShape.join('×')} | ${n.params} | ${n.flops} |`),
    '',
    '## Test split: confusion matrix',
    '',
    'Rows are the true class, columns the predicted class.',
    '',
    `| true \\ predicted | ${c.settings.dataset.classNames.join(' | ')} |`,
    `|---|${c.settings.dataset.classNames.map(() => '---').join('|')}|`,
    ...c.test.confusion.map((row, i) => `| ${c.settings.dataset.classNames[i]} | ${row.join(' | ')} |`),
    '',
    '## Final training curve',
    '',
    '| epoch | train loss | train accuracy |',
    '|---|---|---|',
    ...c.trainingCurve.map((h) => `| ${h.epoch} | ${h.trainLoss.toFixed(4)} | ${pct(h.trainAccuracy)} |`),
    '',
    '## Feeding the model',
    '',
    `Input shape [${c.settings.dataset.inputShape.join(', ')}] (after the batch axis); ${c.input}.`,
    `Output: ${c.settings.dataset.numClasses} softmax probabilities, in the class order ${c.settings.dataset.classNames.map((n) => `\`${n}\``).join(', ')}.`,
    '',
    '## Training genes',
    '',
    ...Object.entries(c.genome.training).map(([k, v]) => `- ${k}: ${v}`),
    '',
    '## How it was chosen',
    '',
    c.candidates.length > 1
      ? `The ${c.candidates.length} best distinct genomes of the search were each trained again on train + validation and scored on the held-out test split; the best of them by test accuracy is this champion. Because the test split chose among ${c.candidates.length}, its test score is slightly optimistic; the others' scores are below.`
      : 'The best genome of the search was trained again on train + validation and scored once on the held-out test split.',
    '',
    '| genome | validation (search) | test |',
    '|---|---|---|',
    ...c.candidates.map((k) => `| ${k.genomeHash === c.genomeHash ? '**champion** ' : ''}\`${k.genomeHash.slice(0, 12)}\` ${k.summary} | ${pct(k.valAccuracy)} | ${pct(k.testAccuracy)} |`),
    '',
    '## How it was found',
    '',
    c.lineage.length === 0
      ? 'It is an initial member of the population (no mutation led to it).'
      : `${c.lineage.length} mutation(s) from an initial member:`,
    '',
    ...c.lineage.map((l, i) => `${i + 1}. \`${l.parentHash.slice(0, 12)}\` → \`${l.childHash.slice(0, 12)}\`: ${l.operator} (${l.detail})`),
    '',
    ...inheritanceMarkdown(c.inheritance),
    ...championTrustMarkdown(c.trust),
    '## Reproduce',
    '',
    `Search algorithm ${c.settings.config.search.algorithm}, population ${c.settings.config.search.populationSize}, sample ${c.settings.config.search.sampleSize}, seed ${c.settings.seed}; dataset shard \`${c.settings.dataset.sha256}\`. The full run configuration is in champion.json.`,
    '',
    'Files: `model.json` + `weights.bin` (TensorFlow.js layers model; load with `tf.loadLayersModel`), `genome.json`, `champion.json`.',
    '',
  ];
  return lines.join('\n');
}
