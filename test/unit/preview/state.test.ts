// The webview's remembered state: only a state for the same document is restored, field by field.

import { describe, expect, it } from 'vitest';
import { initialState, restoreState } from '../../../media/preview/state';

const src = 'file:///w/a.fluxel';

describe('remembered UI state', () => {
  it('restores a well-formed state of the same document', () => {
    const s = { version: 1, source: src, view: 'change', step: 12, zoom: { scale: 4, offsetX: -10, offsetY: 3 }, picked: { x: 3, y: 4 }, row: 4 };
    expect(restoreState(s, src)).toEqual(s);
  });

  it('starts fresh for another document, another version or garbage', () => {
    expect(restoreState({ version: 1, source: 'file:///other', view: 'change' }, src)).toEqual(initialState(src));
    expect(restoreState({ version: 2, source: src }, src)).toEqual(initialState(src));
    expect(restoreState('x', src)).toEqual(initialState(src));
    expect(restoreState(undefined, src)).toEqual(initialState(src));
  });

  it('drops malformed fields and keeps the rest', () => {
    const s = restoreState({ version: 1, source: src, view: 'sideways', step: 2.5, zoom: { scale: -1, offsetX: 0, offsetY: 0 }, picked: { x: -1, y: 0 }, row: 7, knobs: { values: { K: 'x' }, dt: 0.1 } }, src);
    expect(s).toEqual({ ...initialState(src), row: 7 });
  });
});
