// The main job on the shipped demo data (`npm run demo`, after `npm run build`):
// build a template from the labelled glimmerkin animals, cross-validate on them,
// inspect the template and propose labels for the unlabelled animals (both HTML
// pages quote the cross-validated accuracy). Everything goes to out/.
import { mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { main } from '../dist/cli/main.js';
import { accuracySummaryLines } from '../dist/cli/evaluate.js';

const root = fileURLToPath(new URL('..', import.meta.url));
const out = join(root, 'out');
const demo = join(root, 'demo-data');
const list = (dir) =>
  readdirSync(join(demo, dir))
    .filter((f) => f.endsWith('.csv'))
    .sort()
    .map((f) => join(demo, dir, f));
const labelled = list('labelled');
const unlabelled = list('unlabelled');

rmSync(out, { recursive: true, force: true });
mkdirSync(out, { recursive: true });

let stderrBuffer = '';
const quiet = { stdout: () => {}, stderr: (t) => (stderrBuffer += t) };
const captured = () => {
  const lines = [];
  return { io: { stdout: (t) => lines.push(t), stderr: (t) => (stderrBuffer += t) }, text: () => lines.join('') };
};

async function step(title, args, io = quiet) {
  const t0 = performance.now();
  const code = await main(['node', 'cairn', ...args], io);
  const seconds = (performance.now() - t0) / 1000;
  if (code !== 0) {
    process.stderr.write(stderrBuffer);
    process.stderr.write(`demo: "${title}" failed (exit ${code}): cairn ${args.join(' ')}\n`);
    process.exit(code);
  }
  stderrBuffer = '';
  process.stdout.write(`  ${title.padEnd(48)} ${seconds.toFixed(1)} s\n`);
}

const t0 = performance.now();
process.stdout.write('cairn demo: the invented glimmerkin crown (synthetic data in demo-data/)\n');
const template = join(out, 'template.json');
await step(`build a template from ${labelled.length} labelled animals`, ['build', ...labelled, '-o', template, '--seed', '1']);
// Cross-validation first, so that the template and proposal pages can quote the accuracy it measured.
const evaluation = captured();
const evaluationJson = join(out, 'evaluation.json');
await step('cross-validate on the labelled animals', [
  'evaluate', ...labelled, '--seed', '1', '--json', '--html', join(out, 'evaluation.html'),
], evaluation.io);
writeFileSync(evaluationJson, evaluation.text());
await step('inspect the template (table, figures, HTML)', [
  'inspect', template, '--csv', '--html', join(out, 'template.html'), '--accuracy-from', evaluationJson,
], { ...quiet });
await step(`propose labels for ${unlabelled.length} unlabelled animals`, [
  'match', template, ...unlabelled, '-o', join(out, 'proposals'), '--seed', '1', '--alternatives', '2',
  '--html', join(out, 'proposals.html'), '--accuracy-from', evaluationJson,
]);
process.stdout.write(`done in ${((performance.now() - t0) / 1000).toFixed(1)} s\n\n`);
process.stdout.write('How accurate the proposals were on these animals (leave-one-out cross-validation):\n');
for (const l of accuracySummaryLines(JSON.parse(evaluation.text()).report)) process.stdout.write(`  ${l}\n`);
process.stdout.write(`
Where to look:
  out/template.json        the template (per-cell mean, covariance, count; members; flagged hand labels)
  out/template.html        per-cell variability, figures and flagged hand labels
  out/proposals/           one CSV per unlabelled animal: input rows plus label, confidence, distance,
                           and the two next most probable labels with their probabilities
  out/proposals.html       the matched animals over the template, with confidences
  out/evaluation.html      cross-validated accuracy and calibration (out/evaluation.json: the same as JSON)

Proposed labels are proposals: a person must verify them before they are used.
`);
