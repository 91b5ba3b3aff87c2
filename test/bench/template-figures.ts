/**
 * Figures for the template stage, on seeded synthetic animals with known truth
 * (test/support/animals.ts). Run: npx tsx test/bench/template-figures.ts [--quick]
 *
 * 1. Template mean error against the truth (um RMS over cells) as the number of
 *    samples grows (5, 10, 20, 40): template means vs the layout's positions after
 *    the least-squares similarity (and after a rigid fit, which also shows size).
 * 2. Recall and precision of the hand-label check at 1% and 2% of labels swapped
 *    between neighbouring cells.
 * 3. Coverage of held-out animals' positions by the predictive covariance
 *    (1 + 1/n) Sigma and by Sigma alone, at nominal 95% and 99%.
 * 4. Build time for 200 samples x 150 cells in 3-D.
 */
import { cpus, loadavg } from 'node:os';
import { applyTransform, fitRigid, fitSimilarity, gaussianLogDensity, mahalanobisSquared, precisionMatrix } from '../../src/geometry/index.js';
import { createRng } from '../../src/random.js';
import { buildTemplate, predictiveCovariance } from '../../src/template/index.js';
import { chiSquareQuantile } from '../../src/stats/index.js';
import { fitMemberMap } from '../../src/template/co-register.js';
import { predictiveCutoff } from '../../src/template/cell-statistics.js';
import type { Sample, Template } from '../../src/types.js';
import { generateAnimal, generateLayout, type Layout, type AnimalOptions } from '../support/animals.js';

const quick = process.argv.includes('--quick');
const onlyArg = process.argv.find((a) => a.startsWith('--only='));
const only = onlyArg ? Number(onlyArg.slice(7)) : 0;
const want = (section: number) => only === 0 || only === section;
const seeds = quick ? [1] : [1, 2, 3];

const animalDefaults: AnimalOptions = { labelledFraction: 0.6, missingFraction: 0.15, outlierFraction: 0.2 };

function rmsError(template: Template, layout: Layout): { similarity: number; rigid: number } {
  const idx = new Map(layout.labels.map((l, i) => [l, i]));
  const ours = template.cells.map((c) => c.mean);
  const truth = template.cells.map((c) => layout.positions[idx.get(c.label) as number]);
  const rms = (a: number[][]) => Math.sqrt(a.reduce((s, p, k) => s + p.reduce((u, v, j) => u + (v - truth[k][j]) ** 2, 0), 0) / a.length);
  return {
    similarity: rms(applyTransform(fitSimilarity(ours, truth).transform, ours)),
    rigid: rms(applyTransform(fitRigid(ours, truth).transform, ours)),
  };
}

function mean(v: number[]): number {
  return v.reduce((a, b) => a + b, 0) / v.length;
}

// 1. Mean error vs number of samples.
if (want(1)) {
console.log('1. template mean error vs truth (3-D, 190 cells, 60% labelled, 15% missing, 20% outliers, 1% swapped labels; mean of', seeds.length, 'seeds)');
console.log('   N   RMS after similarity (um)   RMS after rigid (um)   per-cell jitter sd 1-3 um');
for (const n of [5, 10, 20, 40]) {
  const sim: number[] = [], rig: number[] = [];
  for (const seed of seeds) {
    const rng = createRng(1000 + seed);
    const layout = generateLayout(rng, { dim: 3 });
    const samples = Array.from({ length: n }, (_, i) => generateAnimal(layout, rng, `a${i}`, { ...animalDefaults, wrongLabelFraction: 0.01 }).sample);
    const e = rmsError(buildTemplate(samples).template, layout);
    sim.push(e.similarity);
    rig.push(e.rigid);
  }
  console.log(`  ${String(n).padStart(2)}   ${mean(sim).toFixed(3).padStart(10)}                 ${mean(rig).toFixed(3).padStart(10)}`);
}

}

