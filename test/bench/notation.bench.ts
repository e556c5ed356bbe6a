// Parse + check of a generated 2,000-line scheme, median over repeated runs (target: under 20 ms), at the density
// users write and for a three-times denser stress file. Baseline in the same run: the lexer alone over the same text.

import { parseAndCheck } from '../../src/notation';
import { FluxelLexer } from '../../src/notation/tokens';

/** A plausible large scheme: many params, helper functions, lets and fields with 4- and 8-neighbour updates. */
export function generateScheme(lines: number): string {
  const out = ['# generated benchmark scheme', 'grid 2d', 'spacing 1', 'boundary reflect', 'step dt = 0.05', 'steps 10'];
  let i = 0;
  while (out.length < lines) {
    const k = i++;
    out.push(`param K${k} = 0.${(k % 9) + 1} in [0.01, 1]`);
    out.push(`diffusivity g${k}(s) = 1 / (1 + (s / K${k})^2)`);
    out.push(`fn soft${k}(a, b) = a / (1 + abs(b)) + if a > b then a else b`);
    out.push(`field u${k} = ${k % 3 === 0 ? 'image' : `0.5 + 0.1 * sin(x / 7 + ${k}) * cos(y / 5)`}`);
    out.push(`let w${k} = blur(u${k}, 1)`);
    out.push(`# field ${k}: edge-preserving diffusion with a small reaction term`);
    out.push(`u${k}' = u${k} + dt * (sum n in N${k % 2 ? 8 : 4}: g${k}(w${k}[n] - w${k}) / len(n)^2 * (u${k}[n] - u${k}))`);
    out.push(`  + dt * 0.01 * soft${k}(u${k}[1,0] - u${k}[-1,0], u${k}[0,1] - u${k}[0,-1]) * K${k}`);
  }
  return out.slice(0, lines).join('\n') + '\n';
}

/**
 * A file of the density users write: the edge-preserving example's declarations, renamed and repeated, with its
 * comments and blank lines (about 8 tokens per line; the bundled examples average 6.4).
 */
export function generateTypical(lines: number): string {
  const out = ['# generated benchmark scheme of typical density', 'grid 2d', 'spacing 1', 'boundary reflect', 'step dt = 0.2', 'steps 10', ''];
  for (let k = 0; out.length < lines; k++) {
    out.push(`# layer ${k}: calm flat regions, keep the edges`);
    out.push(`param K${k} = 0.06 in [0.005, 0.5]`);
    out.push(`param s${k} = 1 in [0, 3]`);
    out.push('');
    out.push(`field u${k} = image`);
    out.push(`diffusivity g${k}(s) = 1 / (1 + (s / K${k})^2)`);
    out.push(`let w${k} = blur(u${k}, s${k})`);
    out.push('');
    out.push(`u${k}' = u${k} + dt * sum n in N4: g${k}(w${k}[n] - w${k}) * (u${k}[n] - u${k})`);
    out.push('');
  }
  return out.slice(0, lines).join('\n') + '\n';
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

function measure(label: string, text: string): number {
  const check = parseAndCheck(text);
  const errors = check.diagnostics.filter((d) => d.severity === 'error');
  if (errors.length) throw new Error(`benchmark input has errors: ${errors[0].message} at line ${errors[0].range.start.line}`);
  for (let k = 0; k < 10; k++) parseAndCheck(text); // warm-up: let the JIT settle
  // Wall time suffers when other processes share the cores; CPU time of this process is reported beside it.
  const runs = 31;
  const lexMs: number[] = [];
  const allMs: number[] = [];
  const allCpuMs: number[] = [];
  const cpuMs = () => {
    const u = process.cpuUsage();
    return (u.user + u.system) / 1000;
  };
  for (let k = 0; k < runs; k++) {
    let t0 = performance.now();
    FluxelLexer.tokenize(text);
    lexMs.push(performance.now() - t0);
    const c0 = cpuMs();
    t0 = performance.now();
    parseAndCheck(text);
    allMs.push(performance.now() - t0);
    allCpuMs.push(cpuMs() - c0);
  }
  const m = median(allMs);
  const tokens = FluxelLexer.tokenize(text).tokens.length;
  const lines = text.split('\n').length - 1;
  console.log(`${label}: ${lines} lines, ${tokens} tokens (${(tokens / lines).toFixed(1)} per line)`);
  console.log(`  lexer alone      median ${median(lexMs).toFixed(2)} ms`);
  console.log(`  parse + check    median ${m.toFixed(2)} ms wall, ${median(allCpuMs).toFixed(2)} ms CPU (GC threads included), over ${runs} runs; ratio to lexer ${(m / median(lexMs)).toFixed(1)}x`);
  return m;
}

const typical = measure('typical density (the issue\'s case)', generateTypical(2000));
const dense = measure('dense stress file', generateScheme(2000));
console.log(`target < 20 ms for the 2,000-line file: ${typical < 20 ? 'met' : 'NOT met'} at typical density (${typical.toFixed(1)} ms); dense stress file ${dense.toFixed(1)} ms`);
console.log(`load average while measuring: ${require('node:os').loadavg()[0].toFixed(2)} on ${require('node:os').cpus().length} cores`);
