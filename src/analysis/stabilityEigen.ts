// Eigenvalues of small complex matrices (amplification matrices of a few fields) and their spectral radius.
// Closed forms for 1×1 and 2×2; characteristic polynomial plus simultaneous root iteration beyond that.
// Pure: imports nothing.

/** A square complex matrix, row-major, n×n, real and imaginary parts apart. */
export interface CMatrix {
  readonly n: number;
  readonly re: Float64Array;
  readonly im: Float64Array;
}

export function cmatrix(n: number): CMatrix {
  return { n, re: new Float64Array(n * n), im: new Float64Array(n * n) };
}

/** Complex square root, principal branch. */
export function csqrt(re: number, im: number): [number, number] {
  const r = Math.hypot(re, im);
  if (r === 0) return [0, 0];
  const a = Math.sqrt((r + Math.abs(re)) / 2);
  if (re >= 0) return [a, im / (2 * a)];
  return [Math.abs(im) / (2 * a), im >= 0 ? a : -a];
}

function cmul(ar: number, ai: number, br: number, bi: number): [number, number] {
  return [ar * br - ai * bi, ar * bi + ai * br];
}

function cdiv(ar: number, ai: number, br: number, bi: number): [number, number] {
  const d = br * br + bi * bi;
  return [(ar * br + ai * bi) / d, (ai * br - ar * bi) / d];
}

/**
 * Eigenvalues as [re, im] pairs. For n ≥ 3 the characteristic polynomial comes from the Faddeev–LeVerrier
 * recursion and its roots from the Weierstrass (Durand–Kerner) iteration; both are adequate for the handful
 * of fields a scheme has, not for large or badly scaled matrices.
 */
export function eigenvalues(m: CMatrix): [number, number][] {
  const { n, re, im } = m;
  if (n === 0) return [];
  if (n === 1) return [[re[0], im[0]]];
  if (n === 2) {
    const tr: [number, number] = [re[0] + re[3], im[0] + im[3]];
    const ad = cmul(re[0], im[0], re[3], im[3]);
    const bc = cmul(re[1], im[1], re[2], im[2]);
    const det: [number, number] = [ad[0] - bc[0], ad[1] - bc[1]];
    const t2 = cmul(tr[0], tr[1], tr[0], tr[1]);
    const s = csqrt(t2[0] - 4 * det[0], t2[1] - 4 * det[1]);
    return [
      [(tr[0] + s[0]) / 2, (tr[1] + s[1]) / 2],
      [(tr[0] - s[0]) / 2, (tr[1] - s[1]) / 2],
    ];
  }
  // Fields that do not feed back into each other give a block-triangular matrix (after reordering): its eigenvalues
  // are those of the diagonal blocks, which are found exactly for 1×1 and 2×2 blocks. This keeps repeated
  // eigenvalues of uncoupled or one-way-coupled fields exact, where polynomial root iteration loses half or more
  // of the digits (a triple root comes out only to about 1e-5).
  const blocks = components(m);
  if (blocks.length > 1) return blocks.flatMap((b) => eigenvalues(submatrix(m, b)));
  return polyRoots(charPoly(m));
}

/** Strongly connected components of the graph "entry (i, j) is not zero" (Tarjan's algorithm). */
function components(m: CMatrix): number[][] {
  const { n, re, im } = m;
  const index = new Array<number>(n).fill(-1);
  const low = new Array<number>(n).fill(0);
  const onStack = new Array<boolean>(n).fill(false);
  const stack: number[] = [];
  const out: number[][] = [];
  let next = 0;
  const visit = (v: number): void => {
    index[v] = low[v] = next++;
    stack.push(v);
    onStack[v] = true;
    for (let w = 0; w < n; w++) {
      if (w === v || (re[v * n + w] === 0 && im[v * n + w] === 0)) continue;
      if (index[w] < 0) {
        visit(w);
        low[v] = Math.min(low[v], low[w]);
      } else if (onStack[w]) low[v] = Math.min(low[v], index[w]);
    }
    if (low[v] === index[v]) {
      const comp: number[] = [];
      let w: number;
      do {
        w = stack.pop()!;
        onStack[w] = false;
        comp.push(w);
      } while (w !== v);
      out.push(comp.sort((a, b) => a - b));
    }
  };
  for (let v = 0; v < n; v++) if (index[v] < 0) visit(v);
  return out;
}

