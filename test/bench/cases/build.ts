/**
 * Template building: buildTemplate at three sizes, and on 200 x 150 complete
 * configurations the peer R shapes::procGPA (same data, matched tolerance),
 * with the difference between the two mean shapes.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { applyTransform, fitRigid } from '../../../src/geometry/index.js';
import { buildTemplate, DEFAULT_SETTINGS, type BuildOptions } from '../../../src/template/index.js';
import type { Sample } from '../../../src/types.js';
import { peakRssMiB, spawnMeasured, summarize, timeRepeated } from '../harness.js';
import { buildData } from './data.js';
import { hasRShapes, missingReason, RSCRIPT } from './peers.js';
import type { BenchCase, Measurement, Ratio } from './types.js';

function centred(points: readonly (readonly number[])[]): number[][] {
  const d = points[0].length;
  const c = new Array<number>(d).fill(0);
  for (const p of points) for (let a = 0; a < d; a++) c[a] += p[a] / points.length;
  return points.map((p) => p.map((v, a) => v - c[a]));
}

/** Centroid size: sqrt of the summed squared distances to the centroid (Dryden & Mardia 2016, eq. 2.1). */
function centroidSize(points: readonly (readonly number[])[]): number {
  return Math.sqrt(centred(points).reduce((s, p) => s + p.reduce((u, v) => u + v * v, 0), 0));
}

/**
 * RMS distance (um) between two mean shapes after scaling `other` to the centroid
 * size of `ours` and a rotation + translation fit of `other` onto `ours`.
 */
export function meanShapeDifference(ours: readonly (readonly number[])[], other: readonly (readonly number[])[]): number {
  const a = centred(ours);
  const s = centroidSize(ours) / centroidSize(other);
  const b = centred(other).map((p) => p.map((v) => v * s));
  const fitted = applyTransform(fitRigid(b, a).transform, b);
  return Math.sqrt(fitted.reduce((t, p, i) => t + p.reduce((u, v, j) => u + (v - a[i][j]) ** 2, 0), 0) / a.length);
}

function meansByLabel(cells: readonly { label: string; mean: readonly number[] }[], order: readonly string[]): number[][] {
  const m = new Map(cells.map((c) => [c.label, c.mean]));
  return order.map((l) => {
    const v = m.get(l);
    if (!v) throw new Error(`build bench: cell ${l} missing from the template`);
    return v.slice();
  });
}

function timeBuild(samples: Sample[], repeats: number, options: BuildOptions = {}) {
  // Warm the JIT on a small build, then time the full one.
  buildTemplate(samples.slice(0, 10), options);
  return timeRepeated(() => buildTemplate(samples, options), { repeats, warmup: 0, setup: () => undefined });
}

function sizeCase(name: string, cells: number, members: number, labels: 'complete' | 'partial', repeats: [number, number]): BenchCase {
  return {
    name,
    title: `build: ${members} samples x ${cells} cells, 3-D, ${labels} labels`,
    run(ctx) {
      const n = ctx.quick ? repeats[1] : repeats[0];
      const { samples } = buildData(cells, members, labels, 7000 + cells + members);
      ctx.log(`${name}: timing buildTemplate, ${n} runs`);
      const { stats, last } = timeBuild(samples, n);
      const measurements: Measurement[] = [
        {
          variant: 'cairn buildTemplate (defaults)',
          stats,
          peakRssMiB: peakRssMiB(),
          memorySource: 'ru_maxrss of the case process',
          extra: { iterations: String(last.iterations.length), converged: String(last.converged), flagged: String(last.flagged.length) },
        },
      ];
      return {
        name,
        title: this.title,
        measurements,
        ratios: [],
        notes: [labels === 'partial' ? 'partial: 15% of cells missing, 20% outliers, 60% of the cells labelled, 1% of labels swapped' : 'complete: every cell detected and labelled, no outliers'],
      };
    },
  };
}

export const build50: BenchCase = sizeCase('build-50x150', 150, 50, 'partial', [7, 2]);
export const build1000: BenchCase = sizeCase('build-1000x300', 300, 1000, 'partial', [3, 1]);

