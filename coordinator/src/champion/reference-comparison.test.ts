import { describe, expect, it } from 'vitest';
import { comparisonLine } from './reference-comparison.js';

describe('comparisonLine', () => {
  it('says by how many points of test accuracy the champion beats the reference', () => {
    expect(comparisonLine({ genomeHash: 'a', testAccuracy: 0.963 }, { genomeHash: 'r', testAccuracy: 0.95 })).toBe(
      "the search's champion beats the reference network by 1.30 points (test accuracy 96.30% against 95.00%)",
    );
  });

  it('says the search did not beat the reference when validation chose the reference itself', () => {
    expect(comparisonLine({ genomeHash: 'r', testAccuracy: 0.9 }, { genomeHash: 'r', testAccuracy: 0.9 })).toMatch(/^the search did not beat the reference network; it is exported as the champion/);
  });

  it('says plainly when the champion chosen on validation scores below the reference on test, and that the export stands', () => {
    const line = comparisonLine({ genomeHash: 'a', testAccuracy: 0.9 }, { genomeHash: 'r', testAccuracy: 0.925 });
    expect(line).toMatch(/^the champion, chosen on validation, scores 2\.50 points below the reference network on the test split/);
    expect(line).toMatch(/it stays the exported champion/);
  });
});