function submatrix(m: CMatrix, rows: readonly number[]): CMatrix {
  const k = rows.length;
  const s = cmatrix(k);
  for (let a = 0; a < k; a++) {
    for (let b = 0; b < k; b++) {
      s.re[a * k + b] = m.re[rows[a] * m.n + rows[b]];
      s.im[a * k + b] = m.im[rows[a] * m.n + rows[b]];
    }
  }
  return s;
}

/** Coefficients c[0..n] of det(λI − A) = λ^n + c[1] λ^(n−1) + … + c[n], c[0] = 1 (Faddeev–LeVerrier). */
function charPoly(m: CMatrix): [number, number][] {
  const { n, re, im } = m;
  const c: [number, number][] = [[1, 0]];
  // M_k = A·M_{k−1} + c_{k−1} I, c_k = −tr(A·M_k)/k, starting from M_0 = 0.
  let mr = new Float64Array(n * n);
  let mi = new Float64Array(n * n);
  for (let k = 1; k <= n; k++) {
    const nr = new Float64Array(n * n);
    const ni = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        let sr = i === j ? c[k - 1][0] : 0;
        let si = i === j ? c[k - 1][1] : 0;
        for (let l = 0; l < n; l++) {
          const p = cmul(re[i * n + l], im[i * n + l], mr[l * n + j], mi[l * n + j]);
          sr += p[0];
          si += p[1];
        }
        nr[i * n + j] = sr;
        ni[i * n + j] = si;
      }
    }
    mr = nr;
    mi = ni;
    let tr = 0;
    let ti = 0;
    for (let i = 0; i < n; i++) {
      for (let l = 0; l < n; l++) {
        const p = cmul(re[i * n + l], im[i * n + l], mr[l * n + i], mi[l * n + i]);
        tr += p[0];
        ti += p[1];
      }
    }
    c.push([-tr / k, -ti / k]);
  }
  return c;
}

function polyRoots(c: [number, number][]): [number, number][] {
  const n = c.length - 1;
  let scale = 0;
  for (const [a, b] of c) scale = Math.max(scale, Math.hypot(a, b));
  const rad = 1 + scale;
  // Starting points on a circle at a generic angle, as the Weierstrass iteration needs distinct seeds.
  const z: [number, number][] = [];
  for (let i = 0; i < n; i++) {
    const a = (2 * Math.PI * i) / n + 0.4;
    z.push([rad * 0.9 * Math.cos(a), rad * 0.9 * Math.sin(a)]);
  }
  for (let iter = 0; iter < 500; iter++) {
    let moved = 0;
    for (let i = 0; i < n; i++) {
      let pr = c[0][0];
      let pi = c[0][1];
      for (let k = 1; k <= n; k++) {
        const t = cmul(pr, pi, z[i][0], z[i][1]);
        pr = t[0] + c[k][0];
        pi = t[1] + c[k][1];
      }
      let qr = 1;
      let qi = 0;
      for (let j = 0; j < n; j++) {
        if (j === i) continue;
        const t = cmul(qr, qi, z[i][0] - z[j][0], z[i][1] - z[j][1]);
        qr = t[0];
        qi = t[1];
      }
      if (qr === 0 && qi === 0) continue;
      const dz = cdiv(pr, pi, qr, qi);
      z[i] = [z[i][0] - dz[0], z[i][1] - dz[1]];
      moved = Math.max(moved, Math.hypot(dz[0], dz[1]));
    }
    if (moved <= 1e-15 * rad) break;
  }
  return z;
}

export function spectralRadius(m: CMatrix): number {
  let r = 0;
  for (const [a, b] of eigenvalues(m)) r = Math.max(r, Math.hypot(a, b));
  return r;
}
