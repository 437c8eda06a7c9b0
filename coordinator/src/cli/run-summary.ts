import { join, resolve } from 'node:path';
import { describeGenome, type StatusResponse } from '@netbreeder/shared-types';
import type { Coordinator } from '../coordinator.js';
import { fourDigits } from '../champion/regression-scores.js';
import { onnxUnavailable } from '../champion/onnx-file.js';
import { pct } from './format.js';

/**
 * The plain summary of a finished run: the champion, its honest test score, the reference network's
 * comparison line once it exists, and where the export went. Null when the run has no champion.
 */
export function runSummary(coordinator: Coordinator, runId: string, status: StatusResponse): string | null {
  const run = coordinator.store.getRun(runId);
  const champion = coordinator.store.getChampion(runId);
  if (!run || !champion) return null;
  const genome = coordinator.store.getGenome(champion.genomeHash)!;
  const exportDir = join(resolve(coordinator.options.dataDir), 'runs', runId, 'champion');
  const lines = [
    `Champion of run ${runId} after ${status.evaluations.done} evaluations:`,
    `  layers:      ${describeGenome(genome.genome, run.dataset.manifest.numClasses)}`,
    `  parameters:  ${genome.params.toLocaleString('en-US')} · FLOPs/sample ${genome.flops.toLocaleString('en-US')}`,
    `  training:    ${genome.genome.training.optimizer}, learning rate ${genome.genome.training.learningRate}, batch ${genome.genome.training.batchSize}`,
    ...scoreLines(coordinator, status, champion),
  ];
  const reference = status.reference;
  if (reference?.referenceTestRmse != null) lines.push(`  reference:   RMSE ${fourDigits(reference.referenceTestRmse)} on the same held-out samples (the hand-made network, trained the same way)`);
  else if (reference?.referenceTestAccuracy != null) lines.push(`  reference:   ${pct(reference.referenceTestAccuracy)} on the same held-out samples (the hand-made network, trained the same way)`);
  if (reference) lines.push(`  ${reference.line}`);
  lines.push(`  exported to: ${exportDir} (model.json + weights.bin, ${onnxUnavailable([genome.genome]) ? '' : 'model.onnx, '}preprocessing.json, genome.json, report.md, report.html)`);
  lines.push(`  predict:     netbreeder predict --model ${exportDir} --input ${newDataHint(run.config.dataset.kind)}`);
  return `${lines.join('\n')}\n`;
}

/** The champion's validation and test scores: accuracies, or for a regression run errors in the target's units beside the predict-the-mean baseline. */
function scoreLines(coordinator: Coordinator, status: StatusResponse, champion: NonNullable<ReturnType<Coordinator['store']['getChampion']>>): string[] {
  const samples = `${champion.testPredictions.length} held-out samples (after final training on train + validation)`;
  const test = status.champion?.testRegression;
  if (!test) return [`  validation:  ${pct(champion.valAccuracy)} (during search)`, `  test:        ${pct(champion.testAccuracy)} on ${samples}`];
  const val = coordinator.store.getEvaluation(champion.sourceEvaluationId)?.result?.valRegression;
  const units = status.run?.target ? ` (${status.run.target})` : '';
  return [
    ...(val ? [`  validation:  RMSE ${fourDigits(val.rmse)}${units} (during search)`] : []),
    `  test:        RMSE ${fourDigits(test.rmse)}${units} · MAE ${fourDigits(test.mae)} · R² ${test.r2.toFixed(3)} on ${samples}`,
    `  baseline:    RMSE ${fourDigits(test.baselineRmse)} always predicting the training mean (the champion must beat it)`,
  ];
}

/** What the predict command takes for a run's kind of data. */
function newDataHint(kind: string): string {
  if (kind === 'csv') return 'NEW_ROWS.csv';
  if (kind === 'series-windows') return 'NEW_TIME_STEPS.csv';
  if (kind === 'sequences') return 'NEW_SEQUENCES.csv';
  if (kind === 'idx') return 'NEW_IMAGES.idx';
  if (kind === 'demo-tiles') return 'FOLDER_OF_16x16_TILE_PNGS';
  return 'FOLDER_OF_IMAGES';
}
