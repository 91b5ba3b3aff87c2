import { describe, expect, it } from 'vitest';
import { InputError, UsageError } from '../../src/errors.js';
import {
  measuredAccuracyFromEvaluateJson,
  measuredAccuracyFromReport,
  paragraph,
  proposalCautions,
  renderFigure,
  renderHtmlReport,
  renderTable,
  type ReportPage,
} from '../../src/report/html.js';
import { wellFormedProblems } from './support/xml.js';

const page: ReportPage = {
  title: 'Report <one>',
  summary: [{ term: 'cells', value: '12 & more' }],
  cautions: proposalCautions(),
  sections: [
    { heading: 'First part', html: paragraph('hello') },
    { heading: 'First part', html: renderTable({ columns: [{ heading: 'a', numeric: true }], rows: [[1], [2]] }) },
  ],
  footer: 'made by a test',
};

/** Every reference to something outside the page: src/href attributes, url(...), @import, http(s) URLs. */
function externalReferences(html: string): string[] {
  const found: string[] = [];
  for (const m of html.matchAll(/\s(?:src|href|xlink:href|action|data)="([^"]*)"/g)) if (!m[1].startsWith('#')) found.push(m[0]);
  for (const m of html.matchAll(/url\(([^)]*)\)/g)) if (!m[1].startsWith('#')) found.push(m[0]);
  for (const m of html.matchAll(/@import|https?:\/\/[^\s"')]+/g)) if (m[0] !== 'http://www.w3.org/2000/svg') found.push(m[0]);
  return found;
}

describe('renderHtmlReport', () => {
  const html = renderHtmlReport(page);

  it('is one well-formed page that refers to nothing outside itself', () => {
    expect(html.startsWith('<!DOCTYPE html>')).toBe(true);
    expect(wellFormedProblems(html.replace('<!DOCTYPE html>', ''), { html: true })).toEqual([]);
    expect(externalReferences(html)).toEqual([]);
    expect(html).toContain(`default-src 'none'`);
  });

  it('puts the cautions first, before the summary and the sections', () => {
    const c = html.indexOf('class="cautions"');
    expect(c).toBeGreaterThan(0);
    expect(c).toBeLessThan(html.indexOf('id="summary"'));
    expect(html.indexOf('id="summary"')).toBeLessThan(html.indexOf('<h2>First part</h2>'));
    expect(html).toContain('Label proposals are proposals, not results: a person must check every proposed label before it is used.');
  });

  it('escapes titles and summary text and gives repeated headings distinct anchors', () => {
    expect(html).toContain('<title>Report &lt;one&gt;</title>');
    expect(html).toContain('<dd>12 &amp; more</dd>');
    expect(html).toContain('<section id="first-part">');
    expect(html).toContain('<section id="first-part-2">');
    expect(html).toContain('<a href="#first-part-2">First part</a>');
  });

  it('renders `backticks` in cautions as code', () => {
    expect(html).toContain('<code>cairn evaluate</code>');
  });

  it('refuses a page without cautions', () => {
    expect(() => renderHtmlReport({ ...page, cautions: [] })).toThrow(UsageError);
  });
});

describe('proposalCautions', () => {
  it('says accuracy has not been measured on this lab’s data, and how to measure it, when no figure is given', () => {
    const c = proposalCautions();
    expect(c).toHaveLength(2);
    expect(c[1]).toMatch(/^The accuracy of proposals has not been measured on this lab's data\. To measure it, run `cairn evaluate`/);
  });

  it('quotes the measured accuracy with its scheme and sample size', () => {
    const c = proposalCautions({
      accuracy: 0.873,
      points: 3412,
      samples: 24,
      scheme: 'leave-one-out',
      abstained: 0.04,
      falseLabelRate: 0.0927,
    });
    expect(c[1]).toBe(
      "On this lab's own labelled data, `cairn evaluate` (leave-one-out, 24 samples, 3412 labelled points) gave the right " +
        'label to 87.3% of labelled points (about 1 in 8 did not); 4.0% got no proposal; 9.3% of the proposals made were ' +
        'wrong. New animals that differ from those samples (stage, strain, imaging) may fare worse.',
    );
    expect(proposalCautions({ accuracy: 1, points: 5, samples: 1, scheme: 'leave-one-out' })[1]).toContain(
      'gave the right label to 100.0% of labelled points. New animals',
    );
  });

  it('reads the figures from an evaluate accuracy report', () => {
    const m = measuredAccuracyFromReport(
      { accuracy: 0.9, points: 200, coverage: 0.95, falseLabelRate: 0.05 / 0.95, perSample: [{}, {}, {}] },
      '3-fold',
    );
    expect(m).toEqual({ accuracy: 0.9, points: 200, samples: 3, scheme: '3-fold', abstained: 1 - 0.95, falseLabelRate: 0.05 / 0.95 });
    expect(proposalCautions(m)[1]).toContain(
      '(3-fold, 3 samples, 200 labelled points) gave the right label to 90.0% of labelled points (about 1 in 10 did not); ' +
        '5.0% got no proposal; 5.3% of the proposals made were wrong.',
    );
  });

  it('rejects an accuracy outside [0, 1] and empty counts', () => {
    expect(() => proposalCautions({ accuracy: 87, points: 10, samples: 2, scheme: 'x' })).toThrow(/accuracy must be in \[0, 1\]/);
    expect(() => proposalCautions({ accuracy: 0.8, points: 0, samples: 2, scheme: 'x' })).toThrow(UsageError);
  });
});

describe('renderTable', () => {
  const table = renderTable({
    caption: 'numbers & names',
    columns: [
      { heading: 'name', numeric: false },
      { heading: 'value', numeric: true, digits: 2, description: 'a value, µm' },
    ],
    rows: [
      ['b<1>', 3.14159],
      ['a', null],
      ['c', 10],
    ],
  });

  it('shows numbers to the stated digits and keeps the full value for sorting', () => {
    expect(table).toContain('<td class="num" data-value="3.14159">3.14</td>');
    expect(table).toContain('<td class="num" data-value="10">10.00</td>');
  });

  it('shows missing values as a dash with an empty sort value', () => {
    expect(table).toContain('<td class="num missing" data-value="">–</td>');
  });

  it('escapes text and marks headings as sort buttons with their type and description', () => {
    expect(table).toContain('<td data-value="b&lt;1&gt;">b&lt;1&gt;</td>');
    expect(table).toContain('<caption>numbers &amp; names</caption>');
    expect(table).toContain('<th scope="col" data-type="number" aria-sort="none" title="a value, µm" class="num"><button type="button">value');
    expect(wellFormedProblems(table, { html: true })).toEqual([]);
  });

  it('can be rendered without sorting', () => {
    const plain = renderTable({ columns: [{ heading: 'x', numeric: false }], rows: [['1']], sortable: false });
    expect(plain).not.toContain('sortable');
    expect(plain).not.toContain('<button');
  });

  it('rejects a row of the wrong length, naming the row', () => {
    expect(() => renderTable({ columns: [{ heading: 'x', numeric: false }], rows: [['1'], ['2', '3']] })).toThrow(
      'renderTable: row 2 has 2 values for 1 columns',
    );
  });
});

describe('renderFigure', () => {
  it('wraps an svg in a figure with an escaped caption', () => {
    expect(renderFigure('<svg></svg>', 'a < b')).toBe('<figure><svg></svg><figcaption>a &lt; b</figcaption></figure>');
  });
});

describe('measuredAccuracyFromEvaluateJson', () => {
  const doc = { scheme: 'leave-one-out', report: { accuracy: 0.8, points: 400, coverage: 0.95, falseLabelRate: 0.12, perSample: [{}, {}, {}, {}] } };

  it('reads accuracy, points, samples, abstained and false-label rate from the evaluate document', () => {
    const m = measuredAccuracyFromEvaluateJson(JSON.stringify(doc), 'eval.json');
    expect(m.accuracy).toBe(0.8);
    expect(m.points).toBe(400);
    expect(m.samples).toBe(4);
    expect(m.scheme).toBe('leave-one-out');
    expect(m.abstained).toBeCloseTo(0.05, 12);
    expect(m.falseLabelRate).toBe(0.12);
  });

  it('throws InputError naming the file for text that is not evaluate output', () => {
    expect(() => measuredAccuracyFromEvaluateJson('{"report": ', 'e.json')).toThrow(/^e\.json: is not valid JSON/);
    expect(() => measuredAccuracyFromEvaluateJson('{"format":"cairn-template"}', 'e.json')).toThrow(InputError);
    expect(() => measuredAccuracyFromEvaluateJson(JSON.stringify({ report: { ...doc.report, accuracy: 'high' } }), 'e.json')).toThrow(
      'e.json: report.accuracy must be a finite number',
    );
    expect(() => measuredAccuracyFromEvaluateJson(JSON.stringify({ report: { ...doc.report, accuracy: 1.5 } }), 'e.json')).toThrow('must be in [0, 1]');
    expect(() => measuredAccuracyFromEvaluateJson(JSON.stringify({ report: { ...doc.report, perSample: [] } }), 'e.json')).toThrow('measured nothing');
  });
});
