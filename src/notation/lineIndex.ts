// Maps offsets in a text to 1-based line and UTF-16 column positions, for ranges in diagnostics.
// Pure: no imports.

import type { Position, SourceRange } from './ast';

export class LineIndex {
  private readonly starts: number[] = [0];
  readonly length: number;

  constructor(text: string) {
    this.length = text.length;
    for (let i = 0; i < text.length; i++) {
      const c = text.charCodeAt(i);
      if (c === 10) this.starts.push(i + 1);
      else if (c === 13) {
        if (text.charCodeAt(i + 1) === 10) i++;
        this.starts.push(i + 1);
      }
    }
  }

  position(offset: number): Position {
    const o = Math.max(0, Math.min(offset, this.length));
    let lo = 0;
    let hi = this.starts.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (this.starts[mid] <= o) lo = mid;
      else hi = mid - 1;
    }
    return { offset: o, line: lo + 1, column: o - this.starts[lo] + 1 };
  }

  range(start: number, end: number): SourceRange {
    return { start: this.position(start), end: this.position(Math.max(start, end)) };
  }
}
