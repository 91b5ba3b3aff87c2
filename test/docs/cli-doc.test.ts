import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';

describe('docs/cli.md', () => {
  it('is exactly the current --help text of every command (regenerate: node scripts/make-cli-doc.mjs)', async () => {
    // Uses the build from `npm test` (npm run build runs first).
    // @ts-expect-error: plain JavaScript module without type declarations
    const { cliReference } = (await import('../../scripts/cli-reference.mjs')) as { cliReference: () => Promise<string> };
    const doc = readFileSync(new URL('../../docs/cli.md', import.meta.url), 'utf8');
    expect(doc).toBe(await cliReference());
  });

  it('lists every command the README describes', () => {
    const doc = readFileSync(new URL('../../docs/cli.md', import.meta.url), 'utf8');
    const readme = readFileSync(new URL('../../README.md', import.meta.url), 'utf8');
    const commands = [...readme.matchAll(/^### `cairn (\w+)/gm)].map((m) => m[1]);
    expect(commands.length).toBeGreaterThanOrEqual(7);
    for (const c of commands) expect(doc).toContain(`## cairn ${c}\n`);
  });
});
