/**
 * Writes the invented demo scenario (docs/demo-scenario.md): 16 synthetic
 * glimmerkins, 12 partly hand-labelled and 4 unlabelled, from a fixed seed.
 *
 *   npx tsx scripts/make-demo-data.ts
 *
 * Outputs (all synthetic; rerunning gives byte-identical files):
 *   demo-data/labelled/<id>.csv     x,y,z,label,nuclear_intensity,nuclear_volume (40-80% labelled, a few wrong labels)
 *   demo-data/unlabelled/<id>.csv   same columns, label column empty
 *   test/fixtures/demo-truth/<id>.csv        x,y,z,true_label in the same row order (empty = outlier)
 *   test/fixtures/demo-truth/layout.json     the invented layout (cell names, positions, jitter covariances)
 *   test/fixtures/demo-truth/manifest.json   per-animal generation settings and counts
 */
import { mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createRng, randomNormal, type Rng } from '../src/random.js';
import type { Sample } from '../src/types.js';
import { generateAnimal, generateLayout, writeSampleCsv, type AnimalOptions } from '../test/support/animals.js';

const SEED = 61_150;
const CELLS = 150;
/** The glimmerkin crown: nuclei about 3 um apart, positional spread 0.5-1.2 um (SD per axis). */
const LAYOUT_OPTIONS = { cells: CELLS, dim: 3 as const, nearestSpacing: 3, jitterRange: [0.5, 1.2] as [number, number] };
/** Puts the animals in positive stage coordinates (um). */
const STAGE_OFFSET = [160, 120, 80];
const LABELLED = 12;
const UNLABELLED = 4;

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const demoDir = join(root, 'demo-data');
const truthDir = join(root, 'test', 'fixtures', 'demo-truth');

function uniform(rng: Rng, lo: number, hi: number): number {
  return lo + (hi - lo) * rng();
}

function round(v: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(v * f) / f;
}

function clearCsv(dir: string): void {
  mkdirSync(dir, { recursive: true });
  for (const name of readdirSync(dir)) if (name.endsWith('.csv')) rmSync(join(dir, name));
}

export interface DemoFile {
  /** Path relative to the repository root. */
  path: string;
  content: string;
}

/** What manifest.json records per animal. */
export interface ManifestEntry {
  id: string;
  file: string;
  seed: number;
  options: AnimalOptions;
  points: number;
  cellsPresent: number;
  cellsMissing: number;
  outliers: number;
  handLabels: number;
  /** Rows (1-based file lines) whose hand label is wrong, with the true label. */
  wrongHandLabels: { row: number; label: string | null; trueLabel: string | null }[];
  scale: number;
}

export interface DemoData {
  files: DemoFile[];
  /** One line per animal, for the console. */
  summary: string[];
}

