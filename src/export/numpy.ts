// The NumPy exporter: a module whose `step`/`run` work on whole numpy.ndarrays with np.pad (reflect -> 'symmetric',
// periodic -> 'wrap', fixed -> 'constant', numerics.md) and whole-array slicing. Its `core` works on already
// padded blocks, which is what the Dask exporter maps over chunks. Storage float32 (or float64); arithmetic float64.
// Pure string building from the IR; no Node, vscode or DOM.

import { headerLines, type ExportOptions } from './header';
import type { ExportIR, ExtentTerm, Node, OpName } from './ir';
import { PublicNames, commentText, intLiteral, numberLiteral } from './names';

const NP = 'fx_np';

function opText(op: OpName, a: readonly string[]): string {
  const w = (cond: string) => `${NP}.where(${cond}, 1.0, 0.0)`;
  switch (op) {
    case 'neg': return `(-${a[0]})`;
    case 'pos': return `(+${a[0]})`;
    case 'not': return w(`${a[0]} == 0`);
    case 'add': return `(${a[0]} + ${a[1]})`;
    case 'sub': return `(${a[0]} - ${a[1]})`;
    case 'mul': return `(${a[0]} * ${a[1]})`;
    // np.divide and np.power never raise on Python floats (1.0 / 0.0 would), giving inf and nan as JavaScript does.
    case 'div': return `${NP}.divide(${a[0]}, ${a[1]})`;
    case 'pow': return `${NP}.power(${a[0]}, ${a[1]})`;
    case 'lt': return w(`${a[0]} < ${a[1]}`);
    case 'le': return w(`${a[0]} <= ${a[1]}`);
    case 'gt': return w(`${a[0]} > ${a[1]}`);
    case 'ge': return w(`${a[0]} >= ${a[1]}`);
    case 'eq': return w(`${a[0]} == ${a[1]}`);
    case 'ne': return w(`${a[0]} != ${a[1]}`);
    case 'and': return w(`${NP}.logical_and(${a[0]} != 0, ${a[1]} != 0)`);
    case 'or': return w(`${NP}.logical_or(${a[0]} != 0, ${a[1]} != 0)`);
    case 'select': return `${NP}.where(${a[0]} != 0, ${a[1]}, ${a[2]})`;
    case 'abs': case 'sqrt': case 'exp': case 'log': case 'sin': case 'cos': case 'tanh': case 'sign': return `${NP}.${op}(${a[0]})`;
    case 'min': return `${NP}.minimum(${a[0]}, ${a[1]})`;
    case 'max': return `${NP}.maximum(${a[0]}, ${a[1]})`;
    case 'clamp': return `${NP}.minimum(${NP}.maximum(${a[0]}, ${a[1]}), ${a[2]})`;
  }
}

/** Statements of one kernel over one region (extent `e` in Python, a name in scope). */
class PyKernel {
  private readonly done = new Set<number>();
  readonly lines: string[] = [];
  readonly stored = new Set<number>();
  /** `init` kernels see the absolute rows y0..y1 and columns x0..x1 of init_region instead of a padded region. */
  constructor(readonly ir: ExportIR, readonly dtype: 'float32' | 'float64', readonly ext: string, readonly init = false) {}
  ref(id: number): string {
    const n: Node = this.ir.graph.nodes[id];
    switch (n.k) {
      case 'num': return numberLiteral(n.v, 'numpy');
      case 'param': return `fx_p${n.i}`;
      case 'dt': return 'fx_dt';
      case 't': return 'fx_t';
      case 'x': if (this.init) return `${NP}.arange(x0, x1, dtype=${NP}.float64)[None, :]`;
        return `${NP}.arange(-${this.ext}, fx_nx + ${this.ext}, dtype=${NP}.float64)[None, :]`;
      case 'y': if (this.init) return `${NP}.arange(y0, y1, dtype=${NP}.float64)[:, None]`;
        return this.ir.dims === 2 ? `${NP}.arange(-${this.ext}, fx_ny + ${this.ext}, dtype=${NP}.float64)[:, None]` : `${NP}.arange(0, fx_ny, dtype=${NP}.float64)[:, None]`;
      case 'read': return `fx_win(${n.buf === 'field' ? 'fx_c' : 'fx_l'}${n.i}, ${this.ext}, ${intLiteral(n.dx)}, ${intLiteral(n.dy)})`;
      case 'new':
        if (!this.stored.has(n.i)) throw new Error('a primed value read before its update');
        return this.dtype === 'float32' ? `fx_n${n.i}.astype(${NP}.float64)` : `fx_n${n.i}`;
      case 'op': return `fx_v${id}`;
    }
  }
  need(root: number): string {
    const g = this.ir.graph;
    for (const id of g.order([root], this.done)) {
      const n = g.nodes[id];
      if (n.k === 'op') this.lines.push(`fx_v${id} = ${opText(n.op, n.args.map(a => this.ref(a)))}`);
    }
    return this.ref(root);
  }
}

