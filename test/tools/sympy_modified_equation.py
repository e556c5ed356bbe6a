#!/usr/bin/python3
"""Independent reference for src/analysis/modifiedEquation.ts: the modified equation of a one-step linear stencil by
symbolic series with SymPy. Reads JSON from stdin: [{"dims": 1|2, "h": H, "dt": DT, "weights": [[dx, dy, "w"], ...]}]
(weights as exact decimal strings), writes JSON to stdout: per stencil {"modified": {"i,j": c}, "moments": {"i,j": m}}
for total order ≤ MAX_ORDER, where u_t = Σ c_ij ∂x^i ∂y^j u is log G(s)/dt with G(s) = Σ w e^{h (sx dx + sy dy)}
(Warming & Hyett 1974), and m_ij are the coefficients of (G(s) − 1)/dt (the moments of L = (update − identity)/dt).
Called by path as /usr/bin/python3 (Debian's python3-sympy)."""
import json
import sys

import sympy as sp

MAX_ORDER = 4


def analyse(spec):
    sx, sy, eps = sp.symbols('sx sy eps')
    h = sp.nsimplify(spec['h'])
    dt = sp.nsimplify(spec['dt'])
    G = 0
    for dx, dy, w in spec['weights']:
        G += sp.Rational(w) * sp.exp(eps * h * (sx * dx + sy * dy))
    # Power series in eps, then read the coefficient of sx^i sy^j eps^(i+j).
    logg = sp.series(sp.log(G), eps, 0, MAX_ORDER + 1).removeO()
    gm1 = sp.series((G - 1), eps, 0, MAX_ORDER + 1).removeO()
    out = {'modified': {}, 'moments': {}}
    for name, expr in (('modified', logg), ('moments', gm1)):
        poly = sp.Poly(sp.expand(expr), sx, sy, eps)
        for (i, j, k), c in zip(poly.monoms(), poly.coeffs()):
            if spec['dims'] == 1 and j > 0:
                continue
            out[name][f'{i},{j}'] = float(c / dt)
    return out


def main():
    specs = json.load(sys.stdin)
    json.dump([analyse(s) for s in specs], sys.stdout)


if __name__ == '__main__':
    main()
