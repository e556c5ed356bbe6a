// The C99 exporter: one translation unit with a params struct and its defaults, a scratch-size query, an
// initialiser for fields with initial values, and one function stepping all fields N times over caller buffers.
// Storage is float (or double with --float64); arithmetic is double, as in the engine. Needs only libm.
// Pure string building from the IR; no Node, vscode or DOM.

import { headerLines, type ExportOptions } from './header';
import { type ExportIR, type ExtentTerm } from './ir';
import { C_MATH_HELPERS, indent, initLoop, scalarValues, stepBody } from './loops';
import { PublicNames, commentText, intLiteral, numberLiteral, schemePrefix } from './names';

/** `max(0, terms...)` over the plan arrays fx_rad / fx_ext. */
function extentExpr(terms: readonly ExtentTerm[]): string {
  let out = '0';
  for (const t of terms) {
    const parts = [t.let === null ? null : `fx_ext[${t.let}]`, t.add ? intLiteral(t.add) : null, t.blur === null ? null : `fx_rad[${t.blur}]`].filter(Boolean);
    const term = parts.length ? parts.join(' + ') : '0';
    out = `fx_imax(${out}, ${term})`;
  }
  return out;
}

export function exportC(ir: ExportIR, o: ExportOptions): string {
  const P = schemePrefix(o.fileName);
  const names = new PublicNames('c');
  const fieldNames = ir.fields.map(f => names.name(f.name));
  const paramNames = ir.params.map(p => names.name(p.name));
  const store = o.dtype === 'float32' ? 'float' : 'double';
  const lo = { lang: 'c' as const, dtype: o.dtype };
  const NL = Math.max(1, ir.lets.length);
  const blurLets = ir.lets.map((l, k) => (l.kind === 'blur' ? k : -1)).filter(k => k >= 0);
  const updated = ir.fields.map((f, k) => (f.updated ? k : -1)).filter(k => k >= 0);
  const needTmp = ir.dims === 2 && blurLets.length > 0;
  const nbuf = ir.fields.length + updated.length + ir.lets.length + (needTmp ? 1 : 0);
  const fieldArgs = fieldNames.map(n => `${store} *${n}`).join(', ');
  const hy = ir.dims === 2 ? 'halo' : '0';

  const head = headerLines(ir, o, 'C99', 'double (every value is computed in double and rounded to the storage type when stored)');
  const out: string[] = ['/*', ...head.map(l => ` * ${l}`), ' *'];
  out.push(
    ` * Use: ${P}_params p = ${P}_defaults;  (then change what you need)`,
    ` *      size_t bytes = ${P}_scratch_bytes(width, height, &p, ${P.toUpperCase()}_DT);  void *scratch = malloc(bytes);`,
    ` *      ${P}_init(${fieldNames.join(', ')}, width, height, &p, ${P.toUpperCase()}_DT);  (fields with initial values; image fields are yours)`,
    ` *      ${P}_step(${fieldNames.join(', ')}, width, height, &p, ${P.toUpperCase()}_DT, 0, ${P.toUpperCase()}_STEPS, scratch, bytes);`,
    ' * Images are row-major width x height arrays: pixel (x, y) is at y * width + x.',
    ' * Compile with e.g. gcc -O2 -std=c99 (which keeps a*b+c unfused, as the engine computes) and link with -lm.',
    ' */',
    '#include <math.h>',
    '#include <stddef.h>',
    '',
  );
  out.push('/* Parameters, as declared in the scheme. */', 'typedef struct {');
  if (ir.params.length === 0) out.push('  char unused; /* the scheme has no params */');
  ir.params.forEach((p, k) => out.push(`  double ${paramNames[k]}; /* ${commentText(p.name)}: default ${numberLiteral(p.value, 'c')}${p.lo !== null && p.hi !== null ? `, declared range [${numberLiteral(p.lo, 'c')}, ${numberLiteral(p.hi, 'c')}]` : ''} */`));
  out.push(`} ${P}_params;`, '');
  const defaults = ir.params.length ? ir.params.map(p => numberLiteral(p.value, 'c')).join(', ') : '0';
  out.push(
    `const ${P}_params ${P}_defaults = { ${defaults} };`,
    `#define ${P.toUpperCase()}_DT ${numberLiteral(ir.dt, 'c')}`,
    `#define ${P.toUpperCase()}_STEPS ${intLiteral(ir.steps)}`,
    '',
    ...C_MATH_HELPERS,
    'static inline ptrdiff_t fx_imax(ptrdiff_t a, ptrdiff_t b) { return a > b ? a : b; }',
    '',
    '/* The interior index whose value a ghost cell takes: reflect folds about the cell edges (period 2n), periodic wraps. */',
    'static ptrdiff_t fx_fold(ptrdiff_t i, ptrdiff_t n, int periodic) {',
    'if (periodic) return ((i % n) + n) % n;',
    'ptrdiff_t p = 2 * n, m = ((i % p) + p) % p;',
    'return m < n ? m : p - 1 - m;',
    '}',
    '',
    '/* Fills the halo of a padded buffer: kind 0 reflect, 1 periodic, 2 fixed value. */',
    `static void fx_ghosts(${store} *b, ptrdiff_t W, ptrdiff_t H, ptrdiff_t hx, ptrdiff_t hy, int kind, double value) {`,
    'ptrdiff_t pw = W + 2 * hx, ph = H + 2 * hy;',
    'for (ptrdiff_t py = 0; py < ph; py++) {',
    'ptrdiff_t y = py - hy;',
    'int inside = y >= 0 && y < H;',
    `${store} *row = b + py * pw;`,
    `const ${store} *src = b + (kind == 2 ? 0 : (fx_fold(y, H, kind) + hy) * pw);`,
    'for (ptrdiff_t px = 0; px < pw; px++) {',
    'if (inside && px == hx) { px = hx + W - 1; continue; }',
    `row[px] = kind == 2 ? (${store})value : src[fx_fold(px - hx, W, kind) + hx];`,
    '}',
    '}',
    '}',
    '',
  );

  // The halo plan: blur radii from the params, then the engine's backwards extents.
  const sig = scalarValues(ir, blurLets.map(k => (ir.lets[k] as { sigma: number }).sigma), lo);
  // Every kernel reads its params from locals; the (void) keeps -Wall quiet where a function does not use one.
  const paramLocals = ir.params.map((_, k) => `const double fx_p${k} = p->${paramNames[k]}; (void)fx_p${k};`);
  out.push(
    '/* Blur widths and radii, let extents and the halo for these params (returns -1 for a bad blur width). */',
    `static int fx_plan(const ${P}_params *p, double dt, double *fx_sigma, ptrdiff_t *fx_rad, ptrdiff_t *fx_ext, ptrdiff_t *fx_halo) {`,
    'const double fx_dt = dt;',
    ...paramLocals,
    '(void)p; (void)fx_dt; (void)fx_sigma;',
    ...sig.lines,
    `for (int k = 0; k < ${NL}; k++) { fx_rad[k] = 0; fx_ext[k] = 0; }`,
  );
  blurLets.forEach((k, j) => {
    out.push(`fx_sigma[${k}] = ${sig.values[j]};`, `if (!(fx_sigma[${k}] >= 0) || !(fx_sigma[${k}] <= 1e6)) return -1;`, `fx_rad[${k}] = (ptrdiff_t)floor(4 * fx_sigma[${k}] + 0.5);`);
  });
  for (let k = ir.lets.length - 1; k >= 0; k--) out.push(`fx_ext[${k}] = ${extentExpr(ir.lets[k].extent)};`);
  out.push(`*fx_halo = ${extentExpr(ir.halo)};`, 'return 0;', '}', '');

  out.push(
    `/* Bytes of scratch ${P}_step needs for this size and these params (0 for a bad size or blur width). */`,
    `size_t ${P}_scratch_bytes(int width, int height, const ${P}_params *p, double dt) {`,
    `double sigma[${NL}]; ptrdiff_t rad[${NL}], ext[${NL}], halo;`,
    'if (width < 1 || height < 1 || fx_plan(p, dt, sigma, rad, ext, &halo)) return 0;',
    `size_t cells = (size_t)(width + 2 * halo) * (size_t)(height + 2 * ${hy});`,
    'size_t taps = 0;',
    ...blurLets.map(k => `taps += (size_t)(2 * rad[${k}] + 1);`),
    `return taps * sizeof(double) + ${nbuf} * cells * sizeof(${store});`,
    '}',
    '',
  );

  // Initial values.
  out.push(
    `/* Writes the initial values of the fields that have them (image fields are left as they are). Returns 0. */`,
    `int ${P}_init(${fieldArgs}, int width, int height, const ${P}_params *p, double dt) {`,
    'const ptrdiff_t fx_W = width, fx_H = height;',
    'const double fx_dt = dt;',
    ...paramLocals,
    `(void)p; (void)fx_dt; (void)fx_W; (void)fx_H; ${fieldNames.map(n => `(void)${n};`).join(' ')}`,
  );
  ir.fields.forEach((f, k) => {
    if (f.init !== null) out.push(`/* ${commentText(f.name)} */`, ...initLoop(ir, k, fieldNames[k], lo));
  });
  out.push('return 0;', '}', '');

  // The step function.
  out.push(
    `/* Advances every field \`steps\` steps in place, starting at step index first_step (t = step index * dt).`,
    ` * Returns 0, -1 for bad arguments or a bad blur width, -2 when scratch_bytes is below ${P}_scratch_bytes. */`,
    `int ${P}_step(${fieldArgs}, int width, int height, const ${P}_params *p, double dt, int first_step, int steps, void *scratch, size_t scratch_bytes) {`,
    `double fx_sigma[${NL}]; ptrdiff_t fx_rad[${NL}], fx_ext[${NL}], halo;`,
    'if (width < 1 || height < 1 || steps < 0 || first_step < 0 || !scratch) return -1;',
    'if (fx_plan(p, dt, fx_sigma, fx_rad, fx_ext, &halo)) return -1;',
    `if (scratch_bytes < ${P}_scratch_bytes(width, height, p, dt)) return -2;`,
    `const ptrdiff_t fx_W = width, fx_H = height, fx_hx = halo, fx_hy = ${hy}, fx_pw = fx_W + 2 * fx_hx, fx_cells = fx_pw * (fx_H + 2 * fx_hy);`,
    'const double fx_dt = dt;',
    ...paramLocals,
    '(void)fx_dt; (void)fx_sigma;',
    'double *fx_taps = (double *)scratch;',
  );
  ir.lets.forEach((l, k) => {
    out.push(`const ptrdiff_t fx_ext${k} = fx_ext[${k}], fx_rad${k} = fx_rad[${k}]; (void)fx_rad${k};`);
    if (l.kind === 'blur') {
      out.push(
        `double *fx_tap${k} = fx_taps; fx_taps += 2 * fx_rad${k} + 1;`,
        `if (fx_rad${k} == 0) fx_tap${k}[0] = 1; else {`,
        'double fx_sum = 0;',
        `for (ptrdiff_t j = -fx_rad${k}; j <= fx_rad${k}; j++) { double w = exp(-(double)(j * j) / (2 * fx_sigma[${k}] * fx_sigma[${k}])); fx_tap${k}[j + fx_rad${k}] = w; fx_sum += w; }`,
        `for (ptrdiff_t j = 0; j <= 2 * fx_rad${k}; j++) fx_tap${k}[j] /= fx_sum;`,
        '}',
      );
    }
  });
  out.push(`${store} *fx_mem = (${store} *)fx_taps;`);
  ir.fields.forEach((_, k) => out.push(`${store} *fx_c${k} = fx_mem; fx_mem += fx_cells;`));
  for (const k of updated) out.push(`${store} *fx_d${k} = fx_mem; fx_mem += fx_cells;`);
  ir.lets.forEach((_, k) => out.push(`${store} *fx_l${k} = fx_mem; fx_mem += fx_cells;`));
  if (needTmp) out.push(`${store} *fx_tmp = fx_mem;`);
  const kind = (k: number) => {
    const b = ir.fields[k].boundary;
    return b.kind === 'reflect' ? '0, 0.0' : b.kind === 'periodic' ? '1, 0.0' : `2, ${numberLiteral(b.value, 'c')}`;
  };
  out.push('/* Copy in, fill every halo once. */');
  ir.fields.forEach((_, k) => {
    out.push(`for (ptrdiff_t y = 0; y < fx_H; y++) for (ptrdiff_t x = 0; x < fx_W; x++) fx_c${k}[(y + fx_hy) * fx_pw + x + fx_hx] = ${fieldNames[k]}[y * fx_W + x];`);
    out.push(`fx_ghosts(fx_c${k}, fx_W, fx_H, fx_hx, fx_hy, ${kind(k)});`);
  });
  for (const k of updated) out.push(`fx_ghosts(fx_d${k}, fx_W, fx_H, fx_hx, fx_hy, ${kind(k)});`);
  out.push(
    'for (int fx_s = 0; fx_s < steps; fx_s++) {',
    'const double fx_t = (double)(first_step + fx_s) * fx_dt; (void)fx_t;',
    ...stepBody(ir, lo),
  );
  for (const k of updated) {
    out.push(`{ ${store} *fx_sw = fx_c${k}; fx_c${k} = fx_d${k}; fx_d${k} = fx_sw; }`, `fx_ghosts(fx_c${k}, fx_W, fx_H, fx_hx, fx_hy, ${kind(k)});`);
  }
  out.push('}', '/* Copy out the updated fields. */');
  for (const k of updated) {
    out.push(`for (ptrdiff_t y = 0; y < fx_H; y++) for (ptrdiff_t x = 0; x < fx_W; x++) ${fieldNames[k]}[y * fx_W + x] = fx_c${k}[(y + fx_hy) * fx_pw + x + fx_hx];`);
  }
  out.push('return 0;', '}');
  return indent(out).join('\n') + '\n';
}
