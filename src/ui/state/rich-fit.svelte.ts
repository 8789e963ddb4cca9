/**
 * The Structure step's richer fit: the candidate in use refitted with a range that depends on
 * direction (a fitted anisotropy) or with two ranges (short and long structures), in a worker, with
 * progress, one run at a time (LatestRequest: a newer run or new samples drop the older answer). The
 * model kept by the fit becomes the model in use; the simpler one stays at hand to switch back.
 */
import type { CovarianceModel } from '../../core/covariance/model.ts';
import type { Samples } from '../../core/shared/samples.ts';
import type { FitOptions } from '../../core/fitting/fit-options.ts';
import type { StructureFitResult } from '../../worker/protocol.ts';
import { GapwiseError } from '../../core/shared/errors.ts';

import { LatestRequest } from './latest-request.ts';
import { specByKey } from './structure.ts';
import { hasTwoRanges, structureChoiceOf, type RichChoice } from './rich-fit.ts';
import * as engine from './engine.ts';
import { MAX_EXACT_SAMPLES } from '../../core/shared/sizes.ts';

/** What the richer fit reads from the session (a narrow view, so this file needs nothing else of it). */
export interface RichFitSource {
  samples: Samples | null;
  transform: 'none' | 'log';
  /** Key of the candidate in use (structure.ts CANDIDATE_SPECS) and its fitted model. */
  chosen: string;
  chosenModel: CovarianceModel | null;
  /** Reading id and transform: a result for other samples or another scale is not shown. */
  key: string;
}

export interface RichFitTask {
  status: 'idle' | 'running' | 'done' | 'error' | 'cancelled';
  /** 0..1. */
  fraction: number;
  error: string | null;
}

export interface RichFitOutcome {
  choice: Exclude<RichChoice, 'none'>;
  /** The candidate refitted (its label). */
  base: string;
  /** RichFitSource.key of the samples it was fitted to. */
  key: string;
  result: StructureFitResult;
}

/** The fit options for a richer fit of candidate `key` (REML; two ranges share the candidate's fitted ν). */
export function richFitOptions(key: string, choice: Exclude<RichChoice, 'none'>, fitted: CovarianceModel | null): FitOptions {
  const spec = specByKey(key);
  if (!spec) throw new GapwiseError('bad-option', 'Fit the candidate models first and choose one; the richer fit starts from it.');
  const options: FitOptions = { family: spec.family, method: 'reml' };
  if (spec.family === 'matern') {
    options.nu = spec.nu ?? 1.5;
    if (hasTwoRanges(choice) && options.nu === 'free') {
      const corr = fitted?.structures.find((s) => s.type === 'matern') as { nu?: number } | undefined;
      options.nu = corr?.nu ?? 1.5;
    }
  }
  return options;
}

export class RichFitState {
  /** Which richer fit the user asked for. */
  choice = $state<RichChoice>('none');
  task = $state<RichFitTask>({ status: 'idle', fraction: 0, error: null });
  outcome = $state.raw<RichFitOutcome | null>(null);
  private runs = new LatestRequest();

  /** Runs the chosen richer fit; on success its kept model is handed to `use`. */
  async run(src: RichFitSource, use: (model: CovarianceModel) => void): Promise<void> {
    const choice = this.choice;
    if (choice === 'none' || !src.samples) return;
    this.task = { status: 'running', fraction: 0, error: null };
    const samples = src.samples;
    const answer = await this.runs.run((run) => {
      const n = samples.x.length;
      if (n >= MAX_EXACT_SAMPLES) {
        throw new GapwiseError('bad-option', `A richer fit uses the exact likelihood, for fewer than ${MAX_EXACT_SAMPLES.toLocaleString('en-US')} samples; got ${n.toLocaleString('en-US')}.`);
      }
      const options = richFitOptions(src.chosen, choice, src.chosenModel);
      return engine.fitStructure(
        { samples, transform: src.transform, options, choice: structureChoiceOf(choice) },
        (done, total) => { if (run.current()) this.task = { ...this.task, fraction: total > 0 ? done / total : 0 }; },
        run.signal,
      );
    });
    if (answer.status === 'stale') return;
    if (answer.status !== 'done') {
      this.task = { status: answer.status, fraction: 0, error: answer.error.message };
      return;
    }
    this.outcome = { choice, base: specByKey(src.chosen)?.label ?? src.chosen, key: src.key, result: answer.value };
    this.task = { status: 'done', fraction: 1, error: null };
    use(answer.value.model);
  }

  cancel(): void {
    this.runs.cancel();
    this.task = { ...this.task, status: 'cancelled' };
  }

  /** Drops the result and any run (new samples or a new transform). */
  reset(): void {
    this.runs.cancel();
    this.outcome = null;
    this.task = { status: 'idle', fraction: 0, error: null };
  }
}
