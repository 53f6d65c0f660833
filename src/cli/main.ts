// Entry of the `starkiln` command (bin/starkiln.mjs loads this through tsx). Returns the exit code.
// The process environment is handed on here (io.env, where the INPUT_MAX_* settings are read); no other
// module of the command reads process.env.
import { HELP, UsageError, parseCommandLine } from './args';
import { runFit, softwareVersion, type Io } from './fit-command';

export async function main(argv: string[], io: Io = { stdout: process.stdout, stderr: process.stderr, now: () => new Date(), env: process.env }): Promise<number> {
  try {
    const parsed = parseCommandLine(argv);
    if (parsed.command === 'help') {
      io.stdout.write(HELP);
      return 0;
    }
    if (parsed.command === 'version') {
      io.stdout.write(`starkiln ${softwareVersion()}\n`);
      return 0;
    }
    return await runFit(parsed.args, io);
  } catch (e) {
    if (e instanceof UsageError) {
      io.stderr.write(`starkiln: ${e.message}\n`);
      return 64;
    }
    io.stderr.write(`starkiln: ${(e as Error).stack ?? String(e)}\n`);
    return 1;
  }
}
