/**
 * The training benchmark's native peer: the same networks trained in PyTorch on one thread, run
 * through our script native-peer.py when a Python that imports torch is found (Debian:
 * `apt-get install python3-torch`). Not part of the product; the bench only.
 */
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import type * as tf from '@tensorflow/tfjs';
import { expandMotifs, topologicalOrder, type DataShape, type Genome } from '@netbreeder/shared-types';
import { buildModel } from '../src/training/build-model.js';

const SCRIPT = fileURLToPath(new URL('./native-peer.py', import.meta.url));
/**
 * One thread for every library torch may use underneath; and glibc's malloc kept from handing
 * each step's multi-megabyte buffers back to the kernel (mmap/munmap and heap trimming), which
 * made a fresh process page-fault its way through every step: ref-cnn 3,544–3,662 samples per
 * CPU-second without these two settings, 6,433–6,679 with (paired runs, 2026-12-04).
 */
const PEER_ENV = {
  ...process.env,
  OMP_NUM_THREADS: '1',
  MKL_NUM_THREADS: '1',
  OPENBLAS_NUM_THREADS: '1',
  MALLOC_MMAP_THRESHOLD_: String(256 * 2 ** 20),
  MALLOC_TRIM_THRESHOLD_: String(2 ** 30),
};

export interface PeerNetwork {
  name: string;
  genome: Genome;
  data: DataShape;
  batches: number;
}

export interface ParamCounts {
  trainable: number;
  nonTrainable: number;
}

export interface PeerResult {
  name: string;
  params: ParamCounts;
  samples?: number;
  samplesPerSecond?: number;
  samplesPerCpuSecond?: number;
}

export interface PeerRun {
  torch: string;
  threads: number;
  results: PeerResult[];
}

/**
 * Pythons tried in order: NETBREEDER_PEER_PYTHON if set, the one on PATH, then the system's (a
 * Python on PATH from a version manager does not see Debian's python3-torch).
 */
const PYTHONS = [process.env['NETBREEDER_PEER_PYTHON'], 'python3', '/usr/bin/python3'].filter((p): p is string => !!p);

/** The first Python that imports torch, or why there is none (one sentence). */
export function nativePeerAvailability(): { ok: true; python: string } | { ok: false; reason: string } {
  for (const python of PYTHONS) {
    const probe = spawnSync(python, ['-c', 'import torch'], { encoding: 'utf8', env: PEER_ENV });
    if (!probe.error && probe.status === 0) return { ok: true, python };
  }
  return { ok: false, reason: `none of ${PYTHONS.join(', ')} imports torch (Debian: apt-get install python3-torch)` };
}

/** Runs the peer: `count` builds the networks and reports their parameter counts, `time` also trains them. */
export function runNativePeer(python: string, mode: 'count' | 'time', networks: PeerNetwork[]): PeerRun {
  const request = {
    mode,
    networks: networks.map((n) => {
      const expanded = expandMotifs(n.genome).genome;
      const order = topologicalOrder(expanded);
      if (!order.ok) throw new Error(`${n.name}: ${order.issues.map((i) => i.message).join('; ')}`);
      return { name: n.name, nodes: order.order, output: expanded.output, inputShape: n.data.inputShape, numClasses: n.data.numClasses, training: n.genome.training, batches: n.batches };
    }),
  };
  const run = spawnSync(python, [SCRIPT], { input: JSON.stringify(request), encoding: 'utf8', env: PEER_ENV, maxBuffer: 1 << 20 });
  if (run.status !== 0) throw new Error(`the native peer (${SCRIPT}) failed: ${run.error?.message ?? run.stderr.trim().split('\n').slice(-3).join(' ')}`);
  const lines = run.stdout.trim().split('\n');
  return JSON.parse(lines[lines.length - 1]!) as PeerRun;
}

/** Parameter counts of the model our engine builds for a genome (batch norm's moving statistics are the non-trainable ones). */
export function engineParamCounts(genome: Genome, data: DataShape): ParamCounts {
  const model = buildModel(genome, data, 1);
  const size = (ws: tf.LayerVariable[]) => ws.reduce((s, w) => s + w.shape.reduce<number>((a, b) => a * (b ?? 1), 1), 0);
  const counts = { trainable: size(model.trainableWeights), nonTrainable: size(model.nonTrainableWeights) };
  model.dispose();
  return counts;
}

/**
 * Checks, before anything is timed, that the peer's networks have exactly our parameter counts;
 * throws naming every network that differs.
 */
export function checkSameNetworks(networks: PeerNetwork[], peer: PeerRun): Array<{ name: string; engine: ParamCounts; peer: ParamCounts }> {
  const pairs = networks.map((n) => {
    const theirs = peer.results.find((r) => r.name === n.name);
    if (!theirs) throw new Error(`the native peer did not build ${n.name}`);
    return { name: n.name, engine: engineParamCounts(n.genome, n.data), peer: theirs.params };
  });
  const differ = pairs.filter((p) => p.engine.trainable !== p.peer.trainable || p.engine.nonTrainable !== p.peer.nonTrainable);
  if (differ.length)
    throw new Error(
      `the native peer's networks differ from ours (${differ.map((d) => `${d.name}: ours ${d.engine.trainable}+${d.engine.nonTrainable}, peer ${d.peer.trainable}+${d.peer.nonTrainable}`).join('; ')}); fix worker/bench/native-peer.py before comparing speeds`,
    );
  return pairs;
}
