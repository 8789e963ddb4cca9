/**
 * The engine worker's "design" request: where to sample next (src/core/design/design.ts), as plain data in
 * and out. The request handler registers it as one more request type:
 *   RequestPayloads.design = DesignRequestPayload, ResultPayloads.design = DesignResult,
 *   and in the dispatch: case 'design': return runDesignRequest(payload, progress);
 * Progress is reported in steps (area, evaluation points, candidates, each site).
 */
import { suggestSites, type DesignOptions, type DesignResult } from '../core/design/design.ts';
import { GapwiseError } from '../core/shared/errors.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { Samples } from '../core/shared/samples.ts';

/** What a design request carries (structured-clone safe). */
export interface DesignRequestPayload {
  /** Samples in the working CRS (data units). */
  samples: Samples;
  /** The fitted model, or null for a coverage design. */
  model: CovarianceModel | null;
  options: DesignOptions;
}

/**
 * Runs one design request. Throws GapwiseError for a malformed payload and whatever suggestSites
 * throws; the handler turns both into error messages.
 */
export function runDesignRequest(
  payload: DesignRequestPayload,
  progress: (done: number, total: number) => void = () => {},
  isCancelled?: () => boolean,
): DesignResult {
  const p = payload as Partial<DesignRequestPayload> | null;
  if (!p || typeof p !== 'object' || !p.samples || !p.samples.x || !p.samples.y || !p.samples.value) {
    throw new GapwiseError('bad-option', 'Expected the design request to carry samples with x, y and value arrays.');
  }
  if (!p.options || typeof p.options !== 'object') {
    throw new GapwiseError('bad-option', 'Expected the design request to carry options with at least a count.');
  }
  return suggestSites(p.samples, p.model ?? null, p.options, {
    onProgress: (done, total) => progress(done, total),
    isCancelled,
  });
}
