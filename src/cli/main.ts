// Entry of the `starkiln` command (bin/starkiln.mjs loads this through tsx). Returns the exit code.
import { HELP, UsageError, parseCommandLine } from './args';
import { runFit, softwareVersion, type Io } from './fit-command';

export async function main(argv: string[], io: Io = { stdout: process.stdout, stderr: process.stderr, now: () => new Date() }): Promise<number> {
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
