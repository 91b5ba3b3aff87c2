/**
 * Extension: addToTemplate folding one new labelled sample into a template of
 * 200 members (150 cells, partial labels). Each run adds a different new
 * sample to the same 200-member template. For scale, the rebuild from all 201
 * samples that the exact update avoids is timed too.
 */
import { createRng } from '../../../src/random.js';
import { addToTemplate, buildTemplate } from '../../../src/template/index.js';
import { generateAnimal, generateLayout } from '../../support/animals.js';
import { peakRssMiB, timeRepeated } from '../harness.js';
import { PARTIAL } from './data.js';
import type { BenchCase, Measurement } from './types.js';

export const add200: BenchCase = {
  name: 'add-1-to-200',
  title: 'add: one sample into a 200-member template (150 cells, 3-D, partial labels)',
  run(ctx) {
    const repeats = ctx.quick ? 3 : 11;
    const rng = createRng(8200);
    const layout = generateLayout(rng, { cells: 150, dim: 3 });
    const members = Array.from({ length: 200 }, (_, i) => generateAnimal(layout, rng, `m${i + 1}`, PARTIAL).sample);
    const fresh = Array.from({ length: repeats + 2 }, (_, i) => generateAnimal(layout, rng, `new${i + 1}`, PARTIAL).sample);
    ctx.log('add-1-to-200: building the 200-member template');
    const template = buildTemplate(members).template;
    ctx.log(`add-1-to-200: timing addToTemplate, ${repeats} runs`);
    const add = timeRepeated((s: (typeof fresh)[number]) => addToTemplate(template, [s]), { repeats, warmup: 2, setup: (i) => fresh[i < 0 ? -1 - i : i + 2] });
    if (add.last.added.length !== 1) throw new Error(`add bench: expected one added sample, got ${add.last.added.length}`);
    const rebuildRuns = ctx.quick ? 1 : 3;
    ctx.log(`add-1-to-200: timing the full rebuild from 201 samples, ${rebuildRuns} runs`);
    const rebuild = timeRepeated((s: (typeof fresh)[number]) => buildTemplate([...members, s]), { repeats: rebuildRuns, warmup: 0, setup: (i) => fresh[i + 2] });
    const measurements: Measurement[] = [
      { variant: 'cairn addToTemplate (exact update)', stats: add.stats, peakRssMiB: peakRssMiB(), memorySource: 'ru_maxrss of the case process (includes building the template)' },
      { variant: 'cairn buildTemplate from all 201 (for scale)', stats: rebuild.stats, peakRssMiB: peakRssMiB(), memorySource: 'ru_maxrss of the case process (includes building the template)' },
    ];
    return {
      name: this.name,
      title: this.title,
      measurements,
      ratios: [{ name: 'rebuild from 201 / add one', value: rebuild.stats.median / add.stats.median }],
      notes: ['partial: 15% of cells missing, 20% outliers, 60% of the cells labelled, 1% of labels swapped'],
    };
  },
};
