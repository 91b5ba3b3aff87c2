/**
 * The `cairn` program: wires each command (one file per command in src/cli/)
 * to commander, and maps errors to exit codes: 0 success, 1 bad input or a
 * failed run, 2 bad usage. Nothing below src/cli/ prints or exits.
 */
import { Command, CommanderError } from 'commander';
import { isCairnError, UsageError } from '../errors.js';
import { VERSION } from '../version.js';
import { registerAdd } from './add.js';
import { registerBuild } from './build.js';
import { registerCheck } from './check.js';
import { registerInspect } from './inspect.js';
import { registerCompare } from './compare.js';
import { registerEvaluate } from './evaluate.js';
import { registerMatch } from './match.js';

export interface CliIo {
  stdout: (text: string) => void;
  stderr: (text: string) => void;
}

const processIo: CliIo = {
  stdout: (text) => process.stdout.write(text),
  stderr: (text) => process.stderr.write(text),
};

/** Each command module exports a function that adds itself to the program. */
export type CommandRegistrar = (program: Command, io: CliIo) => void;

const registrars: CommandRegistrar[] = [registerCheck, registerBuild, registerAdd, registerInspect, registerMatch, registerEvaluate, registerCompare];

export function createProgram(io: CliIo = processIo): Command {
  const program = new Command();
  program
    .name('cairn')
    .description('Probabilistic templates of cell positions, and label proposals for new animals.')
    .version(VERSION, '-V, --version')
    .showHelpAfterError('(run with --help for usage)')
    .configureOutput({ writeOut: io.stdout, writeErr: io.stderr, getOutHelpWidth: () => 100, getErrHelpWidth: () => 100 })
    .exitOverride();
  for (const register of registrars) register(program, io);
  return program;
}

/** Run the CLI on argv (as in process.argv) and return the exit code. */
export async function main(argv: readonly string[], io: CliIo = processIo): Promise<number> {
  const program = createProgram(io);
  try {
    await program.parseAsync(argv as string[]);
    return 0;
  } catch (e) {
    return exitCodeFor(e, io);
  }
}

export function exitCodeFor(e: unknown, io: CliIo): number {
  if (e instanceof CommanderError) {
    if (e.code === 'commander.helpDisplayed' || e.code === 'commander.version' || e.code === 'commander.help') return 0;
    if (e.exitCode === 0) return 0;
    return 2;
  }
  if (e instanceof UsageError) {
    io.stderr(`cairn: ${e.message}\n`);
    return 2;
  }
  if (isCairnError(e)) {
    io.stderr(`cairn: ${e.message}\n`);
    return 1;
  }
  if (e instanceof CommandFailed) return 1;
  io.stderr(`cairn: internal error: ${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
  return 1;
}

/** Thrown by a command that has already printed its own report of what failed. */
export class CommandFailed extends Error {
  constructor(message = 'command failed') {
    super(message);
    this.name = 'CommandFailed';
  }
}
