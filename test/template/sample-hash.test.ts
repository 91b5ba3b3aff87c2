import { describe, it, expect } from 'vitest';
import { createHash } from 'node:crypto';
import { sampleHash } from '../../src/template/sample-hash.js';
import { sampleFromConfiguration } from './helpers.js';

describe('sampleHash', () => {
  const base = sampleFromConfiguration('a', [[1, 2.5, -3], [0.1, 0, 7]], ['Sar-L1', null]);

  it('is the SHA-256 of the documented canonical text', () => {
    const text = 'cairn-sample-v1\n3\n1,2.5,-3,"Sar-L1"\n0.1,0,7,null\n';
    expect(sampleHash(base)).toBe(createHash('sha256').update(text).digest('hex'));
    expect(sampleHash(base)).toMatch(/^[0-9a-f]{64}$/);
  });

  it('ignores the id, the source file, the rows and the feature columns', () => {
    const renamed = { ...base, id: 'b', source: 'elsewhere/b.csv', rows: [7, 9], features: { names: ['gfp'], values: [[1], [2]] } };
    expect(sampleHash(renamed)).toBe(sampleHash(base));
  });

  it('changes when a coordinate or a label changes', () => {
    expect(sampleHash({ ...base, coords: [[1, 2.5, -3.0000001], [0.1, 0, 7]] })).not.toBe(sampleHash(base));
    expect(sampleHash({ ...base, labels: ['Sar-L1', 'Sar-L2'] })).not.toBe(sampleHash(base));
  });

  it('hashes -0 and 0 alike', () => {
    expect(sampleHash({ ...base, coords: [[1, 2.5, -3], [0.1, -0, 7]] })).toBe(sampleHash(base));
  });
});
