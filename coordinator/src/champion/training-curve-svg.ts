import type { EpochRecord } from '@netbreeder/shared-types';
import { axesSvg, niceTicks, scale, type Axis } from './svg-axes.js';

const W = 540;
const H = 230;

/**
 * The final training's curve as a small SVG line chart: the training loss per epoch on the left
 * axis and, for a classifier, the training accuracy on the right one (a regression run's fitness
 * is no accuracy, so it draws the loss alone); tick values and titles on every axis. Pure.
 */
export function trainingCurveSvg(history: readonly EpochRecord[], withAccuracy: boolean): string {
  if (history.length === 0) return '<p>No epochs recorded.</p>';
  const frame = { left: 58, top: 12, right: W - (withAccuracy ? 66 : 16), bottom: H - 44 };
  const epochs = history.length;
  const x: Axis = { lo: 1, hi: Math.max(2, epochs), title: 'epoch', ticks: niceTicks(1, epochs, Math.min(5, epochs - 1)).filter(Number.isInteger) };
  const loss: Axis = { lo: 0, hi: Math.max(...history.map((e) => e.trainLoss), 1e-9), title: 'training loss', className: 'loss-label' };
  const accuracy: Axis = { lo: 0, hi: 1, title: 'training accuracy', ticks: [0, 0.25, 0.5, 0.75, 1], format: (v) => `${Math.round(v * 100)}%`, className: 'acc-label' };
  const fx = scale(x, frame.left, frame.right);
  const line = (axis: Axis, of: (e: EpochRecord) => number) => {
    const fy = scale(axis, frame.bottom, frame.top);
    return history.map((e, i) => `${i ? 'L' : 'M'}${fx(i + 1).toFixed(1)},${fy(of(e)).toFixed(1)}`).join(' ');
  };
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" role="img" aria-label="training curve">
${axesSvg(frame, x, loss, withAccuracy ? accuracy : undefined)}
<path d="${line(loss, (e) => e.trainLoss)}" class="loss"/>${withAccuracy ? `<path d="${line(accuracy, (e) => e.trainAccuracy)}" class="acc"/>` : ''}
</svg>`;
}
