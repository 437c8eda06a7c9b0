import { chmod, mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import jpeg from 'jpeg-js';
import { PNG } from 'pngjs';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { DatasetError, loadDataset, parseRunConfig } from '@netbreeder/coordinator';

/**
 * Image-folder import on PNG files written in the test with the pngjs encoder (and one JPEG with
 * jpeg-js): one sub-folder per class of an invented pottery-glaze camera, each image a flat colour
 * whose value encodes its class and index, so every decoded sample can be traced to its file.
 */
function png(width: number, height: number, rgb: [number, number, number]): Buffer {
  const image = new PNG({ width, height });
  for (let p = 0; p < width * height; p++) image.data.set([...rgb, 255], p * 4);
  return PNG.sync.write(image);
}

const CLASSES = ['celadon', 'shino', 'tenmoku'];
const PER_CLASS = 6;
/** Grey level of image i of class c: distinct for every image. */
const level = (c: number, i: number): number => 20 + c * 70 + i * 9;

describe('image-folder import', () => {
  let dir: string;

  beforeEach(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-images-'));
    for (const [c, name] of CLASSES.entries()) {
      await mkdir(join(dir, 'glazes', name), { recursive: true });
      for (let i = 0; i < PER_CLASS; i++) {
        const v = level(c, i);
        await writeFile(join(dir, 'glazes', name, `shot-${i}.png`), png(12, 8, [v, v, v]));
      }
    }
    await writeFile(join(dir, 'glazes', 'notes.txt'), 'not an image');
  });

  afterEach(async () => {
    await rm(dir, { recursive: true, force: true });
  });

  const config = (dataset: Record<string, unknown>) => parseRunConfig({ seed: 2, dataset: { kind: 'image-folder', path: 'glazes', ...dataset } });

  it('reads one class per sub-folder with shapes, labels and pixels intact (no resize)', async () => {
    const { dataset, preparation } = await loadDataset(config({}), { baseDir: dir });
    expect(dataset.classNames).toEqual(CLASSES);
    expect(dataset.inputShape).toEqual([8, 12, 1]);
    expect(preparation.preprocessing).toMatchObject({ kind: 'images', width: 12, height: 8, channels: 1, resize: 'none', skippedFiles: 1 });
    const total = dataset.train.count + dataset.val.count + dataset.test.count;
    expect(total).toBe(CLASSES.length * PER_CLASS);
    for (const split of [dataset.train, dataset.val, dataset.test]) {
      for (let k = 0; k < split.count; k++) {
        const px = split.features.subarray(k * 96, (k + 1) * 96);
        // A grey pixel's luma is its grey level (the BT.601 weights sum to 1).
        const grey = Math.round(px[0]! * 255);
        const c = split.labels[k]!;
        expect([...Array(PER_CLASS).keys()].map((i) => level(c, i)), `class ${CLASSES[c]}`).toContain(grey);
        expect(Math.max(...px) - Math.min(...px)).toBeLessThan(1e-6);
      }
    }
  });

  it('resizes to imageSize and keeps colour with channels 3; a JPEG is read too', async () => {
    await writeFile(join(dir, 'glazes', 'shino', 'extra.jpg'), Buffer.from(jpeg.encode({ width: 20, height: 20, data: Buffer.alloc(20 * 20 * 4, 200) }, 95).data));
    const { dataset, preparation } = await loadDataset(config({ imageSize: { width: 4, height: 4 }, channels: 3, resize: 'bilinear' }), { baseDir: dir });
    expect(dataset.inputShape).toEqual([4, 4, 3]);
    expect(preparation.preprocessing).toMatchObject({ width: 4, height: 4, channels: 3, resize: 'bilinear' });
    expect(dataset.train.count + dataset.val.count + dataset.test.count).toBe(CLASSES.length * PER_CLASS + 1);
    // Resizing a flat image keeps it flat, at its level.
    const first = dataset.train.features.subarray(0, 48);
    expect(Math.max(...first) - Math.min(...first)).toBeLessThan(0.02);
  });

  it('refuses mixed sizes without imageSize, naming the file', async () => {
    await writeFile(join(dir, 'glazes', 'tenmoku', 'wide.png'), png(16, 8, [90, 90, 90]));
    const err = (await loadDataset(config({}), { baseDir: dir }).catch((e: unknown) => e)) as DatasetError;
    expect(err.code).toBe('NB_DATASET_MIXED_IMAGE_SIZES');
    expect(err.where.file).toBe(join(dir, 'glazes', 'tenmoku', 'wide.png'));
    expect(err.message).toContain('16×8');
    // With a size set, the same folder imports.
    await expect(loadDataset(config({ imageSize: { width: 12, height: 8 } }), { baseDir: dir })).resolves.toBeDefined();
  });

  it('refuses zero-byte, undecodable and unreadable images, naming the file', async () => {
    const cases: Array<[string, Buffer, string]> = [
      ['empty.png', Buffer.alloc(0), 'NB_DATASET_BAD_IMAGE'],
      ['broken.png', png(12, 8, [1, 2, 3]).subarray(0, 60), 'NB_DATASET_BAD_IMAGE'],
      ['text.jpg', Buffer.from('hello, not a picture'), 'NB_DATASET_BAD_IMAGE'],
    ];
    for (const [name, bytes, code] of cases) {
      const file = join(dir, 'glazes', 'celadon', name);
      await writeFile(file, bytes);
      const err = (await loadDataset(config({}), { baseDir: dir }).catch((e: unknown) => e)) as DatasetError;
      expect(err, name).toBeInstanceOf(DatasetError);
      expect(err.code, name).toBe(code);
      expect(err.where.file, name).toBe(file);
      await rm(file);
    }
    if (process.getuid?.() !== 0) {
      // Root reads any file, so the permission case only runs for other users.
      const file = join(dir, 'glazes', 'celadon', 'locked.png');
      await writeFile(file, png(12, 8, [1, 1, 1]));
      await chmod(file, 0o000);
      const err = (await loadDataset(config({}), { baseDir: dir }).catch((e: unknown) => e)) as DatasetError;
      expect(err.code).toBe('NB_DATASET_UNREADABLE');
    }
  });

  it('refuses a folder with a single class, an empty class folder and a missing folder', async () => {
    const one = join(dir, 'one');
    await mkdir(join(one, 'only'), { recursive: true });
    for (let i = 0; i < 4; i++) await writeFile(join(one, 'only', `${i}.png`), png(4, 4, [i, i, i]));
    expect(((await loadDataset(config({ path: 'one' }), { baseDir: dir }).catch((e: unknown) => e)) as DatasetError).code).toBe('NB_DATASET_TOO_FEW_CLASSES');
    await mkdir(join(dir, 'glazes', 'raku'));
    const empty = (await loadDataset(config({}), { baseDir: dir }).catch((e: unknown) => e)) as DatasetError;
    expect(empty.code).toBe('NB_DATASET_EMPTY');
    expect(empty.where.file).toBe(join(dir, 'glazes', 'raku'));
    expect(((await loadDataset(config({ path: 'nowhere' }), { baseDir: dir }).catch((e: unknown) => e)) as DatasetError).code).toBe('NB_DATASET_UNREADABLE');
  });
});
