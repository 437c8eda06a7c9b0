import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PNG } from 'pngjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createRandom, type ImageSteps } from '@netbreeder/shared-types';
import { decodeImageFolder, listImageFolder } from '../importers/image-folder.js';
import { idxFeatures, readIdxFile } from '../importers/idx-files.js';
import { idxInput } from './idx-input.js';
import { imageInput, listImages } from './image-input.js';

/** Seeded random RGBA PNG of the given size. */
function randomPng(width: number, height: number, seed: number): Buffer {
  const rng = createRandom(seed);
  const png = new PNG({ width, height });
  for (let i = 0; i < png.data.length; i++) png.data[i] = i % 4 === 3 ? 255 : rng.int(0, 255);
  return PNG.sync.write(png);
}

/** IDX bytes: unsigned bytes of the given dims (count first), values i mod 256. */
function idxBytes(dims: number[]): Buffer {
  const n = dims.reduce((a, b) => a * b, 1);
  const head = Buffer.alloc(4 + 4 * dims.length);
  head[2] = 0x08;
  head[3] = dims.length;
  dims.forEach((d, i) => head.writeUInt32BE(d, 4 + 4 * i));
  return Buffer.concat([head, Buffer.from(Array.from({ length: n }, (_, i) => i % 256))]);
}

describe("the predictor's image and IDX inputs equal the importers' samples", () => {
  let dir: string;
  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-predict-inputs-'));
    for (const [cls, seeds] of [['a', [1, 2]], ['b', [3, 4, 5]]] as const) {
      await mkdir(join(dir, 'imgs', cls), { recursive: true });
      for (const s of seeds) await writeFile(join(dir, 'imgs', cls, `${s}.png`), randomPng(9 + s, 7 + 2 * s, s));
    }
    await writeFile(join(dir, 'samples.idx'), idxBytes([3, 4, 5]));
  });
  afterAll(async () => rm(dir, { recursive: true, force: true }));

  it('resizes and converts every image as the image-folder import does (area and bilinear, 1 and 3 channels)', async () => {
    const listing = await listImageFolder(join(dir, 'imgs'));
    expect(await listImages(join(dir, 'imgs'))).toEqual(listing.files.map((f) => f.slice(join(dir, 'imgs').length + 1)));
    for (const channels of [1, 3] as const) {
      for (const resize of ['area', 'bilinear'] as const) {
        const steps: ImageSteps = { kind: 'images', width: 6, height: 5, channels, resize, scale: 'divide-255', layout: 'height-width-channels' };
        const imported = await decodeImageFolder(listing, { width: 6, height: 5, channels, method: resize }, false);
        const size = 6 * 5 * channels;
        for (const [i, file] of listing.files.entries()) {
          const bytes = await readFile(file);
          expect(Array.from(imageInput(bytes, file, steps)), `${file} ${channels} ${resize}`).toEqual(Array.from(imported.subarray(i * size, (i + 1) * size)));
        }
      }
    }
  });

  it('scales IDX bytes as the IDX import does, and refuses samples of another shape', async () => {
    const file = join(dir, 'samples.idx');
    const got = await idxInput(file, { kind: 'idx', typeCode: 0x08, sampleShape: [4, 5, 1], scale: 'divide-255', labelValues: [0, 1] });
    expect(got.count).toBe(3);
    expect(Array.from(got.features)).toEqual(Array.from(idxFeatures(await readIdxFile(file), true)));
    await expect(idxInput(file, { kind: 'idx', typeCode: 0x08, sampleShape: [28, 28, 1], scale: 'divide-255', labelValues: [0, 1] })).rejects.toThrow(
      /holds samples of type 0x08 and shape \[4, 5, 1\], but the model was trained on type 0x08 and shape \[28, 28, 1\]/,
    );
  });
});