// 2. Hand-label check recall / precision.
if (want(2)) {
console.log('\n2. hand-label check (flagProbability 0.001), swaps between neighbouring cells (about 2 um apart, jitter sd 1-3 um); summed over', seeds.length, 'seeds');
console.log('   reference    swapped   N   wrong labels   flagged   true flags   recall   precision   false flags per 1000 correct labels');
for (const flagReference of ['student-t', 'chi-square'] as const) {
  for (const wrong of [0.01, 0.02]) {
    for (const n of [20, 40]) {
      let nWrong = 0, nFlag = 0, nTrue = 0, nLabelled = 0;
      for (const seed of seeds) {
        const rng = createRng(2000 + seed);
        const layout = generateLayout(rng, { dim: 3 });
        const animals = Array.from({ length: n }, (_, i) => generateAnimal(layout, rng, `a${i}`, { ...animalDefaults, wrongLabelFraction: wrong }));
        const wrongSet = new Set<string>();
        for (const a of animals) for (const i of a.wrongLabelPoints) wrongSet.add(`${a.sample.id}:${a.sample.rows[i]}`);
        for (const a of animals) nLabelled += a.sample.labels.filter((l) => l !== null).length;
        const r = buildTemplate(animals.map((a) => a.sample), { flagReference });
        nWrong += wrongSet.size;
        nFlag += r.flagged.length;
        nTrue += r.flagged.filter((f) => wrongSet.has(`${f.sample}:${f.row}`)).length;
      }
      const fpRate = (1000 * (nFlag - nTrue)) / (nLabelled - nWrong);
      console.log(`   ${flagReference.padEnd(10)}   ${(wrong * 100).toFixed(0)}%       ${String(n).padStart(2)}   ${String(nWrong).padStart(12)}   ${String(nFlag).padStart(7)}   ${String(nTrue).padStart(10)}   ${(nTrue / nWrong).toFixed(3)}    ${nFlag ? (nTrue / nFlag).toFixed(3) : '-'}       ${fpRate.toFixed(2)}`);
    }
  }
}
// Far swaps (cells at least 15 um apart) for contrast: what the check can see.
console.log('   far swaps (2% of labels swapped with a cell >= 15 um away), N = 20, Student-t reference:');
{
  let nWrong = 0, nFlag = 0, nTrue = 0;
  for (const seed of seeds) {
    const rng = createRng(2500 + seed);
    const layout = generateLayout(rng, { dim: 3 });
    const wrongSet = new Set<string>();
    const samples = Array.from({ length: 20 }, (_, i) => {
      const a = generateAnimal(layout, rng, `a${i}`, { ...animalDefaults, wrongLabelFraction: 0 });
      const labels = a.sample.labels.slice();
      const labelled = labels.map((l, k) => (l === null ? -1 : k)).filter((k) => k >= 0);
      const pos = (k: number) => layout.positions[layout.labels.indexOf(labels[k] as string)];
      const swaps = Math.max(1, Math.round((0.02 * labelled.length) / 2));
      const used = new Set<number>();
      for (let s = 0; s < swaps; s++) {
        const p = labelled[Math.floor(rng() * labelled.length)];
        if (used.has(p)) continue;
        const far = labelled.filter((q) => !used.has(q) && q !== p && Math.hypot(...pos(p).map((v, j) => v - pos(q)[j])) >= 15);
        if (far.length === 0) continue;
        const q = far[Math.floor(rng() * far.length)];
        [labels[p], labels[q]] = [labels[q], labels[p]];
        used.add(p).add(q);
        wrongSet.add(`a${i}:${a.sample.rows[p]}`).add(`a${i}:${a.sample.rows[q]}`);
      }
      return { ...a.sample, labels };
    });
    const r = buildTemplate(samples);
    nWrong += wrongSet.size;
    nFlag += r.flagged.length;
    nTrue += r.flagged.filter((f) => wrongSet.has(`${f.sample}:${f.row}`)).length;
  }
  console.log(`     wrong ${nWrong}, flagged ${nFlag}, true flags ${nTrue}: recall ${(nTrue / nWrong).toFixed(3)}, precision ${(nTrue / nFlag).toFixed(3)}`);
}

}

