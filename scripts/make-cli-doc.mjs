// Writes docs/cli.md from the `--help` output of the built CLI (run after `npm run build`):
//   node scripts/make-cli-doc.mjs
// test/docs/cli-doc.test.ts checks that docs/cli.md matches the current help text.
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { cliReference } from './cli-reference.mjs';

const target = fileURLToPath(new URL('../docs/cli.md', import.meta.url));
writeFileSync(target, await cliReference());
process.stdout.write(`wrote ${target}\n`);
