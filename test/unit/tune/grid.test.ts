// Unit tests for sweep grids (src/tune/grid.ts): --vary syntax, declared-range checks, grid order and --free.
import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation';
import { expandGrid, GridError, linspace, parseFree, parseVary } from '../../../src/tune/grid';

const scheme = parseAndCheck(`grid 2d
param K = 0.06 in [0.005, 0.5]
param sigma = 1 in [0, 3]
param free = 2
step dt = 0.2 in [0.02, 0.3]
steps 10
field u = image
diffusivity g(s) = 1 / (1 + (s / K)^2)
let w = blur(u, sigma)
u' = u + dt * free / 2 * sum n in N4: g(w[n] - w) * (u[n] - u)
`).scheme!;

describe('--vary', () => {
  it('parses NAME=LO:HI:COUNT into evenly spaced values with exact ends', () => {
    const a = parseVary(scheme, 'K=0.01:0.2:20');
    expect(a.values.length).toBe(20);
    expect(a.values[0]).toBe(0.01);
    expect(a.values[19]).toBe(0.2);
    for (let i = 1; i < 20; i++) expect(Math.abs(a.values[i] - a.values[i - 1] - 0.01), `gap ${i}`).toBeLessThan(1e-12);
    expect(parseVary(scheme, 'dt=0.02:0.3:8').values[3]).toBe(0.14); // rounded to 12 digits, not 0.13999999999999999
    expect(parseVary(scheme, ' sigma = 0 : 2 : 5 ').values).toEqual([0, 0.5, 1, 1.5, 2]);
    expect(linspace(3, 3, 1)).toEqual([3]);
  });

  it('refuses values outside the declared range, unknown names and bad syntax, naming the problem', () => {
    expect(() => parseVary(scheme, 'K=0.001:0.2:5')).toThrow(/outside the declared range \[0\.005, 0\.5\] of K/);
    expect(() => parseVary(scheme, 'dt=0.1:0.4:5')).toThrow(/outside the declared range \[0\.02, 0\.3\] of dt/);
    expect(() => parseVary(scheme, 'lambda=0:1:3')).toThrow(/no parameter 'lambda' \(tunable: K, sigma, free, dt\)/);
    expect(() => parseVary(scheme, 'K=0.01:0.2')).toThrow(GridError);
    expect(() => parseVary(scheme, 'K=0.2:0.01:5')).toThrow(/must not exceed/);
    expect(() => parseVary(scheme, 'K=0.1:0.1:3')).toThrow(/COUNT must be 1/);
    expect(() => parseVary(scheme, 'K=0.01:0.2:0')).toThrow(/COUNT must be 1 to 1000/);
    // A param without a declared range takes any value.
    expect(parseVary(scheme, 'free=-5:5:3').values).toEqual([-5, 0, 5]);
  });

  it('expands two axes with the first one slowest', () => {
    const g = expandGrid([parseVary(scheme, 'K=0.1:0.2:2'), parseVary(scheme, 'sigma=0:2:3')]);
    expect(g).toEqual([
      { K: 0.1, sigma: 0 }, { K: 0.1, sigma: 1 }, { K: 0.1, sigma: 2 },
      { K: 0.2, sigma: 0 }, { K: 0.2, sigma: 1 }, { K: 0.2, sigma: 2 },
    ]);
    expect(expandGrid([])).toEqual([{}]);
  });
});

describe('--free', () => {
  it('takes declared ranges and starts from the declared values', () => {
    expect(parseFree(scheme, 'K, sigma,dt')).toEqual([
      { name: 'K', lo: 0.005, hi: 0.5, value: 0.06 },
      { name: 'sigma', lo: 0, hi: 3, value: 1 },
      { name: 'dt', lo: 0.02, hi: 0.3, value: 0.2 },
    ]);
  });
  it('refuses names without a range, repeats and empty lists', () => {
    expect(() => parseFree(scheme, 'free')).toThrow(/declares no range for free/);
    expect(() => parseFree(scheme, 'K,K')).toThrow(/twice/);
    expect(() => parseFree(scheme, ' , ')).toThrow(/comma-separated/);
  });
});
