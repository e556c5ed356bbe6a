// docs/why.md states every bundled example's modified-equation summary (issue acceptance): keep those lines equal
// to what the analysis prints, so the page never drifts from the code.
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation';
import { modifiedEquation } from '../../../src/analysis/modifiedEquation';

const ROOT = join(__dirname, '../../..');

describe('docs/why.md', () => {
  it('states every example\'s summary exactly as modifiedEquation gives it', () => {
    const doc = readFileSync(join(ROOT, 'docs/why.md'), 'utf8');
    const files = readdirSync(join(ROOT, 'examples')).filter((f) => f.endsWith('.fluxel'));
    expect(files.length).toBeGreaterThan(5);
    for (const f of files) {
      const s = parseAndCheck(readFileSync(join(ROOT, 'examples', f), 'utf8')).scheme!;
      const summary = modifiedEquation(s).summary.replace(/^approximates /, '');
      expect(doc, f).toContain(`- \`${f}\`: ${summary}\n`);
    }
  });
});
