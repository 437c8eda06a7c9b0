import { readFileSync } from 'node:fs';
import { analyzeGenome, canonicalGenome, dataShapeOf, decodeShard, type ModelArtifactsMessage } from '@netbreeder/shared-types';
import type { RunRecord, RunStore } from '../store/run-store.js';
import { championReport } from './champion-report.js';
import { championReportHtml } from './champion-report-html.js';
import { championTrust } from './champion-trust.js';
import { describePreprocessing } from '../datasets/index.js';
import { inheritanceSummary } from './inheritance-summary.js';
import { preprocessingFileOf } from './preprocessing-file.js';
import { describeChoice, recordedChoice } from './champion-choice.js';
import { ensembleFileNames, ensembleScore } from './ensemble-files.js';
import { howItWasFound } from './explain-lineage.js';
import { referenceComparison } from './reference-comparison.js';
import { macroF1, majorityClassBaseline, perClassFigures } from './class-metrics.js';
import { championTestRegression } from './regression-scores.js';
import { onnxDescription, onnxExportOf, onnxUnavailable } from './onnx-file.js';
import { ONNX_INPUT, ONNX_OPSET, ONNX_OUTPUT } from '../onnx/onnx-export.js';
import { withFitnessNames } from './fitness-names.js';

const labelCache = new Map<string, Int32Array>();

/** The held-out test split's labels of a run (read once from the coordinator's disk). */
function testLabelsOf(run: RunRecord): Int32Array {
  let labels = labelCache.get(run.dataset.testPath);
  if (!labels) {
    labels = decodeShard(readFileSync(run.dataset.testPath)).train.labels;
    labelCache.set(run.dataset.testPath, labels);
  }
  return labels;
}

/** A regression champion's test targets and predictions, both in the target's units (for the report's plots); undefined for a classifier. */
function regressionTestOf(store: RunStore, run: RunRecord): { actual: Float64Array; predicted: readonly number[] } | undefined {
  const target = run.dataset.manifest.target;
  const champion = store.getChampion(run.id);
  if (!target || !champion) return undefined;
  const standardized = decodeShard(readFileSync(run.dataset.testPath)).train.targets;
  return standardized ? { actual: Float64Array.from(standardized, (v) => v * target.std + target.mean), predicted: champion.testPredictions } : undefined;
}

/** counts[true][predicted] over the test split. */
export function confusionMatrix(labels: ArrayLike<number>, predictions: readonly number[], numClasses: number): number[][] {
  const m = Array.from({ length: numClasses }, () => new Array<number>(numClasses).fill(0));
  predictions.forEach((p, i) => {
    const row = m[labels[i]!];
    if (row && p >= 0 && p < numClasses) row[p]!++;
  });
  return m;
}

/** The majority-class baseline of a classification run, from the training split's class counts where the import recorded them. */
function majorityOf(run: RunRecord, confusion: number[][]): { className: string; accuracy: number; countedOn: 'training split' | 'test split' } {
  const train = run.dataset.preparation?.classCounts.train;
  const counts = train ?? confusion.map((row) => row.reduce((a, b) => a + b, 0));
  const { classIndex, accuracy } = majorityClassBaseline(counts, confusion);
  return { className: run.dataset.manifest.classNames[classIndex] ?? String(classIndex), accuracy, countedOn: train ? 'training split' : 'test split' };
}

/** Names of the files a champion export holds, in the order they are written. */
export const CHAMPION_FILES = ['genome.json', 'model.json', 'weights.bin', 'model.onnx', 'preprocessing.json', 'champion.json', 'report.md', 'report.html'] as const;
export type ChampionFileName = (typeof CHAMPION_FILES)[number];

