/**
 * `cairn add TEMPLATE SAMPLES... -o TEMPLATE2 [--refit]`: fold new labelled
 * samples into a template exactly (sufficient statistics), or re-run the
 * co-registration from all members with --refit. A sample whose content is
 * already a member changes nothing: when no sample is new (and no --refit),
 * the output is byte-identical to the input template, creation time included.
 *
 * Shape: read (src/io) -> addToTemplate (src/template) -> stamp -> write -> print.
 */
import type { Command } from 'commander';
import { readSamples } from '../io/sample-reader.js';
import { readTemplate, serializeTemplate } from '../io/template-file.js';
import { writeFileAtomic } from '../io/write.js';
import { addToTemplate } from '../template/index.js';
import { addTemplateOptions, buildOptionsFrom, renderSummaryText, stamped, summarise, type TemplateCommandOptions } from './build.js';
import type { CliIo, CommandRegistrar } from './main.js';

export interface AddCommandOptions extends TemplateCommandOptions {
  readonly refit?: boolean;
}

/** Run `add`. */
export function runAdd(templatePath: string, paths: readonly string[], o: AddCommandOptions, io: CliIo): void {
  const template = readTemplate(templatePath);
  const samples = readSamples(paths, { voxelSize: o.voxelSize });
  const r = addToTemplate(template, samples, { ...buildOptionsFrom(o), refit: o.refit });
  const unchanged = r.template === template;
  const out = unchanged ? template : stamped(r.template, o.timestamp);
  writeFileAtomic(o.output, serializeTemplate(out), { force: o.force, inputs: [templatePath, ...paths] });
  const s = summarise(o.output, out, r.flagged, r.skipped, [], null);
  if (o.json) {
    io.stdout(JSON.stringify({ ...s, added: r.added, alreadyMembers: r.alreadyMembers, refit: !!o.refit, unchanged }, null, 2) + '\n');
    return;
  }
  let lead = `cairn add: wrote ${o.output}: ${r.added.length} added${o.refit ? ' (refit from all members)' : ''}`;
  if (r.alreadyMembers.length > 0) lead += `, ${r.alreadyMembers.length} already member${r.alreadyMembers.length === 1 ? '' : 's'} (${r.alreadyMembers.join(', ')})`;
  if (unchanged) lead += '; template unchanged';
  if (o.quiet) return;
  io.stdout(renderSummaryText(lead, s, o.refit ? 'flagged' : 'newly flagged'));
}

/** Adds `add` to the program. */
export function registerAdd(program: Command, io: CliIo): void {
  addTemplateOptions(
    program
      .command('add')
      .description('fold new labelled samples into a template (already-known samples change nothing)')
      .argument('<template>', 'template file written by cairn build or cairn add')
      .argument('<samples...>', 'sample files (.csv or .json)')
      .option('--refit', 're-run co-registration from all members\' stored positions and the new samples'),
  ).action((template: string, samples: string[], opts: AddCommandOptions) => {
    runAdd(template, samples, opts, io);
  });
}
const _typed: CommandRegistrar = registerAdd;
void _typed;
