// Entry point of the `fluxel` binary (bundled to dist/cli.js, which gets the #! line from the build).

import { main } from './main';

// A reader that stops early (`fluxel check x | head`) closes the pipe: that is not an error of ours.
for (const stream of [process.stdout, process.stderr]) {
  stream.on('error', (err: NodeJS.ErrnoException) => {
    if (err.code === 'EPIPE') process.exit(process.exitCode ?? 0);
    throw err;
  });
}

main(process.argv.slice(2)).then(
  (code) => {
    process.exitCode = code;
  },
  (err: unknown) => {
    process.stderr.write(`fluxel: ${err instanceof Error ? err.stack ?? err.message : String(err)}\n`);
    process.exitCode = 1;
  },
);
