import { dataShapeOf } from '@netbreeder/shared-types';
import type { RunRecord } from '../store/run-store.js';
import { ONNX_INPUT, ONNX_OPSET, ONNX_OUTPUT, onnxModelBytes, type OnnxNetwork } from '../onnx/onnx-export.js';
import { onnxUnsupported } from '../onnx/genome-to-onnx.js';
import type { OnnxLatency, OnnxLatencyUnavailable } from '../onnx/onnx-latency.js';
import { COORDINATOR_VERSION } from '../version.js';

/** What a run's `model.onnx` takes and gives, in words (the ONNX model's doc string, and the report's). */
export function onnxDescription(run: RunRecord, members: number): string {
  const m = run.dataset.manifest;
  const what = members > 1 ? `the averaging ensemble of ${members} networks` : 'the champion';
  const input = m.inputShape.length === 3 ? `batch × ${m.inputShape.join(' × ')} (height × width × channels)` : `batch × ${m.inputShape[0]} features`;
  const output = m.target
    ? `'${ONNX_OUTPUT}', batch × 1: the standardised prediction; multiply by ${m.target.std} and add ${m.target.mean} to read ${m.target.column}`
    : `'${ONNX_OUTPUT}', batch × ${m.numClasses}: class probabilities${members > 1 ? ' (the mean of the members\')' : ''} in the order of ${JSON.stringify(m.classNames)}`;
  return `netbreeder run ${run.id}: ${what}, ONNX opset ${ONNX_OPSET}. Input '${ONNX_INPUT}', float32, ${input}, prepared as preprocessing.json says. Output ${output}.`;
}

/** Why these genomes get no `model.onnx` (a layer kind the export does not write), or null. */
export const onnxUnavailable = (genomes: ReadonlyArray<OnnxNetwork['genome']>): string | null => genomes.map(onnxUnsupported).find((r) => r !== null) ?? null;

/** The run's ONNX model of these trained networks (one: the champion; several: their averaging ensemble). */
export function onnxExportOf(run: RunRecord, networks: readonly OnnxNetwork[]): Buffer {
  const m = run.dataset.manifest;
  return Buffer.from(onnxModelBytes(networks, dataShapeOf(m), { description: onnxDescription(run, networks.length), classNames: m.classNames, producerVersion: COORDINATOR_VERSION }));
}

/** The ONNX Runtime latency of the report's table, in words. */
export function describeOnnxLatency(latency: OnnxLatency | OnnxLatencyUnavailable | null): string {
  if (!latency) return 'not measured (a run from before the ONNX export)';
  if ('unavailable' in latency) return `not measured: ${latency.unavailable}`;
  return `${latency.msPerSample.toFixed(3)} ms for one sample alone, ${latency.msPerBatch32.toFixed(3)} ms for a batch of 32 (medians of ${latency.runs} runs; ${latency.runtime}, one thread, the coordinator's CPU)`;
}
