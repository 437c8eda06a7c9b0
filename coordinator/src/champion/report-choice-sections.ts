import { rmseFromFitness } from '@netbreeder/shared-types';
import type { ChampionSummaryDocument } from './champion-files.js';
import { fourDigits } from './regression-scores.js';
import { describeFinalStart } from './inheritance-summary.js';

/**
 * The report's sections on how the champion was chosen, how it was found (from the decision log)
 * and the ensemble, as Markdown lines; the HTML report renders the same lines.
 */
const pct = (v: number | null | undefined) => (v == null ? 'n/a' : `${(v * 100).toFixed(2)}%`);
/** A validation or test score as the report shows it: an accuracy, or for a regression run the RMSE in the target's units its fitness stands for. */
const score = (c: ChampionSummaryDocument, v: number | null | undefined) => (v == null ? 'n/a' : c.target ? `RMSE ${fourDigits(rmseFromFitness(v) * c.target.std)}` : pct(v));

/** The final trainings of the champion's round that competed to be champion (runs from before issue 20 trained several and kept the best on test). */
const contenders = (c: ChampionSummaryDocument) => c.candidates.filter((k) => k.champion !== false);

export function choiceParagraph(c: ChampionSummaryDocument): string {
  const length = c.finalTraining.length ? ` for ${c.finalTraining.length.detail}` : '';
  const check = c.heldBackCheck;
  const data = check ? `train + validation (less ${check.heldBack} validation samples held back)` : 'train + validation';
  const final = ` It was then trained again on ${data}${length}${describeFinalStart(c.finalTraining.start)} and scored once on the held-out test split, after every choice was made.${check ? heldBackSentence(c, check) : ''}`;
  if (contenders(c).length > 1) {
    // A run recorded before the choice moved to validation: say what that run did.
    return `${c.choice.sentence} This run predates the validation-only choice: ${contenders(c).length} genomes were trained again and the best on the held-out test split was kept, so its test score is slightly optimistic.`;
  }
  if (c.choice.by === 'pick') return `${c.choice.sentence}${final}`;
  const k = c.considered.length;
  const among = k > 1 ? ` It leads the ${k} best distinct genomes by validation evidence (below).` : '';
  return `${c.choice.sentence}${among} The choice read validation scores only: each genome's results at its largest training budget, their mean validation ${c.target ? 'RMSE' : 'accuracy'}, then fewer parameters.${final}`;
}

/** The held-back check in words: the search's champion against the reference network after equal final trainings. */
function heldBackSentence(c: ChampionSummaryDocument, check: NonNullable<ChampionSummaryDocument['heldBackCheck']>): string {
  const outcome = check.exported === 'reference' ? 'so the reference network is exported as the champion' : "so the search's choice stands";
  return ` The reference network got the same final training, and on the ${check.heldBack} held-back samples, which neither trained on, the search's choice scored ${score(c, check.champion.valAccuracy)} on them, the reference network ${score(c, check.reference.valAccuracy)}: ${outcome}.`;
}

export function choiceTable(c: ChampionSummaryDocument): string[] {
  if (contenders(c).length > 1 || !c.considered.length) {
    return [
      '| genome | validation (search) | test |',
      '|---|---|---|',
      ...contenders(c).map((k) => `| ${k.genomeHash === c.genomeHash ? '**champion** ' : ''}\`${k.genomeHash.slice(0, 12)}\` ${k.summary} | ${score(c, k.valAccuracy)} | ${score(c, k.testAccuracy)} |`),
    ];
  }
  return [
    '| genome | validation (mean of results at its largest budget) | results | budget | parameters |',
    '|---|---|---|---|---|',
    ...c.considered.map(
      (k) => `| ${k.genomeHash === c.genomeHash ? '**champion** ' : ''}\`${k.genomeHash.slice(0, 12)}\` ${k.summary} | ${score(c, k.valAccuracy)} | ${k.results} | ${k.budgetEpochs} epochs | ${k.params.toLocaleString('en-US')} |`,
    ),
  ];
}

