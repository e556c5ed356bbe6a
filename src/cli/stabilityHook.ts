// The seam between `fluxel check` and the stability analysis (src/analysis). Until the analysis lands this reports nothing.

import type { CheckedScheme } from '../notation/scheme';
import type { Diagnostic } from '../notation/diagnostics';

export interface CheckStability {
  readonly report: unknown;
  readonly diagnostics: readonly Diagnostic[];
  readonly summary: string;
}

export function stabilityForCheck(_scheme: CheckedScheme): CheckStability | null {
  return null;
}