// 3. Predictive coverage on held-out animals.
if (want(3)) {
console.log('\n3. coverage of held-out animals\' correctly labelled positions (leave-one-animal-out, N = 20 training, 3-D, 190 cells, no swapped labels)');
{
  const rng = createRng(3001);
  const layout = generateLayout(rng, { dim: 3 });
  const animals = Array.from({ length: 21 + (quick ? 2 : 9) }, (_, i) => generateAnimal(layout, rng, `a${i}`, { ...animalDefaults, wrongLabelFraction: 0 }).sample);
  const levels = [0.95, 0.99];
  const heldOut = animals.slice(20);
  const training = animals.slice(0, 20);
  for (const priorStrength of [1, 2, 5, 10, 20]) {
    const inPred = levels.map(() => 0), inPlain = levels.map(() => 0), inT = levels.map(() => 0);
    let total = 0, logDensity = 0;
    const { template } = buildTemplate(training, { priorStrength });
    const byLabel = new Map(template.cells.map((c) => [c.label, c]));
    for (const held of heldOut) {
      const idx = held.labels.map((l, i) => (l !== null && byLabel.has(l) ? i : -1)).filter((i) => i >= 0);
      const t = fitMemberMap('similarity', idx.map((i) => held.coords[i]), idx.map((i) => byLabel.get(held.labels[i] as string)!.mean), 'template-to-sample');
      const y = applyTransform(t, idx.map((i) => held.coords[i]));
      idx.forEach((i, j) => {
        const cell = byLabel.get(held.labels[i] as string)!;
        const dPred = mahalanobisSquared(y[j], cell.mean, precisionMatrix(predictiveCovariance(cell)));
        const dPlain = mahalanobisSquared(y[j], cell.mean, precisionMatrix(cell.covariance));
        logDensity += gaussianLogDensity(y[j], cell.mean, predictiveCovariance(cell));
        levels.forEach((p, k) => {
          const q = chiSquareQuantile(p, 3);
          if (dPred <= q) inPred[k]++;
          if (dPlain <= q) inPlain[k]++;
          if (dPred <= predictiveCutoff(cell.count, 3, priorStrength, 1 - p)) inT[k]++;
        });
        total++;
      });
    }
    console.log(`   priorStrength ${priorStrength}: ${heldOut.length} held-out animals, ${total} positions, mean Gaussian predictive log density ${(logDensity / total).toFixed(3)}`);
    levels.forEach((p, k) =>
      console.log(
        `     nominal ${p}: Gaussian (1 + 1/n) Sigma covers ${(inPred[k] / total).toFixed(3)}, Sigma alone ${(inPlain[k] / total).toFixed(3)}, Student-t predictive ${(inT[k] / total).toFixed(3)}`,
      ),
    );
  }
}

}

// 4. Build time.
if (want(4)) {
console.log('\n4. build time, 200 samples x 150 cells, 3-D (60% labelled, 15% missing, 20% outliers, 1% swapped)');
{
  const rng = createRng(4001);
  const layout = generateLayout(rng, { dim: 3, cells: 150 });
  const samples: Sample[] = Array.from({ length: 200 }, (_, i) => generateAnimal(layout, rng, `a${i}`, { ...animalDefaults, wrongLabelFraction: 0.01 }).sample);
  buildTemplate(samples.slice(0, 20)); // warm up the JIT
  const runs = quick ? 1 : 3;
  const times: number[] = [], cpu: number[] = [];
  let last = buildTemplate(samples.slice(0, 2));
  for (let r = 0; r < runs; r++) {
    const t0 = process.hrtime.bigint();
    const c0 = process.cpuUsage();
    last = buildTemplate(samples);
    const c1 = process.cpuUsage(c0);
    times.push(Number(process.hrtime.bigint() - t0) / 1e6);
    cpu.push((c1.user + c1.system) / 1e3);
  }
  const obs = last.template.cells.reduce((s, c) => s + c.count, 0);
  console.log(`   ${times.map((t) => (t / 1000).toFixed(2)).join(' s, ')} s (${runs} run${runs === 1 ? '' : 's'}); ${last.iterations.length} iterations, converged ${last.converged}, ${obs} kept observations, ${last.flagged.length} flagged`);
  console.log(`   CPU time ${cpu.map((t) => (t / 1000).toFixed(2)).join(' s, ')} s; node ${process.version}, single thread; load average ${loadavg()[0].toFixed(1)} on ${cpus().length} CPUs`);
}
}
