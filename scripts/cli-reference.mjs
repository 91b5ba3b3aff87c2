// The command reference (docs/cli.md) made from the CLI's own --help text.
import { createProgram } from '../dist/cli/main.js';

async function helpOf(args) {
  let text = '';
  const io = { stdout: (t) => (text += t), stderr: (t) => (text += t) };
  const { main } = await import('../dist/cli/main.js');
  await main(['node', 'cairn', ...args, '--help'], io);
  return text.trimEnd();
}

export async function cliReference() {
  const program = createProgram({ stdout: () => {}, stderr: () => {} });
  const names = program.commands.map((c) => c.name()).filter((n) => n !== 'help');
  let out = '# Command reference\n\n';
  out += 'Generated from `cairn --help` by `node scripts/make-cli-doc.mjs`; a test keeps it in step with the code.\n';
  out += 'Exit codes: 0 success, 1 bad input or a failed run, 2 bad usage.\n\n';
  out += '## cairn\n\n```\n' + (await helpOf([])) + '\n```\n';
  for (const name of names) out += `\n## cairn ${name}\n\n\`\`\`\n${await helpOf([name])}\n\`\`\`\n`;
  return out;
}
