/**
 * The HTML report in a real browser: Debian's chromium (/usr/bin/chromium,
 * installed by .ci/run) driven by playwright-core. Checks that every SVG
 * figure renders with a non-zero size, that nothing is logged as an error or
 * thrown, that the page asks for nothing beyond itself, and that clicking a
 * table heading sorts the table; writes test-output/report.png.
 *
 * When /usr/bin/chromium is missing the test FAILS (CI installs it); set
 * CAIRN_SKIP_BROWSER=1 to skip it deliberately.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdirSync, statSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser, type Page } from 'playwright-core';
import { buildInspectReport } from '../../src/report/inspect-report.js';
import { renderMatchHtml } from '../../src/report/match-report.js';
import { renderFigure, renderHtmlReport } from '../../src/report/html.js';
import { matchedSampleFigureSvg, type MatchedPoint } from '../../src/report/svg/matched-figure.js';
import { createRng, randomNormal } from '../../src/random.js';
import { testTemplate } from '../report/support/template.js';

// CAIRN_CHROMIUM may point elsewhere (for example to check the missing-browser failure); CI uses Debian's.
const CHROMIUM = process.env.CAIRN_CHROMIUM ?? '/usr/bin/chromium';
const skip = process.env.CAIRN_SKIP_BROWSER === '1';
const outDir = resolve('test-output');

/** An inspect page plus a matched-sample figure, so that every kind of figure is on it. */
function reportHtml(): string {
  const template = testTemplate({ cells: 40, flagged: 3 });
  const rng = createRng(5);
  const points: MatchedPoint[] = template.cells.slice(0, 32).map((c, i) => ({
    coords: c.mean.map((m) => m + 0.8 * randomNormal(rng)),
    label: i % 9 === 8 ? null : c.label,
    confidence: Math.min(1, 0.35 + 0.65 * rng()),
    name: `row ${i + 2}`,
  }));
  const page = buildInspectReport(template, { source: 'glimmerkin-crown.json' });
  return renderHtmlReport({
    ...page,
    sections: [
      ...page.sections,
      {
        heading: 'A matched sample',
        html: renderFigure(
          matchedSampleFigureSvg(template, { sampleId: 'gk-14', points }, { idPrefix: 'gk14' }),
          'Sample gk-14 in the template frame with proposed labels and confidences.',
        ),
      },
    ],
  });
}

/** A `cairn match` page: 13 matched samples, so 12 figures (each with its own id prefix) and a note. */
function matchHtml(): string {
  const template = testTemplate({ cells: 30, flagged: 0 });
  const rng = createRng(9);
  const figures = Array.from({ length: 13 }, (_, s) => ({
    sampleId: `gk-${20 + s}`,
    points: template.cells.map((c, i) => ({
      coords: c.mean.map((m) => m + 0.8 * randomNormal(rng)),
      label: i % 7 === 6 ? null : c.label,
      confidence: Math.min(1, 0.35 + 0.65 * rng()),
      name: `row ${i + 2}`,
    })),
  }));
  const rows = figures.map((f) => ({ id: f.sampleId, source: `${f.sampleId}.csv`, points: 30, proposed: 26, meanConfidence: 0.7, stopReason: 'converged', poseMargin: 42, error: null }));
  return renderMatchHtml({ template, templatePath: 'glimmerkin-crown.json', method: 'ransac', hitRadius: 3, seed: 1, rows, figures });
}