/** The champion beside the run's reference network on the test split, with the plain comparison line. */
export function referenceLines(c: ChampionSummaryDocument): string[] {
  const r = c.reference;
  const lines = ['## Against the reference network', '', `${r.line.charAt(0).toUpperCase()}${r.line.slice(1)}.`, ''];
  if (r.state !== 'scored') return lines;
  return [
    ...lines,
    'The reference network is the one a careful practitioner writes by hand for this kind of data (see docs/reference-networks.md); it was trained in the search like any genome, then again exactly as the champion (train + validation, length from its own learning curve, the seed of its search result) and scored once on the held-out test split.',
    '',
    ...(c.target
      ? ['| | held-out test RMSE |', '|---|---|', `| champion | ${r.championTestRmse == null ? 'n/a' : fourDigits(r.championTestRmse)} |`, `| reference network \`${r.referenceGenomeHash!.slice(0, 12)}\` | ${r.referenceTestRmse == null ? 'n/a' : fourDigits(r.referenceTestRmse)} |`]
      : ['| | held-out test accuracy |', '|---|---|', `| champion | ${pct(r.championTestAccuracy)} |`, `| reference network \`${r.referenceGenomeHash!.slice(0, 12)}\` | ${pct(r.referenceTestAccuracy)} |`]),
    '',
  ];
}

/** "How it was found": each genome of the line with the recorded decisions that made it; the plain mutation list for runs without a decision log. */
export function foundLines(c: ChampionSummaryDocument): string[] {
  if (c.howFound.some((g) => g.lines.length)) {
    return c.howFound.flatMap((g, i) => [
      `${i + 1}. \`${g.genomeHash.slice(0, 12)}\`${g.genomeHash === c.genomeHash ? ' (the champion)' : ''}${g.evaluationId ? `, evaluation ${g.evaluationId}` : ''}: ${g.lines.join(' ') || 'no recorded decision.'}`,
    ]);
  }
  if (!c.lineage.length) return ['It is an initial member of the population (no mutation led to it).'];
  return [`${c.lineage.length} mutation(s) from an initial member:`, '', ...c.lineage.map((l, i) => `${i + 1}. \`${l.parentHash.slice(0, 12)}\` → \`${l.childHash.slice(0, 12)}\`: ${l.operator} (${l.detail})`)];
}

/** The ensemble's test score beside the champion's, and its members; empty when the run has none. */
export function ensembleLines(c: ChampionSummaryDocument): string[] {
  const e = c.ensemble;
  if (!e) return [];
  return [
    '## Averaging ensemble',
    '',
    `${e.members.length} genomes chosen for ${c.target ? 'low validation error' : 'accuracy'} and for differing from each other (the best first, then each time the best validation ${c.target ? 'fitness' : 'accuracy'} minus a penalty for architecture similarity to a member already chosen), each trained again like a champion candidate; their ${c.target ? 'predicted numbers' : 'softmax outputs'} are averaged (files in \`ensemble/\`, with \`ensemble.json\` saying how).`,
    '',
    `| | held-out test ${c.target ? 'RMSE' : 'accuracy'} |`,
    '|---|---|',
    `| ensemble of ${e.members.length} | ${score(c, e.testAccuracy)} |`,
    `| single champion | ${score(c, e.championTestAccuracy)} |`,
    '',
    '| member | genome | similarity to earlier members | test alone |',
    '|---|---|---|---|',
    ...e.members.map((m) => `| ${m.position + 1} | \`${m.genomeHash.slice(0, 12)}\` ${m.summary} | ${m.similarity == null ? 'n/a' : m.similarity.toFixed(2)} | ${score(c, m.testAccuracy)} |`),
    '',
  ];
}

const esc = (s: string) => s.replace(/[&<>"]/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' })[ch]!);

/** Renders the few Markdown forms these sections use (paragraphs, numbered items, tables, `code`, **bold**, ## headings) as HTML. */
export function sectionHtml(lines: string[]): string {
  const inline = (s: string) => esc(s).replace(/`([^`]+)`/g, '<code>$1</code>').replace(/\*\*([^*]+)\*\*/g, '<b>$1</b>');
  const out: string[] = [];
  let list = false;
  let table = false;
  for (const line of lines) {
    const item = /^\d+\. (.*)$/.exec(line);
    if (list && !item) (out.push('</ol>'), (list = false));
    if (table && !line.startsWith('|')) (out.push('</table>'), (table = false));
    if (item) {
      if (!list) (out.push('<ol>'), (list = true));
      out.push(`<li>${inline(item[1]!)}</li>`);
    } else if (line.startsWith('|')) {
      if (/^\|[-| ]+\|$/.test(line)) continue;
      const cells = line.slice(1, -1).split(' | ').map((x) => inline(x.trim()));
      out.push(`${table ? '' : '<table>'}<tr>${cells.map((x) => (table ? `<td>${x}</td>` : `<th>${x}</th>`)).join('')}</tr>`);
      table = true;
    } else if (line.startsWith('## ')) out.push(`<h2>${inline(line.slice(3))}</h2>`);
    else if (line.trim()) out.push(`<p>${inline(line)}</p>`);
  }
  if (list) out.push('</ol>');
  if (table) out.push('</table>');
  return out.join('\n');
}
