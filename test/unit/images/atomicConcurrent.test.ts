// Minimised case of the nothing-lost campaign (test/hardening/nothing-lost.test.ts): writes of one file in the
// same millisecond shared a temporary name (pid + time), so their bytes mixed and a rename could put a half-written
// file in place. Each write now has its own temporary file.

import { mkdtempSync, readdirSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { writeFileAtomically } from '../../../src/images/files';

describe('writeFileAtomically with concurrent writers', () => {
  it('leaves exactly one writer\'s whole content and no temporary file', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'fluxel-atomic-'));
    const target = join(dir, 'out.pfm');
    const contents = Array.from({ length: 20 }, (_, j) => Buffer.alloc(100_000 + 5000 * j, 97 + j));
    await Promise.all(contents.map((c) => writeFileAtomically(target, c)));
    const final = readFileSync(target);
    expect(contents.some((c) => c.equals(final))).toBe(true);
    expect(readdirSync(dir)).toEqual(['out.pfm']);
  });
});