describe.skipIf(skip)('HTML report in headless Chromium', () => {
  let browser: Browser | undefined;
  let page: Page;
  const consoleErrors: string[] = [];
  const pageErrors: string[] = [];
  const requests: string[] = [];
  let fileUrl = '';

  beforeAll(async () => {
    if (!existsSync(CHROMIUM)) {
      throw new Error(
        `${CHROMIUM} is missing: install Debian's chromium package (apt-get install chromium; .ci/run does this), ` +
          'or set CAIRN_SKIP_BROWSER=1 to skip the browser test on purpose',
      );
    }
    mkdirSync(outDir, { recursive: true });
    const htmlPath = join(outDir, 'report.html');
    writeFileSync(htmlPath, reportHtml());
    fileUrl = pathToFileURL(htmlPath).href;
    // chromium.launch starts from a fresh temporary user-data-dir of its own and removes it on close.
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: [
        '--headless',
        '--no-sandbox',
        '--disable-gpu',
        '--disable-quic',
        '--no-first-run',
        '--disable-background-networking',
        '--disable-component-update',
        '--disable-sync',
      ],
    });
    page = await browser.newPage({ viewport: { width: 1200, height: 900 } });
    page.on('console', (m) => {
      if (m.type() === 'error') consoleErrors.push(m.text());
    });
    page.on('pageerror', (e) => pageErrors.push(e.message));
    page.on('request', (r) => requests.push(r.url()));
    await page.goto(fileUrl, { waitUntil: 'load' });
  });

  afterAll(async () => {
    await browser?.close();
  });

  it('renders every SVG figure with a non-zero size', async () => {
    const sizes = await page.$$eval('svg.cairn-figure', (svgs) =>
      svgs.map((s) => {
        const r = s.getBoundingClientRect();
        return { cls: s.getAttribute('class'), width: r.width, height: r.height, shapes: s.querySelectorAll('ellipse, circle, path, rect').length };
      }),
    );
    expect(sizes.map((s) => s.cls)).toEqual([
      'cairn-figure cairn-template-figure',
      'cairn-figure cairn-spread-chart',
      'cairn-figure cairn-matched-figure',
    ]);
    for (const s of sizes) {
      expect(s.width).toBeGreaterThan(100);
      expect(s.height).toBeGreaterThan(100);
      expect(s.shapes).toBeGreaterThan(10);
    }
    // The ellipses themselves are laid out (non-zero boxes), not just the svg elements.
    const ellipseBoxes = await page.$$eval('svg.cairn-template-figure g.cell ellipse', (els) =>
      els.map((e) => (e as SVGGraphicsElement).getBBox()).map((b) => b.width * b.height),
    );
    expect(ellipseBoxes).toHaveLength(3 * 40);
    expect(Math.min(...ellipseBoxes)).toBeGreaterThan(0);
  });

  it('shows the cautions at the top, visible without scrolling', async () => {
    const box = await page.locator('section.cautions').boundingBox();
    expect(box).not.toBeNull();
    expect(box!.y).toBeLessThan(200);
    expect(await page.locator('section.cautions').innerText()).toContain('a person must check every proposed label');
  });

  it('logs no console error, throws no page error, and requests nothing but itself', () => {
    expect(consoleErrors).toEqual([]);
    expect(pageErrors).toEqual([]);
    expect(requests).toEqual([fileUrl]);
  });

  it('sorts the cell table by a column when its heading is clicked, and reverses on a second click', async () => {
    const table = page.locator('#cells table.sortable');
    const heading = table.locator('th', { hasText: 'n' }).filter({ hasText: /^n$/ });
    const column = async () =>
      table.locator('tbody tr').evaluateAll((rows) => rows.map((r) => Number((r as HTMLTableRowElement).cells[1].getAttribute('data-value'))));
    const before = await column();
    expect(before).not.toEqual([...before].sort((a, b) => a - b)); // starts in another order (most variable first)
    await heading.locator('button').click();
    const up = await column();
    expect(up).toEqual([...before].sort((a, b) => a - b));
    expect(await heading.getAttribute('aria-sort')).toBe('ascending');
    await heading.locator('button').click();
    expect(await column()).toEqual([...before].sort((a, b) => b - a));
    expect(await heading.getAttribute('aria-sort')).toBe('descending');
    // Text columns sort by label.
    const labelHeading = table.locator('th').first();
    await labelHeading.locator('button').click();
    const labels = await table.locator('tbody tr').evaluateAll((rows) => rows.map((r) => (r as HTMLTableRowElement).cells[0].textContent ?? ''));
    expect(labels).toEqual([...labels].sort((a, b) => a.localeCompare(b, undefined, { numeric: true })));
  });

  it('renders a match page: twelve matched-sample figures with non-zero size, cautions first, no error, no request', async () => {
    const htmlPath = join(outDir, 'match-report.html');
    writeFileSync(htmlPath, matchHtml());
    const url = pathToFileURL(htmlPath).href;
    const p = await browser!.newPage({ viewport: { width: 1200, height: 900 } });
    const errors: string[] = [];
    const asked: string[] = [];
    p.on('console', (m) => {
      if (m.type() === 'error') errors.push(m.text());
    });
    p.on('pageerror', (e) => errors.push(e.message));
    p.on('request', (r) => asked.push(r.url()));
    await p.goto(url, { waitUntil: 'load' });
    const sizes = await p.$$eval('svg.cairn-matched-figure', (svgs) => svgs.map((s) => s.getBoundingClientRect()).map((r) => r.width * r.height));
    expect(sizes).toHaveLength(12);
    expect(Math.min(...sizes)).toBeGreaterThan(100 * 100);
    expect(await p.locator('section.cautions').innerText()).toContain('a person must check every proposed label');
    expect(await p.locator('body').innerText()).toContain('first 12 of 13 matched samples');
    await p.screenshot({ path: join(outDir, 'match-report.png'), fullPage: false });
    await p.close();
    expect(errors).toEqual([]);
    expect(asked).toEqual([url]);
  });

  it('writes a full-page screenshot to test-output/report.png', async () => {
    await page.evaluate(() => window.scrollTo(0, 0));
    const file = join(outDir, 'report.png');
    await page.screenshot({ path: file, fullPage: true });
    expect(statSync(file).size).toBeGreaterThan(20_000);
  });
});
