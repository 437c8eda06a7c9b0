/**
 * The "How to use it" section of a champion's report: a Node example that needs only the
 * `@tensorflow/tfjs` package (no native backend) and the `predict` command.
 */

/**
 * A 10-line ES module that loads the export in plain Node and classifies one input. It reads
 * model.json and weights.bin itself and hands them to `tf.io.fromMemory`:
 * `tf.loadLayersModel('file://…')` fails without the native `@tensorflow/tfjs-node` package.
 */
export function nodeSnippet(dir = './champion'): string {
  return [
    "import { readFileSync } from 'node:fs';",
    "import * as tf from '@tensorflow/tfjs';",
    `const dir = ${JSON.stringify(dir)}; // the export folder`,
    "const modelJson = JSON.parse(readFileSync(`${dir}/model.json`, 'utf8'));",
    'const weights = readFileSync(`${dir}/weights.bin`);',
    'const model = await tf.loadLayersModel(tf.io.fromMemory({ modelTopology: modelJson.modelTopology, weightSpecs: modelJson.weightsManifest[0].weights, weightData: weights.buffer.slice(weights.byteOffset, weights.byteOffset + weights.byteLength) }));',
    "const pre = JSON.parse(readFileSync(`${dir}/preprocessing.json`, 'utf8'));",
    'const input = new Float32Array(pre.inputShape.reduce((a, b) => a * b, 1)); // fill it as preprocessing.json says',
    'const probabilities = Array.from(model.predict(tf.tensor(input, [1, ...pre.inputShape])).dataSync());',
    'console.log(pre.classNames[probabilities.indexOf(Math.max(...probabilities))], probabilities);',
  ].join('\n');
}

/** The section's Markdown lines (the HTML report renders the same text). */
export function howToUseLines(hasEnsemble: boolean): string[] {
  return [
    '## How to use it',
    '',
    '`preprocessing.json` says exactly how a raw input becomes the model input (column order, means and standard deviations at full precision, one-hot order, image size and scaling) and names the classes in output order.',
    '',
    'Predict a CSV with the training header, a folder of images or an IDX file with the `predict` command (writes one row per input: id, predicted class, one probability per class):',
    '',
    '```',
    'netbreeder predict --model ./champion --input new-data.csv --out predictions.csv',
    ...(hasEnsemble ? ['netbreeder predict --model ./champion/ensemble --input new-data.csv   # the averaging ensemble'] : []),
    '```',
    '',
    "In plain Node with only the `@tensorflow/tfjs` package, read `model.json` and `weights.bin` yourself and pass them to `tf.io.fromMemory` (`tf.loadLayersModel('file://…')` needs the native `@tensorflow/tfjs-node` package); save as `predict.mjs` and run `node predict.mjs`:",
    '',
    '```js',
    nodeSnippet(),
    '```',
    '',
    "From TypeScript in this repository, `loadChampion(dir)` of `@netbreeder/coordinator` does the same, applies `preprocessing.json` to raw table rows (`predict(rows)`) and averages an ensemble's members.",
    '',
  ];
}

const esc = (s: string) => s.replace(/[&<>"]/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' })[ch]!);

/** The same section as HTML: paragraphs with `code`, fenced blocks as <pre>. */
export function howToUseHtml(hasEnsemble: boolean): string {
  const out: string[] = [];
  let block: string[] | null = null;
  for (const line of howToUseLines(hasEnsemble)) {
    if (line.startsWith('```')) {
      if (block) {
        out.push(`<pre><code>${esc(block.join('\n'))}</code></pre>`);
        block = null;
      } else block = [];
    } else if (block) block.push(line);
    else if (line.startsWith('## ')) out.push(`<h2>${esc(line.slice(3))}</h2>`);
    else if (line) out.push(`<p>${esc(line).replace(/`([^`]+)`/g, '<code>$1</code>')}</p>`);
  }
  return out.join('\n');
}
