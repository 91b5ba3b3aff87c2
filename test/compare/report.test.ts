import { describe, expect, it } from 'vitest';
import { compareTemplates } from '../../src/compare/compare.js';
import { comparisonCautions, renderCompareHtml } from '../../src/compare/report.js';
import { createRng } from '../../src/random.js';
import { randomSimilarity, simulateTemplate, syntheticLayout } from './synthetic.js';

function comparison() {
  const rng = createRng(31);
  const layout = syntheticLayout(rng, 12, 3, [2.5, 1.75, 1]);
  const a = simulateTemplate(rng, layout, { animals: 10, keepPositions: false });
  const b = simulateTemplate(rng, layout, { animals: 10, frame: randomSimilarity(rng, 3, 1), keepPositions: false });
  return { result: compareTemplates(a, b, { permutations: 0 }) };
}

const count = (text: string, pattern: RegExp): number => (text.match(pattern) ?? []).length;

describe('renderCompareHtml', () => {
  it('builds a page with the cautions first, the figure and one table row per tested cell', () => {
    const { result } = comparison();
    const html = renderCompareHtml(result, { sourceA: 'strain-a.json', sourceB: 'strain-b.json' });
    expect(html).toContain('A cell called different is a proposal to look at in the images, not a finding by itself.');
    expect(html.indexOf('proposal to look at')).toBeLessThan(html.indexOf('<svg'));
    expect(count(html, /<tr>/g)).toBe(result.cells.length + 1);
    expect(html).toContain('strain-b.json');
  });
});

describe('comparisonCautions', () => {
  it('names the covariance used and says that called cells are proposals', () => {
    const { result } = comparison();
    const c = comparisonCautions(result);
    expect(c[1]).toContain('(shrunk toward the pooled covariance, which makes it conservative)');
    expect(c[1]).toContain("that alignment's uncertainty is included");
    expect(comparisonCautions({ ...result, alignmentUncertainty: false })[1]).toContain('the alignment is treated as known');
    expect(c[2]).toBe('A cell called different is a proposal to look at in the images, not a finding by itself.');
  });
});