function extentExpr(terms: readonly ExtentTerm[]): string {
  const parts = terms.map(t => [t.let === null ? null : `fx_ext[${t.let}]`, t.add ? intLiteral(t.add) : null, t.blur === null ? null : `fx_rad[${t.blur}]`].filter(Boolean).join(' + ') || '0');
  return parts.length ? `max(0, ${parts.join(', ')})` : '0';
}

export interface PyNames {
  readonly fields: string[];
  readonly params: string[];
}

export function pyNames(ir: ExportIR, target: 'numpy' | 'dask'): PyNames {
  const names = new PublicNames(target);
  return { fields: ir.fields.map(f => names.name(f.name)), params: ir.params.map(p => names.name(p.name)) };
}

/** The NumPy module text (the Dask exporter appends its functions to it). */
export function exportNumpy(ir: ExportIR, o: ExportOptions, target: 'numpy' | 'dask' = 'numpy'): string {
  const { fields: F, params: P } = pyNames(ir, target);
  const store = `${NP}.${o.dtype}`;
  const round = (v: string) => (o.dtype === 'float32' ? `${NP}.asarray(${v}).astype(${store})` : v);
  const blurLets = ir.lets.map((l, k) => (l.kind === 'blur' ? k : -1)).filter(k => k >= 0);
  const updated = ir.fields.map((f, k) => (f.updated ? k : -1)).filter(k => k >= 0);
  const two = ir.dims === 2;
  const out: string[] = [];
  const head = headerLines(ir, o, target === 'dask' ? 'Dask (with its NumPy core)' : 'NumPy', 'float64 (inputs are padded, converted to float64, and results rounded to the storage type when stored)');
  out.push(...head.map(l => `# ${l}`), '#');
  out.push(
    '# Boundaries map to numpy.pad modes: reflect -> \'symmetric\', periodic -> \'wrap\', fixed v -> \'constant\' with v.',
    `# Use: ${F.join(', ')} = run(${F.map(f => `${f}`).join(', ')}, steps=10)   (2-d arrays, rows = y; returns every field)`,
  );
  ir.params.forEach((p, k) => {
    if (P[k] !== p.name) out.push(`# keyword ${P[k]} is the param \`${commentText(p.name)}\` of the scheme.`);
  });
  ir.fields.forEach((f, k) => {
    if (F[k] !== f.name) out.push(`# argument ${F[k]} is the field \`${commentText(f.name)}\` of the scheme.`);
  });
  const kw = (withSteps: boolean) => [
    ...(withSteps ? [`steps=${intLiteral(ir.steps)}`, 'first_step=0'] : []),
    `dt=${numberLiteral(ir.dt, 'numpy')}`,
    ...ir.params.map((p, k) => `${P[k]}=${numberLiteral(p.value, 'numpy')}`),
  ].join(', ');
  const paramArgs = ['dt', ...P].join(', ');
  const paramPass = ['dt=dt', ...P.map(p => `${p}=${p}`)].join(', ');
  const paramLocals = ['    fx_dt = fx_np.float64(dt)', ...P.map((p, k) => `    fx_p${k} = fx_np.float64(${p})`)];
  out.push(
    '',
    'import numpy as fx_np',
    '',
    `DTYPE = ${store}`,
    `FIELDS = (${F.map(f => `'${f}'`).join(', ')}${F.length === 1 ? ',' : ''})`,
    `DEFAULTS = dict(${kw(true).replace(', first_step=0', '')})`,
    `# numpy.pad arguments per field (numerics.md boundary table).`,
    `PAD = (${ir.fields.map(f => (f.boundary.kind === 'reflect' ? "('symmetric', None)" : f.boundary.kind === 'periodic' ? "('wrap', None)" : `('constant', ${numberLiteral(f.boundary.value, 'numpy')})`)).join(', ')}${ir.fields.length === 1 ? ',' : ''})`,
    '',
    '',
    `def plan(${kw(false)}):`,
    '    """Blur widths and radii (floor(4 sigma + 0.5)), let extents and the halo, as the engine plans them."""',
    ...paramLocals,
    `    fx_sigma = [${ir.lets.map(() => '0.0').join(', ')}]`,
    `    fx_rad = [${ir.lets.map(() => '0').join(', ')}]`,
    `    fx_ext = [${ir.lets.map(() => '0').join(', ')}]`,
  );
  if (blurLets.length) {
    const k0 = new PyKernel(ir, o.dtype, '0');
    for (const k of blurLets) {
      const v = k0.need((ir.lets[k] as { sigma: number }).sigma);
      out.push(...k0.lines.splice(0).map(l => `    ${l}`), `    fx_sigma[${k}] = float(${v})`);
      out.push(`    if not (fx_sigma[${k}] >= 0 and fx_sigma[${k}] < float('inf')):`, `        raise ValueError('blur width must be a finite number >= 0, got %r' % fx_sigma[${k}])`);
      out.push(`    fx_rad[${k}] = int(fx_np.floor(4 * fx_sigma[${k}] + 0.5))`);
    }
  }
  for (let k = ir.lets.length - 1; k >= 0; k--) out.push(`    fx_ext[${k}] = ${extentExpr(ir.lets[k].extent)}`);
  out.push(
    `    fx_halo = ${extentExpr(ir.halo)}`,
    '    return fx_halo, fx_ext, fx_rad, fx_sigma',
    '',
    '',
    'def taps(sigma, radius):',
    '    """Normalised Gaussian taps exp(-k^2 / (2 sigma^2)) for |k| <= radius, summed in the engine\'s order."""',
    '    if radius == 0:',
    '        return [1.0]',
    '    w = [float(fx_np.exp(-(k * k) / (2 * sigma * sigma))) for k in range(-radius, radius + 1)]',
    '    s = 0.0',
    '    for v in w:',
    '        s += v',
    '    return [v / s for v in w]',
    '',
    '',
    'def pad(a, halo, field):',
    '    """Pads one field (index in FIELDS) by `halo` cells with its boundary rule."""',
    `    mode, value = PAD[field]`,
    `    width = ${two ? '((halo, halo), (halo, halo))' : '((0, 0), (halo, halo))'}`,
    "    if mode == 'constant':",
    '        return fx_np.pad(a, width, mode=mode, constant_values=value)',
    '    return fx_np.pad(a, width, mode=mode)',
    '',
    '',
    `def core(${F.map((_, k) => `fx_c${k}`).join(', ')}, *, halo, t, ${paramArgs}):`,
    '    """One step on padded blocks (each field padded by `halo`, any dtype): returns the new interiors',
    '    of the updated fields (None for fields without an update), in the storage dtype."""',
    ...paramLocals,
    '    fx_t = fx_np.float64(t)',
    `    fx_halo, fx_ext, fx_rad, fx_sigma = plan(${paramPass})`,
    '    if halo != fx_halo:',
    "        raise ValueError('core needs blocks padded by %d cells, got %d' % (fx_halo, halo))",
    ...F.map((_, k) => `    fx_c${k} = fx_np.asarray(fx_c${k}, dtype=fx_np.float64)`),
    `    fx_ny = fx_c0.shape[0]${two ? ' - 2 * fx_halo' : ''}`,
    '    fx_nx = fx_c0.shape[1] - 2 * fx_halo',
    '',
    '    def fx_win(b, e, dx, dy):',
    '        # The region extended by e cells, shifted by (dx, dy), of a buffer padded by fx_halo.',
    two ? '        return b[fx_halo - e + dy:fx_halo + fx_ny + e + dy, fx_halo - e + dx:fx_halo + fx_nx + e + dx]' : '        return b[:, fx_halo - e + dx:fx_halo + fx_nx + e + dx]',
    '',
    "    with fx_np.errstate(all='ignore'):",
  );
  const body: string[] = [];
  ir.lets.forEach((l, k) => {
    body.push(`fx_l${k} = fx_np.zeros_like(fx_c0)`, `fx_e = fx_ext[${k}]`);
    if (l.kind === 'blur') {
      const src = `${l.source.buf === 'field' ? 'fx_c' : 'fx_l'}${l.source.i}`;
      body.push(
        `# let ${k}: separable Gaussian blur, x pass then y pass, taps summed left to right as the engine does`,
        `fx_r = fx_rad[${k}]`,
        `fx_w = taps(fx_sigma[${k}], fx_r)`,
      );
      if (two) {
        body.push(
          `fx_rows = slice(fx_halo - fx_e - fx_r, fx_halo + fx_ny + fx_e + fx_r)`,
          `fx_s = fx_w[0] * ${src}[fx_rows, fx_halo - fx_e - fx_r:fx_halo + fx_nx + fx_e - fx_r]`,
          `for fx_k in range(1, 2 * fx_r + 1):`,
          `    fx_s = fx_s + fx_w[fx_k] * ${src}[fx_rows, fx_halo - fx_e - fx_r + fx_k:fx_halo + fx_nx + fx_e - fx_r + fx_k]`,
          `fx_tmp = ${round('fx_s')}`,
          `fx_s = fx_w[0] * fx_tmp[0:fx_ny + 2 * fx_e]`,
          `for fx_k in range(1, 2 * fx_r + 1):`,
          `    fx_s = fx_s + fx_w[fx_k] * fx_tmp[fx_k:fx_k + fx_ny + 2 * fx_e]`,
          `fx_l${k}[fx_halo - fx_e:fx_halo + fx_ny + fx_e, fx_halo - fx_e:fx_halo + fx_nx + fx_e] = ${round('fx_s')}`,
        );
      } else {
        body.push(
          `fx_s = fx_w[0] * ${src}[:, fx_halo - fx_e - fx_r:fx_halo + fx_nx + fx_e - fx_r]`,
          `for fx_k in range(1, 2 * fx_r + 1):`,
          `    fx_s = fx_s + fx_w[fx_k] * ${src}[:, fx_halo - fx_e - fx_r + fx_k:fx_halo + fx_nx + fx_e - fx_r + fx_k]`,
          `fx_l${k}[:, fx_halo - fx_e:fx_halo + fx_nx + fx_e] = ${round('fx_s')}`,
        );
      }
      return;
    }
    const kern = new PyKernel(ir, o.dtype, 'fx_e');
    const v = kern.need(l.value);
    body.push(`# let ${k}, over the grid extended by its extent`, ...kern.lines);
    body.push(two ? `fx_l${k}[fx_halo - fx_e:fx_halo + fx_ny + fx_e, fx_halo - fx_e:fx_halo + fx_nx + fx_e] = ${round(v)}` : `fx_l${k}[:, fx_halo - fx_e:fx_halo + fx_nx + fx_e] = ${round(v)}`);
  });
  const kern = new PyKernel(ir, o.dtype, '0');
  body.push('# the updates, in evaluation order');
  for (const u of ir.updates) {
    const v = kern.need(u.value);
    body.push(...kern.lines.splice(0), `fx_n${u.field} = fx_np.broadcast_to(${v}, (fx_ny, fx_nx)).astype(${store})`);
    kern.stored.add(u.field);
  }
  out.push(...body.map(l => `        ${l}`));
  out.push(`    return (${ir.fields.map((f, k) => (f.updated ? `fx_n${k}` : 'None')).join(', ')}${ir.fields.length === 1 ? ',' : ''})`, '', '');

  out.push(
    `def step(${F.join(', ')}, *, t=0.0, ${kw(false)}):`,
    '    """One step on whole arrays: pads each field with its boundary rule and returns every field."""',
    `    fx_halo = plan(${paramPass})[0]`,
    `    fx_new = core(${F.map((f, k) => `pad(fx_np.asarray(${f}, dtype=DTYPE), fx_halo, ${k})`).join(', ')}, halo=fx_halo, t=t, ${paramPass})`,
    `    return (${F.map((f, k) => (ir.fields[k].updated ? `fx_new[${k}]` : `fx_np.asarray(${f}, dtype=DTYPE)`)).join(', ')}${F.length === 1 ? ',' : ''})`,
    '',
    '',
    `def run(${F.join(', ')}, *, ${kw(true)}):`,
    '    """`steps` steps from step index first_step (t = step index * dt); returns every field."""',
    `    fx_f = (${F.map(f => `fx_np.asarray(${f}, dtype=DTYPE)`).join(', ')}${F.length === 1 ? ',' : ''})`,
    '    for fx_s in range(first_step, first_step + steps):',
    `        fx_f = step(*fx_f, t=fx_s * float(dt), ${paramPass})`,
    '    return fx_f',
    '',
    '',
    `def init_region(y0, y1, x0, x1, *, ${kw(false)}):`,
    '    """Initial values of rows y0..y1-1 and columns x0..x1-1 (image fields are zeros, for you to fill)."""',
    ...paramLocals,
    '    fx_ny, fx_nx = y1 - y0, x1 - x0',
    "    with fx_np.errstate(all='ignore'):",
  );
  ir.fields.forEach((f, k) => {
    if (f.init === null) {
      out.push(`        fx_i${k} = fx_np.zeros((fx_ny, fx_nx), dtype=DTYPE)`);
      return;
    }
    const ik = new PyKernel(ir, o.dtype, '0', true);
    const v = ik.need(f.init);
    out.push(...ik.lines.map(l => `        ${l}`), `        fx_i${k} = fx_np.broadcast_to(${v}, (fx_ny, fx_nx)).astype(DTYPE)`);
  });
  out.push(
    `    return (${ir.fields.map((_, k) => `fx_i${k}`).join(', ')}${ir.fields.length === 1 ? ',' : ''})`,
    '',
    '',
    `def init(shape, *, ${kw(false)}):`,
    '    """Every field for an image of `shape` (rows, columns): initial values filled, image fields zeros."""',
    `    return init_region(0, shape[0], 0, shape[1], ${paramPass})`,
  );
  return out.join('\n') + '\n';
}
