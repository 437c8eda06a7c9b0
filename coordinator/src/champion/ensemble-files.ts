import type { ModelArtifactsMessage, RunEventDetail } from '@netbreeder/shared-types';
import type { RunRecord, RunStore } from '../store/run-store.js';
import { preprocessingFileOf } from './preprocessing-file.js';
import { onnxExportOf, onnxUnavailable } from './onnx-file.js';
import { withFitnessNames } from './fitness-names.js';

/** Names the ensemble's files may have: its manifest and each member's model and weights. */
export const ENSEMBLE_FILE_PATTERN = '^(ensemble\\.json|model\\.onnx|preprocessing\\.json|member-[0-9]{1,2}\\.(model\\.json|weights\\.bin))$';

/** What the `ensemble-scored` event holds (regression runs: `testAccuracy` is the fitness 1 / (1 + standardised test RMSE), `testRegression` the scores to show). */
export type EnsembleScore = RunEventDetail<'ensemble-scored'>;

/** The names of the ensemble's files for members at these positions (`preprocessing.json` only for runs that recorded it). */
export const ensembleFileNames = (positions: readonly number[], withPreprocessing: boolean, withOnnx = true): string[] => ['ensemble.json', ...(withOnnx ? ['model.onnx'] : []), ...(withPreprocessing ? ['preprocessing.json'] : []), ...positions.flatMap((p) => [`member-${p + 1}.model.json`, `member-${p + 1}.weights.bin`])];

/** The run's scored ensemble, or null when it has none. */
export function ensembleScore(store: RunStore, runId: string): EnsembleScore | null {
  const ev = store.events(runId, 'ensemble-scored').at(-1);
  return ev ? ev.detail : null;
}

/**
 * The files of a run's averaging ensemble: `ensemble.json` (how to average, the members and their
 * scores, the ensemble's test score beside the champion's), `model.onnx` (one ONNX graph that averages the
 * members), `preprocessing.json` (as the champion's) and per member `member-N.model.json` +
 * `member-N.weights.bin` (TensorFlow.js layers format). Null when the run has no scored ensemble.
 */
export function ensembleFiles(store: RunStore, run: RunRecord): Map<string, Buffer> | null {
  const score = ensembleScore(store, run.id);
  if (!score) return null;
  const champion = store.getChampion(run.id);
  const members = store.ensembleMembers(run.id);
  const m = run.dataset.manifest;
  const json = (v: unknown) => Buffer.from(`${JSON.stringify(v, null, 2)}\n`);
  const files = new Map<string, Buffer>();
  const manifest = {
    kind: 'netbreeder averaging ensemble',
    version: 1,
    runId: run.id,
    how: m.target
      ? `Feed every member the same input, prepared as preprocessing.json says; average the members' outputs; multiply the mean by ${m.target.std} and add ${m.target.mean} to read it as ${m.target.column}.`
      : 'Feed every member the same input, prepared as preprocessing.json says; average the members\' softmax outputs class by class; the predicted class is the one with the highest mean.',
    inputShape: m.inputShape,
    classNames: m.classNames,
    selection: {
      size: score.size ?? run.config.champion.ensemble?.size ?? members.length,
      diversityPenalty: score.diversityPenalty ?? run.config.champion.ensemble?.diversityPenalty ?? null,
      rule: `greedy: ${m.target ? 'the genome of the lowest validation RMSE first, then each time the highest validation fitness (1 / (1 + RMSE on the standardised target))' : 'the most accurate genome first, then each time the highest validation accuracy'} minus diversityPenalty times its largest architecture similarity (multiset Jaccard of layer kinds and sizes) to a member already chosen`,
    },
    test: { ...(score.testRegression ? { regression: score.testRegression } : { accuracy: score.testAccuracy }), samples: champion?.testPredictions.length ?? null, backend: score.backend },
    champion: champion ? { genomeHash: champion.genomeHash, testAccuracy: champion.testAccuracy } : null,
    members: members.map((mem) => {
      const g = store.getGenome(mem.genomeHash);
      const source = store.getEvaluation(mem.sourceEvaluationId);
      return {
        position: mem.position,
        model: `member-${mem.position + 1}.model.json`,
        genomeHash: mem.genomeHash,
        summary: g?.summary ?? '',
        params: g?.params ?? null,
        flops: g?.flops ?? null,
        validationAccuracy: source?.valAccuracy ?? null,
        testAccuracy: mem.testAccuracy,
        similarityToEarlierMembers: score.members.find((x) => x.position === mem.position)?.similarity ?? null,
        genome: g?.genome ?? null,
      };
    }),
  };
  // A regression run's scores are fitnesses (and its test score the RMSE beside them), never accuracies.
  files.set('ensemble.json', json(m.target ? withFitnessNames(manifest) : manifest));
  const preprocessing = preprocessingFileOf(run);
  if (preprocessing) files.set('preprocessing.json', json(preprocessing));
  const networks = members.map((mem) => ({ genome: store.getGenome(mem.genomeHash)!.genome, artifacts: JSON.parse(mem.artifactsJson) as ModelArtifactsMessage }));
  if (!onnxUnavailable(networks.map((n) => n.genome))) files.set('model.onnx', onnxExportOf(run, networks));
  for (const mem of members) {
    const artifacts = JSON.parse(mem.artifactsJson) as ModelArtifactsMessage;
    const name = `member-${mem.position + 1}`;
    files.set(`${name}.model.json`, json({ format: 'layers-model', generatedBy: 'netbreeder', convertedBy: null, modelTopology: artifacts.modelTopology, weightsManifest: [{ paths: [`${name}.weights.bin`], weights: artifacts.weightSpecs }] }));
    files.set(`${name}.weights.bin`, Buffer.from(artifacts.weightDataBase64, 'base64'));
  }
  return files;
}
