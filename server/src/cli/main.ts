/**
 * The entry of dist/cli.js: runs the command line with the real process. Everything else lives in
 * run.ts (re-exported here), so importing this file from a test does not start the program.
 */
import { EXIT_OK, runCli, type CliIo } from './run';

export * from './run';

/** The real process's inputs and outputs. */
function processIo(): CliIo {
  // A closed pipe (e.g. `episcope check | head`) is not an error of ours: stop quietly.
  process.stdout.on('error', (error: NodeJS.ErrnoException) => {
    if (error.code === 'EPIPE') process.exit(process.exitCode ?? EXIT_OK);
    throw error;
  });
  return {
    stdout: { write: (text) => void process.stdout.write(text), isTTY: process.stdout.isTTY },
    stderr: { write: (text) => void process.stderr.write(text), isTTY: process.stderr.isTTY },
    cwd: process.cwd(),
    env: process.env,
  };
}

// Run only when this file is the program itself (the CommonJS bundle), not when a test imports it.
if (typeof require !== 'undefined' && typeof module !== 'undefined' && require.main === module) {
  void runCli(process.argv.slice(2), processIo()).then((code) => {
    process.exitCode = code;
  });
}
