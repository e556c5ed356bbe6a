// The JavaScript exporter: a dependency-free ES module with the declared defaults, `init` (arrays for every
// field, initial values filled in) and `run` (steps all fields in place over Float32Array or Float64Array).
// Same loops as the C export and the engine; arithmetic in double. Pure string building; no Node, vscode or DOM.

import { headerLines, type ExportOptions } from './header';
import type { ExportIR, ExtentTerm } from './ir';
import { indent, initLoop, scalarValues, stepBody } from './loops';
import { PublicNames, commentText, intLiteral, numberLiteral } from './names';

function extentExpr(terms: readonly ExtentTerm[]): string {
  let out = '0';
  for (const t of terms) {
    const parts = [t.let === null ? null : `fx_ext[${t.let}]`, t.add ? intLiteral(t.add) : null, t.blur === null ? null : `fx_rad[${t.blur}]`].filter(Boolean);
    out = `Math.max(${out}, ${parts.length ? parts.join(' + ') : '0'})`;
  }
  return out;
}

export function exportJs(ir: ExportIR, o: ExportOptions): string {
  const names = new PublicNames('js');
  const fieldNames = ir.fields.map(f => names.name(f.name));
  const paramNames = ir.params.map(p => names.name(p.name));
  const Arr = o.dtype === 'float32' ? 'Float32Array' : 'Float64Array';
  const lo = { lang: 'js' as const, dtype: o.dtype };
  const blurLets = ir.lets.map((l, k) => (l.kind === 'blur' ? k : -1)).filter(k => k >= 0);
  const updated = ir.fields.map((f, k) => (f.updated ? k : -1)).filter(k => k >= 0);
  const hy = ir.dims === 2 ? 'fx_halo' : '0';

  const head = headerLines(ir, o, 'JavaScript ES module', 'double (JavaScript numbers), rounded to the storage type when stored');
  const out: string[] = ['/*', ...head.map(l => ` * ${l}`), ' *'];
  out.push(
    ` * Use: const fields = init(width, height);  fields.${fieldNames[0]}.set(myImage);  run(fields, width, height, { steps: 10 });`,
    ` * Arrays are row-major ${Arr}s of width * height values: pixel (x, y) is at y * width + x.`,
    ' */',
    '',
    '/** The declared values of the params, the step and the step count. */',
    `export const defaults = Object.freeze({ ${[...ir.params.map((p, k) => `${paramNames[k]}: ${numberLiteral(p.value, 'js')}`), `dt: ${numberLiteral(ir.dt, 'js')}`, `steps: ${intLiteral(ir.steps)}`].join(', ')} });`,
    '',
    '/** Field names in declaration order (the keys of the `fields` object). */',
    `export const fieldNames = Object.freeze([${fieldNames.map(n => `'${n}'`).join(', ')}]);`,
    '',
  );
  ir.params.forEach((p, k) => {
    if (paramNames[k] !== p.name) out.push(`// param ${paramNames[k]} is \`${commentText(p.name)}\` in the scheme.`);
  });
  const paramLocals = ir.params.map((_, k) => `const fx_p${k} = +(fx_o.${paramNames[k]} ?? defaults.${paramNames[k]});`);

  out.push(
    '/** New arrays for every field; fields with initial values are filled, image fields are zero for you to fill. */',
    'export function init(width, height, options = {}) {',
    'const fx_o = options, fx_W = width, fx_H = height;',
    'if (!(Number.isInteger(fx_W) && Number.isInteger(fx_H) && fx_W >= 1 && fx_H >= 1)) throw new RangeError(`the grid must be at least 1x1, got ${fx_W}x${fx_H}`);',
    'const fx_dt = +(fx_o.dt ?? defaults.dt);',
    ...paramLocals,
    ...fieldNames.map(n => `const ${n} = new ${Arr}(fx_W * fx_H);`),
  );
  ir.fields.forEach((f, k) => {
    if (f.init !== null) out.push(...initLoop(ir, k, fieldNames[k], lo));
  });
  out.push(`return { ${fieldNames.join(', ')} };`, '}', '');

  const sig = scalarValues(ir, blurLets.map(k => (ir.lets[k] as { sigma: number }).sigma), lo);
  const kind = (k: number) => {
    const b = ir.fields[k].boundary;
    return b.kind === 'reflect' ? '0, 0' : b.kind === 'periodic' ? '1, 0' : `2, ${numberLiteral(b.value, 'js')}`;
  };
  out.push(
    '/** The interior index whose value a ghost cell takes: reflect folds about the cell edges (period 2n), periodic wraps. */',
    'function fx_fold(i, n, periodic) {',
    'if (periodic) return ((i % n) + n) % n;',
    'const p = 2 * n, m = ((i % p) + p) % p;',
    'return m < n ? m : p - 1 - m;',
    '}',
    '',
    '/** Fills the halo of a padded buffer: kind 0 reflect, 1 periodic, 2 fixed value. */',
    'function fx_ghosts(b, W, H, hx, hy, kind, value) {',
    'const pw = W + 2 * hx, ph = H + 2 * hy;',
    'for (let py = 0; py < ph; py++) {',
    'const y = py - hy, inside = y >= 0 && y < H, row = py * pw;',
    'const src = kind === 2 ? 0 : (fx_fold(y, H, kind === 1) + hy) * pw;',
    'for (let px = 0; px < pw; px++) {',
    'if (inside && px === hx) { px = hx + W - 1; continue; }',
    'b[row + px] = kind === 2 ? value : b[src + fx_fold(px - hx, W, kind === 1) + hx];',
    '}',
    '}',
    '}',
    '',
    '/**',
    ' * Advances every field options.steps steps in place (default: the declared count), from step index',
    ' * options.firstStep (t = step index * dt). Params, dt and steps come from options, else the defaults.',
    ' */',
    'export function run(fields, width, height, options = {}) {',
    'const fx_o = options, fx_W = width, fx_H = height;',
    'if (!(Number.isInteger(fx_W) && Number.isInteger(fx_H) && fx_W >= 1 && fx_H >= 1)) throw new RangeError(`the grid must be at least 1x1, got ${fx_W}x${fx_H}`);',
    'const fx_dt = +(fx_o.dt ?? defaults.dt), fx_steps = fx_o.steps ?? defaults.steps, fx_first = fx_o.firstStep ?? 0;',
    'if (!(Number.isInteger(fx_steps) && fx_steps >= 0 && Number.isInteger(fx_first) && fx_first >= 0)) throw new RangeError(\'steps and firstStep must be whole numbers >= 0\');',
    ...paramLocals,
    ...fieldNames.map(n => `if (!(fields.${n} instanceof ${Arr}) || fields.${n}.length !== fx_W * fx_H) throw new TypeError('fields.${n} must be a ${Arr} of width * height values');`),
    ...sig.lines,
    `const fx_sigma = [${ir.lets.map(() => '0').join(', ')}], fx_rad = [${ir.lets.map(() => '0').join(', ')}], fx_ext = [${ir.lets.map(() => '0').join(', ')}];`,
  );
  blurLets.forEach((k, j) => {
    out.push(
      `fx_sigma[${k}] = ${sig.values[j]};`,
      `if (!(fx_sigma[${k}] >= 0) || !Number.isFinite(fx_sigma[${k}])) throw new RangeError(\`blur width must be a finite number >= 0, got \${fx_sigma[${k}]}\`);`,
      `fx_rad[${k}] = Math.floor(4 * fx_sigma[${k}] + 0.5);`,
    );
  });
  for (let k = ir.lets.length - 1; k >= 0; k--) out.push(`fx_ext[${k}] = ${extentExpr(ir.lets[k].extent)};`);
  out.push(
    `const fx_halo = ${extentExpr(ir.halo)};`,
    `const fx_hx = fx_halo, fx_hy = ${hy}, fx_pw = fx_W + 2 * fx_hx, fx_cells = fx_pw * (fx_H + 2 * fx_hy);`,
  );
  ir.lets.forEach((l, k) => {
    out.push(`const fx_ext${k} = fx_ext[${k}], fx_rad${k} = fx_rad[${k}], fx_l${k} = new ${Arr}(fx_cells);`);
    if (l.kind === 'blur') {
      out.push(
        `const fx_tap${k} = new Float64Array(2 * fx_rad${k} + 1);`,
        `if (fx_rad${k} === 0) fx_tap${k}[0] = 1; else {`,
        'let fx_sum = 0;',
        `for (let j = -fx_rad${k}; j <= fx_rad${k}; j++) { const w = Math.exp(-(j * j) / (2 * fx_sigma[${k}] * fx_sigma[${k}])); fx_tap${k}[j + fx_rad${k}] = w; fx_sum += w; }`,
        `for (let j = 0; j < fx_tap${k}.length; j++) fx_tap${k}[j] /= fx_sum;`,
        '}',
      );
    }
  });
  if (ir.dims === 2 && blurLets.length) out.push(`const fx_tmp = new ${Arr}(fx_cells);`);
  ir.fields.forEach((_, k) => {
    out.push(
      `let fx_c${k} = new ${Arr}(fx_cells);`,
      `for (let y = 0; y < fx_H; y++) fx_c${k}.set(fields.${fieldNames[k]}.subarray(y * fx_W, (y + 1) * fx_W), (y + fx_hy) * fx_pw + fx_hx);`,
      `fx_ghosts(fx_c${k}, fx_W, fx_H, fx_hx, fx_hy, ${kind(k)});`,
    );
  });
  for (const k of updated) out.push(`let fx_d${k} = new ${Arr}(fx_cells);`, `fx_ghosts(fx_d${k}, fx_W, fx_H, fx_hx, fx_hy, ${kind(k)});`);
  out.push('for (let fx_s = 0; fx_s < fx_steps; fx_s++) {', 'const fx_t = (fx_first + fx_s) * fx_dt;', ...stepBody(ir, lo));
  for (const k of updated) out.push(`{ const fx_sw = fx_c${k}; fx_c${k} = fx_d${k}; fx_d${k} = fx_sw; }`, `fx_ghosts(fx_c${k}, fx_W, fx_H, fx_hx, fx_hy, ${kind(k)});`);
  out.push('}');
  for (const k of updated) out.push(`for (let y = 0; y < fx_H; y++) fields.${fieldNames[k]}.set(fx_c${k}.subarray((y + fx_hy) * fx_pw + fx_hx, (y + fx_hy) * fx_pw + fx_hx + fx_W), y * fx_W);`);
  out.push('return fields;', '}');
  return indent(out).join('\n') + '\n';
}
