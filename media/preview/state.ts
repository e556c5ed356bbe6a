// The webview's remembered UI state (vscode.setState / getState): view mode, step, zoom and pan, picked pixel and
// profile row (knob values and the input are remembered by the host, per file). DOM-free; `restoreState` accepts anything and keeps only well-formed fields,
// since the stored object may come from an older version of the panel.

import type { ViewMode } from './viewModel';

export interface UiState {
  readonly version: 1;
  /** The scheme document this state belongs to (the serializer reopens the panel for it). */
  readonly source: string;
  readonly view: ViewMode;
  readonly step: number;
  readonly zoom: { readonly scale: number; readonly offsetX: number; readonly offsetY: number } | null;
  readonly picked: { readonly x: number; readonly y: number } | null;
  readonly row: number | null;
}

export function initialState(source: string): UiState {
  return { version: 1, source, view: 'now', step: -1, zoom: null, picked: null, row: null };
}

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const fin = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);
const nat = (v: unknown): v is number => fin(v) && Number.isInteger(v) && v >= 0;

/** The stored state if it is for this document, cleaned field by field; a fresh state otherwise. */
export function restoreState(raw: unknown, source: string): UiState {
  const s = initialState(source);
  if (!isObj(raw) || raw.version !== 1 || raw.source !== source) return s;
  const view = raw.view === 'now' || raw.view === 'start' || raw.view === 'change' || raw.view === 'influence' ? raw.view : s.view;
  const step = fin(raw.step) && Number.isInteger(raw.step) && raw.step >= -1 ? raw.step : s.step;
  const z = raw.zoom;
  const zoom = isObj(z) && fin(z.scale) && z.scale > 0 && fin(z.offsetX) && fin(z.offsetY) ? { scale: z.scale, offsetX: z.offsetX, offsetY: z.offsetY } : null;
  const p = raw.picked;
  const picked = isObj(p) && nat(p.x) && nat(p.y) ? { x: p.x, y: p.y } : null;
  const row = nat(raw.row) ? raw.row : null;
  return { version: 1, source, view, step, zoom, picked, row };
}