/** Builds every demo and truth file in memory (pure: no file system access). */
export function buildDemoData(): DemoData {
  const files: DemoFile[] = [];
  const layoutRng = createRng(SEED);
  const layout = generateLayout(layoutRng, LAYOUT_OPTIONS);
  // Stereotyped per-cell nuclear brightness (log-uniform 300-1500, arbitrary units) and volume (18-45 um^3).
  const cellIntensity = layout.labels.map(() => Math.exp(uniform(layoutRng, Math.log(300), Math.log(1500))));
  const cellVolume = layout.labels.map(() => uniform(layoutRng, 18, 45));
  const cellIndex = new Map(layout.labels.map((l, i) => [l, i]));

  const manifest: ManifestEntry[] = [];
  for (let k = 0; k < LABELLED + UNLABELLED; k++) {
    const labelled = k < LABELLED;
    const id = `gk-${String(k + 1).padStart(2, '0')}`;
    const rng = createRng(SEED + 1000 + k);
    const options: AnimalOptions = {
      missingFraction: round(uniform(rng, 0.05, 0.2), 3),
      outlierFraction: round(uniform(rng, 0.1, 0.25), 3),
      clusteredOutlierShare: 0.5,
      scaleRange: 0.1,
      bend: 3,
      rotate: true,
      translate: 30,
      labelledFraction: labelled ? round(uniform(rng, 0.4, 0.8), 3) : 0,
      // About one hand label in thirty is wrong, none in a few animals.
      wrongLabelFraction: labelled ? (k % 4 === 3 ? 0 : 0.03) : 0,
    };
    const animal = generateAnimal(layout, rng, id, options);
    const gain = uniform(rng, 0.8, 1.25);
    const intensity: number[] = [];
    const volume: number[] = [];
    animal.truth.forEach((t) => {
      if (t === null) {
        intensity.push(round(uniform(rng, 80, 400), 1));
        volume.push(round(uniform(rng, 5, 80), 2));
      } else {
        const c = cellIndex.get(t) as number;
        intensity.push(round(cellIntensity[c] * gain * Math.exp(0.08 * randomNormal(rng)), 1));
        volume.push(round(cellVolume[c] * Math.exp(0.1 * randomNormal(rng)), 2));
      }
    });
    const coords = animal.sample.coords.map((p) => p.map((v, a) => v + STAGE_OFFSET[a]));
    const sample: Sample = {
      ...animal.sample,
      source: `${labelled ? 'labelled' : 'unlabelled'}/${id}.csv`,
      coords,
      features: { names: ['nuclear_intensity', 'nuclear_volume'], values: intensity.map((v, i) => [v, volume[i]]) },
    };
    files.push({ path: `demo-data/${sample.source}`, content: writeSampleCsv(sample, 3) });
    const truthCsv = writeSampleCsv(
      { ...sample, labels: animal.truth, features: { names: [], values: coords.map(() => []) } },
      3,
    ).replace(/^x,y,z,label\n/, 'x,y,z,true_label\n');
    files.push({ path: `test/fixtures/demo-truth/${id}.csv`, content: truthCsv });

    const handLabels = sample.labels.filter((l) => l !== null).length;
    const outliers = animal.truth.filter((t) => t === null).length;
    manifest.push({
      id,
      file: `demo-data/${sample.source}`,
      seed: SEED + 1000 + k,
      options,
      points: coords.length,
      cellsPresent: coords.length - outliers,
      cellsMissing: animal.missingCells.length,
      outliers,
      handLabels,
      wrongHandLabels: animal.wrongLabelPoints.map((i) => ({
        row: sample.rows[i],
        label: sample.labels[i],
        trueLabel: animal.truth[i],
      })),
      scale: round(animal.scale, 6),
    });
  }

  files.push({
    path: 'test/fixtures/demo-truth/layout.json',
    content: JSON.stringify(
      {
        note: 'Invented glimmerkin crown layout (synthetic, see docs/demo-scenario.md); layout frame, um.',
        seed: SEED,
        options: LAYOUT_OPTIONS,
        cells: layout.labels.map((label, i) => ({
          label,
          position: layout.positions[i].map((v) => round(v, 6)),
          jitterCovariance: layout.jitter[i].map((r) => r.map((v) => round(v, 6))),
        })),
      },
      null,
      1,
    ) + '\n',
  });
  files.push({
    path: 'test/fixtures/demo-truth/manifest.json',
    content:
      JSON.stringify(
        { note: 'Synthetic demo animals; generated by scripts/make-demo-data.ts.', seed: SEED, stageOffset: STAGE_OFFSET, animals: manifest },
        null,
        1,
      ) + '\n',
  });

  const lines = manifest.map((m) => {
    return `${m.id}: ${m.points} points, ${m.outliers} outliers, ${m.cellsMissing} cells missing, ${m.handLabels} hand labels (${m.wrongHandLabels.length} wrong)`;
  });
  return { files, summary: lines };
}

/** Writes the files, replacing any CSVs left from an earlier run. */
function main(): void {
  const { files, summary } = buildDemoData();
  clearCsv(join(demoDir, 'labelled'));
  clearCsv(join(demoDir, 'unlabelled'));
  clearCsv(truthDir);
  for (const f of files) {
    mkdirSync(dirname(join(root, f.path)), { recursive: true });
    writeFileSync(join(root, f.path), f.content);
  }
  process.stdout.write(
    `${summary.join('\n')}\nwrote ${LABELLED} labelled and ${UNLABELLED} unlabelled animals to demo-data/, truth to test/fixtures/demo-truth/\n`,
  );
}

if (process.argv[1] !== undefined && resolve(process.argv[1]) === fileURLToPath(import.meta.url)) main();