/** What GET /runs/:id/champion returns, and champion.json holds. */
export function championSummary(store: RunStore, run: RunRecord) {
  const champion = store.getChampion(run.id);
  if (!champion) return null;
  const testLabels = testLabelsOf(run);
  const confusion = run.dataset.manifest.target ? [] : confusionMatrix(testLabels, champion.testPredictions, run.dataset.manifest.numClasses);
  const perClass = perClassFigures(confusion);
  const scored = store.events(run.id, 'champion-candidate-scored').map((e) => e.detail);
  const own = scored.find((d) => d.evaluationId === champion.evaluationId);
  const genome = store.getGenome(champion.genomeHash)!;
  const onnxProblem = onnxUnavailable([genome.genome]);
  const championsRound = own?.round ?? 0;
  const source = store.getEvaluation(champion.sourceEvaluationId)!;
  const heldBack = store.getEvaluation(champion.evaluationId)?.job.selectionHoldout;
  // A regression run's fitness, 1 / (1 + standardised RMSE), is named so, never an accuracy.
  const named = (score: number): { accuracy?: number; fitness?: number } => (run.dataset.manifest.target ? { fitness: score } : { accuracy: score });
  return {
    runId: run.id,
    runName: run.name,
    genomeHash: champion.genomeHash,
    summary: genome.summary,
    genome: genome.genome,
    paramCount: genome.params,
    flops: genome.flops,
    /** Median time to classify one sample alone in TensorFlow.js, measured on the coordinator's CPU when it was scored; `onnxRuntime`: the ONNX graph's latency in ONNX Runtime there (one sample, a batch of 32). */
    latency: { msPerSample: own?.latencyMsPerSample ?? null, backend: own?.backend ?? null, onnxRuntime: own?.onnxLatency ?? null },
    /** `model.onnx`: the same network as an ONNX graph (opset, input and output names, what they hold). */
    onnx: onnxProblem ? { file: null, unavailable: onnxProblem } : { file: 'model.onnx', opset: ONNX_OPSET, input: ONNX_INPUT, output: ONNX_OUTPUT, description: onnxDescription(run, 1) },
    /** Regression runs: the predicted column and its training-split scaling (then `validation` and `test` carry `fitness`, the search fitness 1 / (1 + standardised RMSE), instead of `accuracy`, and `regression` the scores to show). */
    target: run.dataset.manifest.target ?? null,
    validation: { ...named(champion.valAccuracy), loss: source.result?.valLoss ?? null, evaluationId: champion.sourceEvaluationId, regression: source.result?.valRegression ?? null },
    test: {
      ...named(champion.testAccuracy),
      loss: champion.testLoss,
      samples: champion.testPredictions.length,
      /** Rows: true class; columns: predicted class (class order of `settings.dataset.classNames`). Empty for regression. */
      confusion,
      /** Classification: precision, recall, F1 and number of test samples per class (class order of `settings.dataset.classNames`), and their macro F1. */
      perClass,
      macroF1: run.dataset.manifest.target ? null : macroF1(perClass),
      /** Classification: the test accuracy of always predicting the most common class of the training split (of the test split where the training counts were not recorded). */
      majorityClass: run.dataset.manifest.target ? null : majorityOf(run, confusion),
      /** Regression: RMSE, MAE, R² in the target's units and the RMSE of always predicting the training mean. */
      regression: championTestRegression(store, run.id, champion.evaluationId).testRegression ?? null,
    },
    finalTraining: {
      evaluationId: champion.evaluationId,
      epochs: champion.result.epochsRun,
      seconds: champion.result.trainSeconds,
      backend: champion.result.backend,
      workerId: champion.result.workerId,
      data: heldBack ? `train + validation, less the ${heldBack} validation samples held back for the check against the reference network` : 'train + validation',
      /** How its weights started: from those its search training ended with (`champion.warmStart`; kind `parent-weights`) or fresh; null in results from before the record. */
      start: champion.result.start ?? null,
      /** Which rule set the epochs (run file, learning curve, the search training's budget), in words; null for runs from before the record. */
      length: store.events(run.id, 'champion-training-length').map((e) => e.detail).filter((d) => d.genomeHash === champion.genomeHash).at(-1) ?? null,
    },
    lineage: store.lineageChain(run.id, champion.genomeHash),
    /** How the champion was chosen: a user's pick, the run's rule, or the best; `sentence` says it in words. */
    choice: (() => {
      const choice = recordedChoice(store, run.id);
      return { ...choice, sentence: describeChoice(choice, run.dataset.manifest.target) };
    })(),
    /** The decisions that produced each genome of the champion's line, in plain words (from the run's decision log). */
    howFound: howItWasFound(store, run.id, champion.genomeHash),
    /** The averaging ensemble, when the run asked for one: its test score beside the champion's, its members and files. */
    ensemble: (() => {
      const score = ensembleScore(store, run.id);
      if (!score) return null;
      return {
        round: score.round ?? 0,
        testAccuracy: score.testAccuracy,
        championTestAccuracy: champion.testAccuracy,
        members: score.members.map((m) => ({ ...m, summary: store.getGenome(m.genomeHash)?.summary ?? '' })),
        files: ensembleFileNames(
          score.members.map((m) => m.position),
          preprocessingFileOf(run) !== null,
          onnxUnavailable(score.members.map((m) => store.getGenome(m.genomeHash)!.genome)) === null,
        ),
      };
    })(),
    /** The best `champion.topK` genomes by validation evidence, as the choice saw them (the round that made the champion). */
    considered: (store.events(run.id, 'champion-candidates')[championsRound]?.detail.considered ?? []).map((k) => ({
      ...k,
      summary: store.getGenome(k.genomeHash)?.summary ?? '',
    })),
    /** The champion's test score beside the run's reference network's, and the plain line that compares them. */
    reference: referenceComparison(store, run.id),
    /** The held-back check of the champion's round (`champion.selectionShare`): which of the search's champion and the reference network was exported, and their scores on the held-back samples; null when there was none. */
    heldBackCheck: store.events(run.id, 'champion-held-back-check').map((e) => e.detail).filter((d) => d.round === championsRound).at(-1) ?? null,
    /** Every genome that got the final training, with its validation (search) and test scores. */
    candidates: scored
      // Only the round that made the champion (a pick after the run finished starts a new one).
      .filter((d) => (d.round ?? 0) === championsRound)
      .map((d) => ({ ...d, summary: store.getGenome(d.genomeHash)?.summary ?? '' })),
    settings: { seed: run.seed, config: run.config, dataset: run.dataset.manifest },
    /** How raw samples must be prepared before they go into the model (what the import fitted). */
    input: run.dataset.preparation ? describePreprocessing(run.dataset.preparation.preprocessing) : 'demo tiles: 16×16 grayscale, pixel values in [0, 1]',
    trainingCurve: champion.result.history,
    /** How the search trainings started (fresh, resumed, continued, inherited), the champion's own included. */
    inheritance: inheritanceSummary(store, run, champion.sourceEvaluationId),
    /** Verification of the champion's search result, quarantined workers, and the run's CPU time and energy. */
    trust: championTrust(store, run, champion),
    /** The export's files; `preprocessing.json` is absent for a run from before its import was recorded. */
    files: CHAMPION_FILES.filter((f) => (f !== 'preprocessing.json' || preprocessingFileOf(run) !== null) && (f !== 'model.onnx' || onnxProblem === null)),
  };
}
export type ChampionSummaryDocument = NonNullable<ReturnType<typeof championSummary>>;

