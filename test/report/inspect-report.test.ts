import { describe, expect, it } from 'vitest';
import { buildInspectReport, renderInspectHtml } from '../../src/report/inspect-report.js';
import { makeTemplate, testTemplate } from './support/template.js';
import { wellFormedProblems } from './support/xml.js';

describe('buildInspectReport', () => {
  const template = testTemplate({ cells: 25, flagged: 4 });

  it('has cautions, the summary, both figures, the cell table, sorted views, flagged labels and members', () => {
    const page = buildInspectReport(template, { source: 'crown.json' });
    expect(page.title).toBe('Template report: crown.json');
    expect(page.sections.map((s) => s.heading)).toEqual([
      'Cell positions',
      'Spread per cell',
      'Cells',
      'Sorted views',
      'Flagged hand labels',
      'Members',
    ]);
    expect(page.summary.find((f) => f.term === 'cells')?.value).toMatch(/^25 \(\d+ sparse: seen fewer than 5 times\)$/);
    expect(page.cautions.some((c) => c.includes('has not been measured'))).toBe(true);
    const byHeading = Object.fromEntries(page.sections.map((s) => [s.heading, s.html]));
    expect(byHeading['Cell positions']).toContain('<svg');
    expect(byHeading['Spread per cell']).toContain('<svg');
    expect((byHeading['Cells'].match(/<tr>/g) ?? []).length).toBe(1 + 25);
    expect((byHeading['Flagged hand labels'].match(/<tr>/g) ?? []).length).toBe(1 + 4);
    expect((byHeading['Members'].match(/<tr>/g) ?? []).length).toBe(1 + template.members.length);
  });

  it('quotes the measured accuracy when it is given', () => {
    const page = buildInspectReport(template, { accuracy: { accuracy: 0.91, points: 800, samples: 12, scheme: 'leave-one-out' } });
    expect(page.cautions.join(' ')).toContain('gave the right label to 91.0% of labelled points');
    expect(page.cautions.join(' ')).not.toContain('has not been measured');
  });

  it('says so when no hand label was flagged, and copes with a template without cells', () => {
    const empty = buildInspectReport(makeTemplate([], 3));
    expect(empty.sections.map((s) => s.heading)).toEqual(['Cells', 'Flagged hand labels', 'Members']);
    expect(empty.sections[1].html).toContain('No hand label was flagged');
  });

  it('renders to a well-formed self-contained page', () => {
    const html = renderInspectHtml(template, { source: 'crown.json' });
    expect(wellFormedProblems(html.replace('<!DOCTYPE html>', ''), { html: true })).toEqual([]);
    expect((html.match(/<svg /g) ?? []).length).toBe(2);
  });
});
