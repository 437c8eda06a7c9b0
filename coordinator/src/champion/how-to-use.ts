import { ONNX_OPSET } from '../onnx/onnx-export.js';

/**
 * The "How to use it" section of a champion's report: a Node example that needs only the
 * `@tensorflow/tfjs` package (no native backend), the `predict` command and a Python example
 * for `model.onnx` in ONNX Runtime.
 */

/**
 * A 10-line ES module that loads the export in plain Node and classifies one input. It reads
 * model.json and weights.bin itself and hands them to `tf.io.fromMemory`:
 * `tf.loadLayersModel('file://…')` fails without the native `@tensorflow/tfjs-node` package.
 */
export function nodeSnippet(dir = './champion', regression = false): string {
  return [
    "import { readFileSync } from 'node:fs';",
    "import * as tf from '@tensorflow/tfjs';",
    `const dir = ${JSON.stringify(dir)}; // the export folder`,
    "const modelJson = JSON.parse(readFileSync(`${dir}/model.json`, 'utf8'));",
    'const weights = readFileSync(`${dir}/weights.bin`);',
    'const model = await tf.loadLayersModel(tf.io.fromMemory({ modelTopology: modelJson.modelTopology, weightSpecs: modelJson.weightsManifest[0].weights, weightData: weights.buffer.slice(weights.byteOffset, weights.byteOffset + weights.byteLength) }));',
    "const pre = JSON.parse(readFileSync(`${dir}/preprocessing.json`, 'utf8'));",
    'const input = new Float32Array(pre.inputShape.reduce((a, b) => a * b, 1)); // fill it as preprocessing.json says',
    ...(regression
      ? ['const [y] = model.predict(tf.tensor(input, [1, ...pre.inputShape])).dataSync(); // the standardised target', 'console.log(y * pre.target.std + pre.target.mean); // in the units of pre.target.column']
      : ['const probabilities = Array.from(model.predict(tf.tensor(input, [1, ...pre.inputShape])).dataSync());', 'console.log(pre.classNames[probabilities.indexOf(Math.max(...probabilities))], probabilities);']),
  ].join('\n');
}

/**
 * A 5-line Python example that runs `model.onnx` in ONNX Runtime (the general-purpose runtime's
 * `onnxruntime` and `numpy` packages) on one input prepared as `preprocessing.json` says.
 */
export function pythonOnnxSnippet(regression: boolean, dir = 'champion'): string {
  return [
    'import json, numpy as np, onnxruntime as ort',
    `pre = json.load(open("${dir}/preprocessing.json"))`,
    `session = ort.InferenceSession("${dir}/model.onnx")`,
    'x = np.zeros([1, *pre["inputShape"]], dtype=np.float32)  # fill it as preprocessing.json says',
    regression
      ? 'y = session.run(["output"], {"input": x})[0][0, 0]; t = pre["target"]; print(y * t["std"] + t["mean"])'
      : 'p = session.run(["output"], {"input": x})[0][0]; print(pre["classNames"][int(p.argmax())], p)',
  ].join('\n');
}

/** The section's Markdown lines (the HTML report renders the same text). */
export function howToUseLines(hasEnsemble: boolean, regression = false): string[] {
  return [
    '## How to use it',
    '',
    `\`preprocessing.json\` says exactly how a raw input becomes the model input (column order, means and standard deviations at full precision, one-hot order, image size and scaling, window or sequence length) and ${regression ? "how the model's one output becomes the target (`target`: output × std + mean)" : 'names the classes in output order'}.`,
    '',
    regression
      ? 'Predict a CSV with the training header (for a series: its time steps, one prediction per full window) with the `predict` command (writes one row per input: id and the predicted number in the target\'s units):'
      : 'Predict a CSV with the training header (rows, time steps or sequences), a folder of images or an IDX file with the `predict` command (writes one row per input: id, predicted class, one probability per class):',
    '',
    '```',
    'netbreeder predict --model ./champion --input new-data.csv --out predictions.csv',
    ...(hasEnsemble ? ['netbreeder predict --model ./champion/ensemble --input new-data.csv   # the averaging ensemble'] : []),
    '```',
    '',
    "In plain Node with only the `@tensorflow/tfjs` package, read `model.json` and `weights.bin` yourself and pass them to `tf.io.fromMemory` (`tf.loadLayersModel('file://…')` needs the native `@tensorflow/tfjs-node` package); save as `predict.mjs` and run `node predict.mjs`:",
    '',
    '```js',
    nodeSnippet('./champion', regression),
    '```',
    '',
    "From TypeScript in this repository, `loadChampion(dir)` of `@netbreeder/coordinator` does the same, applies `preprocessing.json` to raw table rows (`predict(rows)`) and averages an ensemble's members.",
    '',
    `Outside JavaScript, \`model.onnx\` is the same network as an ONNX graph (opset ${ONNX_OPSET}; input \`input\` in the layout of \`preprocessing.json\`'s \`inputShape\`, output \`output\`${hasEnsemble ? '; `ensemble/model.onnx` averages the ensemble\'s members in one graph' : ''}). In Python with ONNX Runtime (\`pip install onnxruntime numpy\`):`,
    '',
    '```python',
    pythonOnnxSnippet(regression),
    '```',
    '',
  ];
}

const esc = (s: string) => s.replace(/[&<>"]/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' })[ch]!);

/** The same section as HTML: paragraphs with `code`, fenced blocks as <pre>. */
export function howToUseHtml(hasEnsemble: boolean, regression = false): string {
  const out: string[] = [];
  let block: string[] | null = null;
  for (const line of howToUseLines(hasEnsemble, regression)) {
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
