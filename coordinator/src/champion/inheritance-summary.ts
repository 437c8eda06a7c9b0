import type { TrainingStart } from '@netbreeder/shared-types';
import type { RunRecord, RunStore } from '../store/run-store.js';
import { checkpointSettings } from '../checkpoints/checkpoint-policy.js';

/** One search evaluation that did not start from fresh weights at epoch 0. */
export interface InheritedEvaluation {
  evaluationId: string;
  genomeHash: string;
  start: TrainingStart;
}

/** How the run's search trainings started: resumed, continued, inherited or fresh. */
export interface InheritanceSummary {
  /** Whether the run asked for weight inheritance (`search.weightInheritance`). */
  weightInheritance: boolean;
  /** Done search evaluations by how they started (`unknown`: results of workers before checkpoints). */
  byKind: Record<TrainingStart['kind'] | 'unknown', number>;
  /** Epochs a training did not have to repeat because it continued a checkpoint. */
  epochsReused: number;
  /** Trainings offered a checkpoint they could not use (they trained from epoch 0; see their notes). */
  unusable: number;
  /** How the champion's own search evaluation started. */
  champion: TrainingStart | null;
  /** The evaluations that started from a checkpoint, oldest first (at most 200). */
  evaluations: InheritedEvaluation[];
}

export function inheritanceSummary(store: RunStore, run: RunRecord, championSourceId: string | null): InheritanceSummary {
  const byKind: InheritanceSummary['byKind'] = { fresh: 0, resumed: 0, 'own-checkpoint': 0, 'parent-weights': 0, unknown: 0 };
  const evaluations: InheritedEvaluation[] = [];
  let epochsReused = 0;
  let unusable = 0;
  let champion: TrainingStart | null = null;
  for (const ev of store.evaluations(run.id)) {
    if (ev.kind !== 'search' || ev.state !== 'done' || !ev.result) continue;
    const start = ev.result.start;
    if (ev.id === championSourceId) champion = start ?? null;
    if (!start) {
      byKind.unknown++;
      continue;
    }
    byKind[start.kind]++;
    epochsReused += start.fromEpoch;
    if (start.note) unusable++;
    if (start.kind !== 'fresh' && evaluations.length < 200) evaluations.push({ evaluationId: ev.id, genomeHash: ev.genomeHash, start });
  }
  return { weightInheritance: checkpointSettings(run.config).inheritance, byKind, epochsReused, unusable, champion, evaluations };
}

const START_WORDS: Record<TrainingStart['kind'], string> = {
  fresh: 'fresh weights at epoch 0',
  resumed: 'resumed from the checkpoint of an earlier attempt',
  'own-checkpoint': 'continued from its own lower-rung checkpoint',
  'parent-weights': "started from its parent's weights",
};

/** One line describing how a training started. */
export function describeStart(s: TrainingStart | null): string {
  if (!s) return 'not recorded';
  const copied = s.kind === 'parent-weights' ? ` (${s.copiedWeights} of ${s.totalWeights} weights copied)` : s.kind !== 'fresh' ? ` at epoch ${s.fromEpoch}` : '';
  return `${START_WORDS[s.kind]}${copied}${s.fromEvaluationId ? `, checkpoint of ${s.fromEvaluationId}` : ''}${s.note ? `; ${s.note}` : ''}`;
}

/** How a final training's weights started (`champion.warmStart`), as a clause of the report's "How it was chosen"; empty when not recorded. */
export function describeFinalStart(s: TrainingStart | null | undefined): string {
  if (!s) return '';
  if (s.kind === 'parent-weights') return `, starting from the weights its search training ended with (${s.copiedWeights} of ${s.totalWeights} weights, checkpoint of ${s.fromEvaluationId})`;
  return `, starting from freshly initialised weights${s.note ? ` (${s.note})` : ''}`;
}

/** The report's Markdown section on checkpoints and weight inheritance. */
export function inheritanceMarkdown(i: InheritanceSummary): string[] {
  const k = i.byKind;
  return [
    '## Checkpoints and weight inheritance',
    '',
    `Weight inheritance was ${i.weightInheritance ? 'on' : 'off'} for this run. Of the finished search trainings, ${k.fresh} started fresh, ${k.resumed} resumed an earlier attempt's checkpoint, ${k['own-checkpoint']} continued their own lower-rung checkpoint and ${k['parent-weights']} started from their parent's weights${k.unknown ? ` (${k.unknown} not recorded)` : ''}; ${i.epochsReused} epoch(s) were not trained again. ${i.unusable ? `${i.unusable} training(s) were offered a checkpoint they could not use and trained from epoch 0.` : ''}`.trim(),
    '',
    `The champion's search evaluation: ${describeStart(i.champion)}.`,
    '',
    ...(i.evaluations.length
      ? ['| evaluation | genome | start |', '|---|---|---|', ...i.evaluations.map((e) => `| ${e.evaluationId} | \`${e.genomeHash.slice(0, 12)}\` | ${describeStart(e.start)} |`), '']
      : []),
  ];
}