/**
 * champion.json and the answer of GET /runs/:id/champion: the summary, where a regression run's
 * fitnesses (kept in the wire format's `…Accuracy` fields) go by their own name at every depth.
 */
export const championDocument = (summary: ChampionSummaryDocument): unknown => (summary.target ? withFitnessNames(summary) : summary);

/**
 * The content of every file of a champion export: the genome, the trained model in TensorFlow.js
 * layers format (`model.json` with a weights manifest pointing at `weights.bin`), the same model
 * as an ONNX graph (`model.onnx`), how raw input
 * becomes model input (`preprocessing.json`), the scores and a short report. Null when the run has no champion yet.
 */
export function championFiles(store: RunStore, run: RunRecord): Map<ChampionFileName, Buffer> | null {
  const summary = championSummary(store, run);
  const artifactsJson = store.getChampionArtifactsJson(run.id);
  if (!summary || !artifactsJson) return null;
  const artifacts = JSON.parse(artifactsJson) as ModelArtifactsMessage;
  const analysis = analyzeGenome(summary.genome, dataShapeOf(run.dataset.manifest));
  const modelJson = {
    format: 'layers-model',
    generatedBy: 'netbreeder',
    convertedBy: null,
    modelTopology: artifacts.modelTopology,
    weightsManifest: [{ paths: ['weights.bin'], weights: artifacts.weightSpecs }],
  };
  const json = (v: unknown) => Buffer.from(`${JSON.stringify(v, null, 2)}\n`);
  const preprocessing = preprocessingFileOf(run);
  const files = new Map<ChampionFileName, Buffer>([
    ['genome.json', json({ hash: summary.genomeHash, genome: canonicalGenome(summary.genome), layers: analysis.ok ? analysis.analysis.nodes : [] })],
    ['model.json', json(modelJson)],
    ['weights.bin', Buffer.from(artifacts.weightDataBase64, 'base64')],
    ['model.onnx', summary.onnx.file ? onnxExportOf(run, [{ genome: summary.genome, artifacts }]) : Buffer.alloc(0)],
    ['preprocessing.json', json(preprocessing)],
    ['champion.json', json(championDocument(summary))],
    ['report.md', Buffer.from(championReport(summary, analysis.ok ? analysis.analysis.nodes : []))],
    ['report.html', Buffer.from(championReportHtml(summary, analysis.ok ? analysis.analysis.nodes : [], regressionTestOf(store, run)))],
  ]);
  if (!preprocessing) files.delete('preprocessing.json');
  if (!summary.onnx.file) files.delete('model.onnx');
  return files;
}
