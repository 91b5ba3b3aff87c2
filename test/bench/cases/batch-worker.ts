/**
 * Fallback worker for the batch case when `cairn match` is not available:
 * regenerates the batch's seeded data, reads the template file the batch case
 * wrote, matches samples [from, to) in this process and prints the in-process
 * time as JSON. Usage (spawned by cases/batch.ts):
 *   tsx batch-worker.ts TEMPLATE.json COUNT SEED FROM TO
 */
import { readFileSync } from 'node:fs';
import { parseTemplate } from '../../../src/io/index.js';
import { matchSample } from '../../../src/match/match-sample.js';
import { createRng } from '../../../src/random.js';
import { batchAnimals } from './batch-data.js';

const [file, count, seed, from, to] = process.argv.slice(2);
const template = parseTemplate(readFileSync(file, 'utf8'), file);
const animals = batchAnimals(Number(count), Number(seed));
const t0 = performance.now();
for (let i = Number(from); i < Number(to); i++) matchSample(template, animals[i].sample, { rng: createRng(1 + i) });
process.stdout.write(`${JSON.stringify({ ms: performance.now() - t0, maxRssMiB: process.resourceUsage().maxRSS / 1024 })}\n`);
