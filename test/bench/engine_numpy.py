# NumPy version of the engine benchmark's two schemes (issue 3), written as a practitioner would: whole-array
# slicing on a padded copy each step, Float32 throughout. Run with Debian's interpreter: /usr/bin/python3.
# Usage: engine_numpy.py edge|heat N STEPS IN.raw OUT.raw  -> prints "wall_seconds cpu_seconds" of the stepping loop.
import sys
import time

import numpy as np


def step_edge(u, dt, K):
    # Reflect boundary with a one-cell halo: numpy's 'edge' repeats the edge pixel (numerics.md: 'symmetric' ≡ 'edge' for 1 cell).
    p = np.pad(u, 1, mode="edge")
    c = p[1:-1, 1:-1]
    out = c.copy()
    for d in (p[1:-1, 2:] - c, p[1:-1, :-2] - c, p[2:, 1:-1] - c, p[:-2, 1:-1] - c):
        g = 1 / (1 + (d / K) ** 2)
        out += dt * g * d
    return out


def step_heat(u, dt):
    p = np.pad(u, 1, mode="edge")
    return u + dt * (p[1:-1, 2:] + p[1:-1, :-2] + p[2:, 1:-1] + p[:-2, 1:-1] - 4 * u)


def main():
    kind, n, steps, src, dst = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), sys.argv[4], sys.argv[5]
    u = np.fromfile(src, dtype=np.float32).reshape(n, n)
    # np.float32 scalars keep every operation in Float32 (a Python float would too under NumPy's scalar rules).
    dt, K = np.float32(0.2), np.float32(0.05)
    w0, c0 = time.perf_counter(), time.process_time()
    for _ in range(steps):
        u = step_edge(u, dt, K) if kind == "edge" else step_heat(u, dt)
    wall, cpu = time.perf_counter() - w0, time.process_time() - c0
    assert u.dtype == np.float32
    u.tofile(dst)
    print(f"{wall:.6f} {cpu:.6f}")


if __name__ == "__main__":
    main()
