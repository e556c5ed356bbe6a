// The Dask exporter: the NumPy module plus functions over dask.array that map its `core` over chunks with
// map_overlap, depth = the halo of one step, boundary mapped per field as numerics.md says (reflect ->
// 'reflect', periodic -> 'periodic', fixed v -> the constant v). Pure string building; no Node, vscode or DOM.

import type { ExportOptions } from './header';
import { ExportError, type ExportIR } from './ir';
import { intLiteral, numberLiteral } from './names';
import { exportNumpy, pyNames } from './numpy';

export function exportDask(ir: ExportIR, o: ExportOptions): string {
  const where = ir.coordinateReads[0];
  if (where) {
    // A chunk function sees only its block, not where the block lies in the image.
    throw new ExportError(`line ${where.line}: ${where.what} read in a let or update does not export to Dask (chunks do not know their position); export to numpy instead, or move it into a field's initial value`);
  }
  const { fields: F, params: P } = pyNames(ir, 'dask');
  const base = exportNumpy(ir, o, 'dask');
  const two = ir.dims === 2;
  const kw = (withSteps: boolean) => [
    ...(withSteps ? [`steps=${intLiteral(ir.steps)}`, 'first_step=0'] : []),
    `dt=${numberLiteral(ir.dt, 'dask')}`,
    ...ir.params.map((p, k) => `${P[k]}=${numberLiteral(p.value, 'dask')}`),
  ].join(', ');
  const paramPass = ['dt=dt', ...P.map(p => `${p}=${p}`)].join(', ');
  const tuple = (xs: string[]) => `(${xs.join(', ')}${xs.length === 1 ? ',' : ''})`;
  const out: string[] = [
    '',
    '',
    '# ---- Dask: images larger than one machine ----',
    '',
    'import dask.array as fx_da',
    '',
    '# map_overlap boundary per field (numerics.md): reflect -> \'reflect\' (numpy\'s \'symmetric\'), periodic -> \'periodic\', fixed v -> v.',
    `DASK_BOUNDARY = ${tuple(ir.fields.map(f => (f.boundary.kind === 'fixed' ? numberLiteral(f.boundary.value, 'dask') : `'${f.boundary.kind}'`)))}`,
    '',
    '',
    `def dask_step(${F.join(', ')}, *, t=0.0, ${kw(false)}):`,
    '    """One step over dask arrays: every updated field is one map_overlap of `core` with depth = the halo.',
    '    Values equal `step` on the whole array exactly: each block is padded by its neighbours\' cells or, at the',
    '    image edges, by the boundary rule, and `core` computes every pixel from the same cells in the same order."""',
    `    fx_halo = plan(${paramPass})[0]`,
    `    fx_in = ${tuple(F.map(f => `fx_da.asarray(${f}).astype(DTYPE)`))}`,
    `    fx_depth = ${two ? '{0: fx_halo, 1: fx_halo}' : '{0: 0, 1: fx_halo}'}`,
    `    fx_pad = ${two ? '((fx_halo, fx_halo), (fx_halo, fx_halo))' : '((0, 0), (fx_halo, fx_halo))'}`,
    `    fx_meta = fx_np.empty((0, 0), dtype=DTYPE)`,
    `    fx_small = ${two ? 'fx_halo > min(fx_in[0].shape)' : 'fx_halo > fx_in[0].shape[1]'}`,
    '',
    '    def fx_block(*fx_b, fx_k):',
    '        # The new interior of field fx_k, padded back to the block\'s size; map_overlap trims the depth.',
    `        return fx_np.pad(core(*fx_b, halo=fx_halo, t=t, ${paramPass})[fx_k], fx_pad)`,
    '',
    '    def fx_whole(*fx_b, fx_k):',
    `        return step(*fx_b, t=t, ${paramPass})[fx_k]`,
    '',
    '    fx_out = list(fx_in)',
    `    for fx_k in ${tuple(ir.fields.map((f, k) => (f.updated ? String(k) : '')).filter(Boolean))}:`,
    '        if fx_small:',
    '            # The halo is wider than the image: map_overlap reflects only once, numpy.pad keeps folding, so use one block.',
    '            fx_one = [a.rechunk(-1) for a in fx_in]',
    '            fx_out[fx_k] = fx_da.map_blocks(fx_whole, *fx_one, fx_k=fx_k, dtype=DTYPE, meta=fx_meta)',
    '        else:',
    `            fx_out[fx_k] = fx_da.map_overlap(fx_block, *fx_in, fx_k=fx_k, depth=[fx_depth] * ${F.length}, boundary=list(DASK_BOUNDARY), trim=True, dtype=DTYPE, meta=fx_meta)`,
    '    return tuple(fx_out)',
    '',
    '',
    `def dask_run(${F.join(', ')}, *, ${kw(true)}, persist_every=None):`,
    '    """`steps` lazy steps from step index first_step (t = step index * dt); returns every field as a dask array.',
    '    persist_every=N persists the fields every N steps, which keeps the task graph short on long runs."""',
    `    fx_f = ${tuple(F.map(f => `fx_da.asarray(${f}).astype(DTYPE)`))}`,
    '    for fx_s in range(first_step, first_step + steps):',
    `        fx_f = dask_step(*fx_f, t=fx_s * float(dt), ${paramPass})`,
    '        if persist_every and (fx_s + 1 - first_step) % persist_every == 0:',
    '            fx_f = tuple(a.persist() for a in fx_f)',
    '    return fx_f',
    '',
    '',
    `def dask_init(shape, chunks, *, ${kw(false)}):`,
    '    """Every field as a dask array of `shape` and `chunks`: initial values filled per block, image fields zeros."""',
    '    fx_template = fx_da.zeros(shape, chunks=chunks, dtype=DTYPE)',
    '',
    '    def fx_block(fx_b, fx_k, block_info=None):',
    "        (y0, y1), (x0, x1) = block_info[None]['array-location']",
    `        return init_region(y0, y1, x0, x1, ${paramPass})[fx_k]`,
    '',
    `    return tuple(fx_template.map_blocks(fx_block, fx_k=fx_k, dtype=DTYPE) for fx_k in range(${F.length}))`,
  ];
  return base + out.join('\n') + '\n';
}
