import type { ChampionSummaryDocument } from './champion-files.js';

/**
 * The report's sections on how the champion was chosen, how it was found (from the decision log)
 * and the ensemble, as Markdown lines; the HTML report renders the same lines.
 */
const pct = (v: number | null | undefined) => (v == null ? 'n/a' : `${(v * 100).toFixed(2)}%`);

/** Candidates that competed to be the champion (ensemble-only members are listed with the ensemble). */
const contenders = (c: ChampionSummaryDocument) => c.candidates.filter((k) => k.champion !== false);

export function choiceParagraph(c: ChampionSummaryDocument): string {
  const k = contenders(c).length;
  const how =
    c.choice.by === 'pick'
      ? ''
      : k > 1
        ? ` The ${k} best distinct genomes${c.choice.by === 'rule' ? ' meeting it' : ''} were each trained again on train + validation and scored on the held-out test split; the best of them by test accuracy is this champion. Because the test split chose among ${k}, its test score is slightly optimistic; the others' scores are below.`
        : ' It was trained again on train + validation and scored once on the held-out test split.';
  return `${c.choice.sentence}${how}`;
}

export function choiceTable(c: ChampionSummaryDocument): string[] {
  return [
    '| genome | validation (search) | test |',
    '|---|---|---|',
    ...contenders(c).map((k) => `| ${k.genomeHash === c.genomeHash ? '**champion** ' : ''}\`${k.genomeHash.slice(0, 12)}\` ${k.summary} | ${pct(k.valAccuracy)} | ${pct(k.testAccuracy)} |`),
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
    `${e.members.length} genomes chosen for accuracy and for differing from each other (the most accurate first, then each time the best validation accuracy minus a penalty for architecture similarity to a member already chosen), each trained again like a champion candidate; their softmax outputs are averaged (files in \`ensemble/\`, with \`ensemble.json\` saying how).`,
    '',
    '| | held-out test accuracy |',
    '|---|---|',
    `| ensemble of ${e.members.length} | ${pct(e.testAccuracy)} |`,
    `| single champion | ${pct(e.championTestAccuracy)} |`,
    '',
    '| member | genome | similarity to earlier members | test alone |',
    '|---|---|---|---|',
    ...e.members.map((m) => `| ${m.position + 1} | \`${m.genomeHash.slice(0, 12)}\` ${m.summary} | ${m.similarity == null ? 'n/a' : m.similarity.toFixed(2)} | ${pct(m.testAccuracy)} |`),
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
