/**
 * Figure: reliability diagram of proposal confidences (DeGroot & Fienberg
 * 1983; Guo et al. 2017, Fig. 1): for each confidence bin, the observed
 * fraction of correct proposals against the bin's mean confidence, with the
 * diagonal of perfect calibration. Bar areas are not used; each bin is a
 * marker whose size grows with the number of proposals in it.
 */
import { UsageError } from '../../errors.js';
import { colourAt } from '../colour.js';
import { escapeXml, fixed, px, svgOpen } from './common.js';

export interface ReliabilityBin {
  readonly lower: number;
  readonly upper: number;
  readonly count: number;
  readonly meanConfidence: number;
  readonly accuracy: number;
}

/** Reliability diagram as an SVG string. Throws UsageError when no bin holds a proposal. */
export function reliabilityFigureSvg(bins: readonly ReliabilityBin[], ece: number): string {
  const total = bins.reduce((s, b) => s + b.count, 0);
  if (total === 0) throw new UsageError('reliabilityFigureSvg: no proposals to draw');
  const size = 260, left = 56, top = 40, width = left + size + 170, height = top + size + 52;
  const x = (v: number) => left + v * size;
  const y = (v: number) => top + size - v * size;
  const parts: string[] = [
    svgOpen(width, height, 'Reliability of confidences', 'Observed accuracy of proposals against their stated confidence, per confidence bin; the diagonal is perfect calibration.', 'reliability'),
    `<text x="${left}" y="20" font-size="12" font-weight="bold">Confidence against observed accuracy</text>`,
    `<rect x="${left}" y="${top}" width="${size}" height="${size}" fill="none" stroke="#888"/>`,
    `<line x1="${x(0)}" y1="${y(0)}" x2="${x(1)}" y2="${y(1)}" stroke="#999" stroke-dasharray="4 3"/>`,
  ];
  for (let t = 0; t <= 1.0001; t += 0.2) {
    parts.push(`<text x="${px(x(t))}" y="${top + size + 14}" text-anchor="middle">${fixed(t, 1)}</text>`);
    parts.push(`<text x="${left - 6}" y="${px(y(t) + 4)}" text-anchor="end">${fixed(t, 1)}</text>`);
  }
  parts.push(`<text x="${left + size / 2}" y="${top + size + 32}" text-anchor="middle">stated confidence (bin mean)</text>`);
  parts.push(`<text transform="translate(16 ${top + size / 2}) rotate(-90)" text-anchor="middle">observed fraction correct</text>`);
  const colour = colourAt('cividis', 0.15);
  const points: string[] = [];
  for (const b of bins) {
    if (b.count === 0) continue;
    const r = 2.5 + 7 * Math.sqrt(b.count / total);
    const cx = x(b.meanConfidence), cy = y(b.accuracy);
    points.push(`${px(cx)},${px(cy)}`);
    parts.push(
      `<circle cx="${px(cx)}" cy="${px(cy)}" r="${px(r)}" fill="${colour}" fill-opacity="0.75"><title>${escapeXml(
        `confidence ${fixed(b.lower, 1)}-${fixed(b.upper, 1)}: ${b.count} proposals, mean confidence ${fixed(b.meanConfidence, 3)}, ${fixed(100 * b.accuracy, 1)}% correct`,
      )}</title></circle>`,
    );
  }
  parts.push(`<polyline points="${points.join(' ')}" fill="none" stroke="${colour}" stroke-width="1.2"/>`);
  const lx = left + size + 18;
  parts.push(`<text x="${lx}" y="${top + 10}" font-weight="bold">Legend</text>`);
  parts.push(`<circle cx="${lx + 6}" cy="${top + 28}" r="5" fill="${colour}" fill-opacity="0.75"/><text x="${lx + 16}" y="${top + 32}">confidence bin</text>`);
  parts.push(`<text x="${lx + 16}" y="${top + 46}">(area ~ proposals)</text>`);
  parts.push(`<line x1="${lx}" y1="${top + 64}" x2="${lx + 12}" y2="${top + 64}" stroke="#999" stroke-dasharray="4 3"/><text x="${lx + 16}" y="${top + 68}">perfect calibration</text>`);
  parts.push(`<text x="${lx}" y="${top + 96}">ECE = ${fixed(ece, 3)}</text>`);
  parts.push(`<text x="${lx}" y="${top + 112}">${total} proposals</text>`);
  parts.push('</svg>');
  return parts.join('');
}
