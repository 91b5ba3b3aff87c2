/**
 * Power and false discovery rate of `cairn compare` on synthetic templates:
 * 40 cells, 5 displaced by a fixed length in random directions, N animals per
 * group, jitter standard deviations (2.5, 1.75, 1) um along random axes (x a
 * per-cell factor in [0.8, 1.2]), B in a randomly rotated, translated and
 * scaled frame. Prints one line per setting.
 *
 * Run: npx tsx test/bench/compare-power.ts [replicates]
 */
import { simulatePower } from '../compare/power.js';

const replicates = Number(process.argv[2] ?? 200);
const rows: string[] = [
  'form\tcovariance\talignment_uncertainty\tanimals\tdisplacement_um\treplicates\tpower\tfdr\tfwer\tnull_p<0.05\tnull_mean_p\tdisplaced_excluded',
];
interface Setting {
  form: 'unequal' | 'pooled';
  covariance: 'template' | 'sample';
  alignmentUncertainty: boolean;
  animals: number;
  displacement: number;
}
const defaults: Setting = { form: 'unequal', covariance: 'template', alignmentUncertainty: true, animals: 20, displacement: 2 };
const settings: Setting[] = [
  defaults,
  { ...defaults, covariance: 'sample' },
  { ...defaults, form: 'pooled' },
  { ...defaults, alignmentUncertainty: false },
  { ...defaults, covariance: 'sample', alignmentUncertainty: false },
  { ...defaults, displacement: 0 },
  { ...defaults, covariance: 'sample', displacement: 0 },
  { ...defaults, animals: 10 },
  { ...defaults, animals: 40 },
  { ...defaults, displacement: 4 },
];
for (const s of settings) {
  const r = simulatePower({
    replicates,
    cells: 40,
    displacedCells: s.displacement > 0 ? 5 : 0,
    displacement: s.displacement,
    animals: s.animals,
    sd: [2.5, 1.75, 1],
    alpha: 0.05,
    seed: 20261201,
    options: { form: s.form, covariance: s.covariance, alignmentUncertainty: s.alignmentUncertainty },
  });
  const f = (x: number): string => (Number.isFinite(x) ? x.toFixed(3) : 'NA');
  rows.push(
    [s.form, s.covariance, s.alignmentUncertainty, s.animals, s.displacement, replicates, f(r.power), f(r.fdr), f(r.familywiseError), f(r.nullRejectionAt05), f(r.nullMeanP), f(r.displacedExcludedFraction)].join('\t'),
  );
  process.stdout.write(rows[rows.length - 1] + '\n');
}
