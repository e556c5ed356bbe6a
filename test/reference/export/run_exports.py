# Runs generated NumPy and Dask exports for the export verification tests (called as /usr/bin/python3 by path).
# Usage: run_exports.py JOBS.json threads|distributed. Each job names the two generated modules, the raw input
# file per field (or null: the module's init() gives it), the shape, steps, dtype, Dask chunks and output files.
import importlib.util
import json
import sys

import numpy as np


def load(path, name):
    spec = importlib.util.spec_from_file_location(name, path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def main():
    jobs = json.load(open(sys.argv[1]))
    mode = sys.argv[2]
    client = None
    if mode == 'distributed':
        from dask.distributed import Client, LocalCluster
        # processes=False keeps the workers in this process; the graph still goes through the distributed scheduler.
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None)
        client = Client(cluster)
    import dask.array as da
    for j, job in enumerate(jobs):
        dt = np.dtype(job['dtype'])
        shape = tuple(job['shape'])
        npm = load(job['numpy'], 'np_%d' % j)
        start = list(npm.init(shape))
        for k, f in enumerate(job['inputs']):
            if f is not None:
                start[k] = np.fromfile(f, dtype=dt).reshape(shape)
        out = npm.run(*start, steps=job['steps'])
        for k, f in enumerate(job['outNumpy']):
            np.asarray(out[k], dtype=dt).tofile(f)
        if job['dask'] is None:
            continue
        dkm = load(job['dask'], 'dk_%d' % j)
        # The Dask start: dask_init for fields with initial values (built per chunk), the same input elsewhere.
        dstart = list(dkm.dask_init(shape, tuple(job['chunks'])))
        for k, f in enumerate(job['inputs']):
            if f is not None:
                dstart[k] = da.from_array(start[k], chunks=tuple(job['chunks']))
        # Persisting every 10 steps keeps the graph short (its cost grows faster than linearly with the chain length).
        lazy = dkm.dask_run(*dstart, steps=job['steps'], persist_every=10)
        if client is not None:
            res = client.compute(list(lazy), sync=True)
        else:
            res = da.compute(*lazy, scheduler='threads')
        for k, f in enumerate(job['outDask']):
            np.asarray(res[k], dtype=dt).tofile(f)
    if client is not None:
        client.close()


main()
