// The `fluxel` command: dispatches to one module per subcommand.
// Exit codes (contracts.md): 0 success, 1 errors in the input, 2 wrong usage.
// Node-only front end; imports the engine, analysis and notation like every other front.

import { checkMain } from './check';

type Command = (argv: string[]) => Promise<number>;

/** Commands are loaded lazily so `fluxel check` does not pay for the engine and image codecs. */
const COMMANDS: Record<string, { summary: string; load: () => Promise<Command> }> = {
  check: { summary: 'check a scheme: diagnostics and the stability verdict', load: async () => checkMain },
  run: { summary: 'run a scheme on an image or a generated scene and write the result', load: async () => (await import('./run')).runMain },
  export: { summary: 'write the scheme as C, NumPy, Dask or JavaScript code', load: async () => (await import('./export')).exportMain },
  kernel: { summary: 'the weights a pixel is updated with at a step, and the impulse response', load: async () => (await import('./kernel')).kernelMain },
  compare: { summary: 'image quality of IMG against REF: MSE, PSNR, SSIM', load: async () => (await import('./compare')).compareMain },
  sweep: { summary: 'run a grid of parameter settings, measure every step, write CSV, JSON and a heat map', load: async () => (await import('./sweep')).sweepMain },
  fit: { summary: 'find the best parameter values and step inside the declared ranges', load: async () => (await import('./fit')).fitMain },
  spectrum: { summary: 'the frequency map: |G(θ)| over the frequencies, the stable edge, the isotropy error (PNG, JSON)', load: async () => (await import('./spectrum')).spectrumMain },
};

export function registerCommand(name: string, summary: string, load: () => Promise<Command>): void {
  COMMANDS[name] = { summary, load };
}

function usage(): string {
  const width = Math.max(...Object.keys(COMMANDS).map((k) => k.length));
  return [
    'usage: fluxel <command> [options]',
    '',
    'commands:',
    ...Object.entries(COMMANDS).map(([k, v]) => `  ${k.padEnd(width)}  ${v.summary}`),
    '',
    'Run `fluxel <command> --help` for the options of one command.',
  ].join('\n');
}

export async function main(argv: string[]): Promise<number> {
  const [cmd, ...rest] = argv;
  if (!cmd || cmd === '--help' || cmd === '-h' || cmd === 'help') {
    process.stdout.write(usage() + '\n');
    return cmd ? 0 : 2;
  }
  if (cmd === '--version') {
    process.stdout.write('fluxel 0.1.0\n');
    return 0;
  }
  const entry = COMMANDS[cmd];
  if (!entry) {
    process.stderr.write(`fluxel: unknown command \`${cmd}\`.\n${usage()}\n`);
    return 2;
  }
  const run = await entry.load();
  return run(rest);
}
