/**
 * Step 3, Surface, covariate rasters: one GeoTIFF per covariate of a model with covariates, read and
 * checked (its CRS must reproject to the working one) before it replaces that covariate's raster; the
 * files are autosaved beside the session and read again, checked as new ones, after a reload.
 */
import { createTransform } from '../../io/crs.ts';
import type { CovariateRaster } from '../../io/covariate-raster.ts';
import { missingRasters } from './covariate-grid.ts';
import { MAX_SAVED_RASTER_BYTES, type SavedRaster } from './autosave.ts';
import { showError, type ShownError } from './shown-error.ts';
import type { Session } from './session.svelte.ts';

export class RastersState {
  /** Covariate rasters loaded in the Surface step, one per covariate (their files autosaved beside the session, read again on a reload). */
  covariateRasters = $state.raw<CovariateRaster[]>([]);
  /** The files of `covariateRasters` as loaded (what the autosave keeps). */
  rasterFiles = $state.raw<SavedRaster[]>([]);
  /** A raster that could not be used, and why; the rasters in use are unchanged. */
  rasterError = $state.raw<{ fileName: string; error: ShownError } | null>(null);
  /** The covariate raster shown as a map layer of its own (by covariate name), or null. */
  covariateLayer = $state<string | null>(null);

  constructor(private readonly app: Session) {}

  /** Covariates of the model in use that have no raster yet (empty for a model without covariates). */
  get missingRasters(): string[] {
    return missingRasters(this.app.s.structure.model, this.covariateRasters);
  }

  /**
   * Reads a covariate GeoTIFF for the covariate `name` (geotiff.js, on this thread); it replaces that
   * covariate's raster only when it reads and its CRS is known.
   */
  async loadCovariateRaster(name: string, fileName: string, bytes: Uint8Array): Promise<ShownError | null> {
    try {
      const { readCovariateRaster } = await import('../../io/covariate-raster.ts');
      const raster = await readCovariateRaster(bytes, name, fileName);
      // Checks the raster's CRS can be reprojected to the working one before it is taken.
      const work = this.app.samples.intake?.report.crs.work;
      if (work) createTransform(raster.crs, work);
      this.covariateRasters = [...this.covariateRasters.filter((r) => r.name !== name), raster];
      const kept = bytes.length <= MAX_SAVED_RASTER_BYTES ? [{ name, fileName, bytes: bytes.slice() }] : [];
      this.rasterFiles = [...this.rasterFiles.filter((r) => r.name !== name), ...kept];
      this.rasterError = null;
      return null;
    } catch (e) {
      const error = showError(e);
      this.rasterError = { fileName, error };
      return error;
    }
  }

  removeCovariateRaster(name: string): void {
    this.covariateRasters = this.covariateRasters.filter((r) => r.name !== name);
    this.rasterFiles = this.rasterFiles.filter((r) => r.name !== name);
    if (this.covariateLayer === name) this.covariateLayer = null;
  }

  /**
   * Reads the saved covariate raster files again (so each is checked as a new one would be); a file
   * that no longer reads is dropped and named in `rasterError`.
   */
  async restoreRasters(files: SavedRaster[]): Promise<void> {
    if (files.length === 0) return;
    this.rasterFiles = files;
    const failed: string[] = [];
    for (const f of files) {
      const error = await this.loadCovariateRaster(f.name, f.fileName, f.bytes);
      if (error) failed.push(`${f.fileName} (${f.name}): ${error.message}`);
    }
    if (failed.length > 0) {
      this.rasterFiles = this.rasterFiles.filter((f) => this.covariateRasters.some((r) => r.name === f.name));
      this.rasterError = {
        fileName: failed.length === 1 ? files.find((f) => !this.covariateRasters.some((r) => r.name === f.name))!.fileName : `${failed.length} saved rasters`,
        error: { message: `The saved covariate raster could not be read again, so it was dropped: ${failed.join('; ')}. Expected a raster that reads as when it was loaded; load it again.` },
      };
    }
  }

  /** Forgets every raster (start over). */
  clearRasters(): void {
    this.covariateRasters = [];
    this.rasterFiles = [];
    this.covariateLayer = null;
    this.rasterError = null;
  }
}