export const build200: BenchCase = {
  name: 'build-200x150',
  title: 'build: 200 samples x 150 cells, 3-D, complete labels; peer R shapes::procGPA',
  run(ctx) {
    const repeats = ctx.quick ? 2 : 5;
    const { layout, samples } = buildData(150, 200, 'complete', 7350);
    const notes: string[] = ['complete: every cell detected and labelled, no outliers (procGPA needs complete configurations)'];
    ctx.log(`build-200x150: timing buildTemplate, ${repeats} runs`);
    const ours = timeBuild(samples, repeats);
    const rssOurs = peakRssMiB();
    const gpaOptions: BuildOptions = { robust: 'none', memberFit: 'sample-to-template' };
    ctx.log(`build-200x150: timing buildTemplate with ordinary-GPA settings, ${repeats} runs`);
    const plain = timeBuild(samples, repeats, gpaOptions);
    const order = layout.labels;
    const oursMeans = meansByLabel(ours.last.template.cells, order);
    const plainMeans = meansByLabel(plain.last.template.cells, order);
    const rmsRadius = centroidSize(oursMeans) / Math.sqrt(oursMeans.length);
    const tolerance = DEFAULT_SETTINGS.tolerance;
    const measurements: Measurement[] = [
      {
        variant: 'cairn buildTemplate (defaults: trimmed, template-to-sample)',
        stats: ours.stats,
        peakRssMiB: rssOurs,
        memorySource: 'ru_maxrss of the case process',
        extra: { iterations: String(ours.last.iterations.length), 'tolerance (um RMS)': String(tolerance) },
      },
      {
        variant: 'cairn buildTemplate (ordinary GPA: robust none, sample-to-template)',
        stats: plain.stats,
        peakRssMiB: peakRssMiB(),
        memorySource: 'ru_maxrss of the case process (both cairn variants)',
        extra: { iterations: String(plain.last.iterations.length), 'mean shape vs defaults (um RMS)': meanShapeDifference(oursMeans, plainMeans).toFixed(4) },
      },
    ];
    const ratios: Ratio[] = [];
    if (!hasRShapes()) {
      notes.push(`R shapes::procGPA skipped: ${missingReason(`${RSCRIPT} with library(shapes)`)}`);
      return { name: this.name, title: this.title, measurements, ratios, notes };
    }
    const file = path.join(ctx.tmp, 'build-200x150.csv');
    const lines = ['sample,cell,x,y,z'];
    for (const s of samples) {
      const byLabel = new Map(s.labels.map((l, i) => [l, s.coords[i]]));
      for (const l of order) {
        const p = byLabel.get(l);
        if (!p) throw new Error(`build bench: sample ${s.id} lacks cell ${l}`);
        lines.push(`${s.id},${l},${p.map((v) => v.toPrecision(17)).join(',')}`);
      }
    }
    writeFileSync(file, lines.join('\n') + '\n');
    // cairn stops when the consensus moves < tolerance um RMS per cell; procGPA when its objective,
    // mean squared distance to the mean divided by the mean's squared centroid size, drops by < tol.
    // A move of delta um RMS per cell is (delta / r)^2 in those units (r = RMS radius of the mean).
    const tolR = (tolerance / rmsRadius) ** 2;
    for (const [label, tol, peerRuns] of [
      ['matched tolerance', tolR, ctx.quick ? 1 : 3],
      ['procGPA default tolerance', 1e-5, 1],
    ] as const) {
      ctx.log(`build-200x150: R shapes::procGPA, ${label} ${tol.toExponential(3)}, ${peerRuns} runs`);
      const prefix = path.join(ctx.tmp, `procgpa-${tol === 1e-5 ? 'default' : 'matched'}`);
      const r = spawnMeasured(RSCRIPT, [path.join(ctx.root, 'test/bench/peers/procgpa.R'), file, String(tol), String(peerRuns), prefix], {
        timeFile: `${prefix}-gnutime.txt`,
      });
      if (r.status !== 0) {
        notes.push(`R shapes::procGPA (${label}) failed with status ${r.status}: ${r.stderr.trim().split('\n').slice(-3).join(' / ')}`);
        continue;
      }
      const times = readFileSync(`${prefix}-times.txt`, 'utf8').trim().split('\n').map(Number);
      const mshape = readFileSync(`${prefix}-mshape.csv`, 'utf8').trim().split('\n').slice(1).map((l) => l.split(',').map(Number));
      const diff = meanShapeDifference(oursMeans, mshape);
      const diffPlain = meanShapeDifference(plainMeans, mshape);
      const stats = summarize(times);
      measurements.push({
        variant: `R shapes::procGPA (${label}, tol1 = tol2 = ${tol.toExponential(2)})`,
        stats,
        wall: summarize([r.wallMs]),
        peakRssMiB: r.peakRssMiB,
        memorySource: '/usr/bin/time -v of the Rscript process',
        extra: {
          version: r.stdout.trim(),
          'process start-up, loading shapes and reading the CSV (wall minus the timed runs)': `${((r.wallMs - times.reduce((x, y) => x + y, 0)) / 1000).toFixed(2)} s`,
          'mean shape vs cairn defaults (um RMS)': diff.toExponential(2),
          'vs cairn ordinary GPA (um RMS)': diffPlain.toExponential(2),
          'template RMS radius (um)': rmsRadius.toFixed(2),
        },
      });
      const ratio = stats.median / ours.stats.median;
      ratios.push({
        name: `procGPA (${label}) / cairn build, 200 x 150 x 3`,
        value: ratio,
        ...(label === 'matched tolerance' ? { target: '>= 50x', met: ratio >= 50 } : {}),
      });
      ratios.push({ name: `procGPA (${label}) / cairn ordinary-GPA build`, value: stats.median / plain.stats.median });
    }
    notes.push(
      `tolerance: cairn ${tolerance} um RMS consensus move; procGPA's tol is on its size-normalised objective, matched as (tol / r)^2 with r = ${rmsRadius.toFixed(2)} um, the RMS radius of the mean`,
      'mean shapes compared after scaling procGPA\'s (unit-size convention) to cairn\'s centroid size and a rotation + translation fit',
      'procGPA called with distances = FALSE, pcaoutput = FALSE (the fit only); R time measured inside R (proc.time), wall time includes R start-up, loading shapes and reading the CSV',
    );
    return { name: this.name, title: this.title, measurements, ratios, notes };
  },
};
