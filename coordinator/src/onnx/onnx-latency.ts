import type { LabelledSamples } from '@netbreeder/shared-types';
import { ONNX_INPUT } from './onnx-export.js';

/** ONNX Runtime's CPU latency of one exported model on this machine. */
export interface OnnxLatency {
  /** `onnxruntime-node` and its version. */
  runtime: string;
  /** Timed runs per figure (after 3 warm-up runs); each figure is their median. */
  runs: number;
  /** Median milliseconds for one sample alone (batch of 1). */
  msPerSample: number;
  /** Median milliseconds for a batch of 32 samples. */
  msPerBatch32: number;
}

/** Why no latency was measured (ONNX Runtime not installed, or it refused the model). */
export interface OnnxLatencyUnavailable {
  unavailable: string;
}

const median = (values: number[]): number => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)]!;

/**
 * Loads `model.onnx` bytes in ONNX Runtime (`onnxruntime-node`, an optional dependency: without it
 * the answer says so) on one CPU thread, and times a batch of 1 and a batch of 32 real samples
 * (`samples`, cycled when there are fewer), `runs` times each after 3 warm-up runs.
 */
export async function measureOnnxLatency(bytes: Uint8Array, samples: LabelledSamples, inputShape: readonly number[], runs = 30): Promise<OnnxLatency | OnnxLatencyUnavailable> {
  let ort: typeof import('onnxruntime-node');
  try {
    ort = await import('onnxruntime-node');
  } catch (err) {
    return { unavailable: `onnxruntime-node is not installed here (${(err as Error).message.split('\n')[0]}); install it beside the coordinator to measure ONNX Runtime latency` };
  }
  if (samples.count === 0) return { unavailable: 'no samples to time it on' };
  const size = inputShape.reduce((a, b) => a * b, 1);
  const batch = (count: number) => {
    const data = new Float32Array(count * size);
    for (let i = 0; i < count; i++) data.set(samples.features.subarray((i % samples.count) * size, ((i % samples.count) + 1) * size), i * size);
    return new ort.Tensor('float32', data, [count, ...inputShape]);
  };
  let session: import('onnxruntime-node').InferenceSession;
  try {
    session = await ort.InferenceSession.create(bytes, { intraOpNumThreads: 1, interOpNumThreads: 1 });
  } catch (err) {
    return { unavailable: `ONNX Runtime refused the model: ${(err as Error).message.split('\n')[0]}` };
  }
  try {
    const time = async (count: number): Promise<number> => {
      const input = batch(count);
      const times: number[] = [];
      for (let i = 0; i < runs + 3; i++) {
        const t0 = performance.now();
        await session.run({ [ONNX_INPUT]: input });
        if (i >= 3) times.push(performance.now() - t0);
      }
      return median(times);
    };
    return { runtime: `onnxruntime-node ${ort.env.versions.common ?? ''}`.trim(), runs, msPerSample: await time(1), msPerBatch32: await time(32) };
  } finally {
    await session.release();
  }
}
