/**
 * Unconditional Gaussian fields on a regular lattice by circulant embedding and the FFT.
 *
 * Method (Wood & Chan 1994, J. Comput. Graph. Stat. 3:409; Dietrich & Newsam 1997, SIAM J. Sci.
 * Comput. 18:1088): the covariance matrix of an nx × ny lattice with spacing h is block Toeplitz with
 * Toeplitz blocks. It is embedded in the block-circulant matrix of a periodic mx × my torus
 * (mx ≥ 2nx, my ≥ 2ny) whose first row is the "base"
 *   c[b, a] = C(s_a·h east, −s_b·h north),  s_a = a for a < mx/2, a − mx for a > mx/2
 * (lattice rows run south, so a row offset b is −b·h in northing). Signed offsets keep anisotropic
 * models right (C(dx, dy) ≠ C(dx, −dy)); at a = mx/2 (and b = my/2) both signs are averaged so the
 * base stays symmetric, c[−b, −a] = c[b, a]. Because mx ≥ 2nx, every lag between two lattice nodes
 * is strictly shorter than half the torus, so the torus covariance of the nodes is exactly the
 * model's. The eigenvalues of a block-circulant matrix are the 2-D DFT of its base, λ = FFT2(c)
 * (real: c is real and even). When every λ ≥ 0, with ξ = a + ib (a, b independent N(0, I)),
 *   y = FFT2(√(λ/M) ∘ ξ),  M = mx·my,
 * has E[y y*] = 2C and E[y yᵀ] = 0, so Re y and Im y are two independent exact N(0, C) fields; the
 * lattice values are the top-left nx × ny corner.
 * Negative eigenvalues: smooth covariances with a range long against the lattice (gaussian, Matérn
 * with large ν) give a base that is not positive definite at the minimal size. Setting λ⁻ to 0
 * changes every covariance by at most ε·C(0), with ε = Σ|λ⁻| / (M·C(0)) (the diagonal of the
 * truncated matrix grows by exactly that much). We therefore pad: while ε > 1e-8 (far below anything
 * a map shows, yet well above FFT round-off of about 1e-16·M), both sides grow by ×1.5 to the next
 * 2^a·3^b·5^c length, and each enlargement is reported as a warning. Padding works because the base
 * then reaches lags where the covariance has decayed (Dietrich & Newsam 1997 give conditions).
 * A size cap (default 2²² torus nodes, 64 MB for the complex work arrays) bounds memory: if ε is
 * still above 1e-8 there, negative eigenvalues are set to 0 when ε ≤ maxNegativeFraction
 * (default 1e-3: covariances off by at most 0.1 % of the sill, stated in a warning with the actual
 * ε), and otherwise the embedding fails with a GapwiseError that says what to change (a coarser
 * cell, a smaller area, or a rougher model). The cap, not a silent approximation, is the limit.
 * Units: metres, data units². Cost: one FFT2 of M for the eigenvalues per size tried, then one
 * FFT2 (≈ 5·M·log₂M flops) and 2M normals per pair of fields; memory ≈ 24·M bytes.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import { GapwiseError, type Warning } from '../shared/errors.ts';
import { effectiveDistance, surfaceCovariance, surfaceVariance } from '../covariance/covariance.ts';
import { createFft2Plan, nextFastLength, type Fft2Plan } from './fft.ts';
import type { Random } from '../shared/random.ts';

/** Default cap on torus nodes (mx·my). */
const DEFAULT_MAX_EMBEDDING = 1 << 22;
/** Relative covariance error ε accepted without comment (round-off level). */
const EMBEDDING_TOLERANCE = 1e-8;

/** A lattice of nx columns (east) by ny rows (south) with spacing h metres. */
export interface Lattice {
  nx: number;
  ny: number;
  spacing: number;
}

export interface EmbeddingOptions {
  /** Most torus nodes mx·my (default 2²²). */
  maxCells?: number;
  /** Largest ε accepted by truncating negative eigenvalues at the cap (default 1e-3). */
  maxNegativeFraction?: number;
}

export interface CirculantEmbedding extends Lattice {
  /** Torus size. */
  mx: number;
  my: number;
  /** √(max(λ, 0)/M) per frequency, row-major my × mx. */
  scale: Float64Array;
  /** The smallest eigenvalue relative to the largest (negative when truncated or tolerated). */
  minEigenRatio: number;
  /** ε = Σ|λ⁻|/(M·C(0)): bound on the relative covariance error from zeroing λ⁻ (≤ 1e-8 normally). */
  negativeFraction: number;
  /** Enlargements made beyond the minimal torus. */
  paddingSteps: number;
  warnings: Warning[];
}

function signedOffsets(a: number, m: number): number[] {
  if (2 * a === m) return [a, -a];
  return [a < m / 2 ? a : a - m];
}

/**
 * The base (first row) of the block-circulant embedding on an mx × my torus with spacing h:
 * c[b·mx + a] = C(s_a·h, −s_b·h), noise-free (no nugget), both signs averaged at the halfway lags.
 */
export function embeddingBase(model: CovarianceModel, mx: number, my: number, spacing: number): Float64Array {
  const c = new Float64Array(mx * my);
  const aniso = model.anisotropy;
  for (let b = 0; b < my; b++) {
    const sb = signedOffsets(b, my);
    for (let a = 0; a < mx; a++) {
      const sa = signedOffsets(a, mx);
      let s = 0;
      for (const i of sa) for (const j of sb) s += surfaceCovariance(model, effectiveDistance(i * spacing, -j * spacing, aniso));
      c[b * mx + a] = s / (sa.length * sb.length);
    }
  }
  return c;
}

/** Eigenvalues of the block-circulant matrix with this base: the real part of its 2-D DFT. */
export function embeddingEigenvalues(base: Float64Array, mx: number, my: number, plan?: Fft2Plan): Float64Array {
  const re = Float64Array.from(base);
  const im = new Float64Array(base.length);
  (plan ?? createFft2Plan(mx, my)).transform(re, im);
  return re;
}

function checkLattice(l: Lattice): void {
  if (!(Number.isInteger(l.nx) && l.nx >= 1 && Number.isInteger(l.ny) && l.ny >= 1)) {
    throw new GapwiseError('bad-option', `Expected a lattice of at least 1 × 1 nodes, got ${l.nx} × ${l.ny}.`);
  }
  if (!(Number.isFinite(l.spacing) && l.spacing > 0)) {
    throw new GapwiseError('bad-option', `Expected a lattice spacing above 0 m, got ${l.spacing}.`);
  }
}

/**
 * Finds a torus on which the model's covariance of the lattice embeds with non-negative eigenvalues
 * (padding as needed, see the file header) and prepares √(λ/M). Throws GapwiseError
 * ('bad-option' for a bad lattice or a lattice larger than the cap, 'not-positive-definite' when no
 * torus within the cap works).
 */
export function createCirculantEmbedding(model: CovarianceModel, lattice: Lattice, options: EmbeddingOptions = {}): CirculantEmbedding {
  checkLattice(lattice);
  const c0 = surfaceVariance(model);
  if (!(c0 > 0)) throw new GapwiseError('bad-model', `Expected a model with a correlated structure of positive sill to simulate, got a total surface sill of ${c0}.`);
  const maxCells = options.maxCells ?? DEFAULT_MAX_EMBEDDING;
  const maxNegative = options.maxNegativeFraction ?? 1e-3;
  const { nx, ny, spacing } = lattice;
  let mx = nextFastLength(2 * nx);
  let my = nextFastLength(2 * ny);
  if (mx * my > maxCells) {
    throw new GapwiseError('bad-option',
      `The simulation lattice of ${nx} × ${ny} nodes needs a torus of at least ${mx} × ${my} = ${(mx * my).toLocaleString('en')} nodes; the most is ${maxCells.toLocaleString('en')}: choose a larger cell or a smaller area.`);
  }
  const warnings: Warning[] = [];
  const first = { mx, my };
  let steps = 0;
  for (;;) {
    const M = mx * my;
    const lambda = embeddingEigenvalues(embeddingBase(model, mx, my, spacing), mx, my);
    let negative = 0;
    let min = Infinity;
    let max = -Infinity;
    for (let k = 0; k < M; k++) {
      const l = lambda[k];
      if (l < 0) negative -= l;
      if (l < min) min = l;
      if (l > max) max = l;
    }
    const eps = negative / (M * c0);
    const nextX = nextFastLength(Math.ceil(1.5 * mx));
    const nextY = nextFastLength(Math.ceil(1.5 * my));
    const canGrow = nextX * nextY <= maxCells;
    if (eps <= EMBEDDING_TOLERANCE || !canGrow) {
      if (eps > EMBEDDING_TOLERANCE) {
        if (eps > maxNegative) {
          throw new GapwiseError('not-positive-definite',
            `The covariance cannot be embedded for FFT simulation within ${maxCells.toLocaleString('en')} torus nodes: at ${mx} × ${my} the negative eigenvalues would change covariances by up to ${(100 * eps).toPrecision(2)} % of the sill (at most ${(100 * maxNegative).toPrecision(2)} % is accepted); choose a larger cell, a smaller area, or a model whose range is shorter than the area.`);
        }
        warnings.push({
          code: 'embedding-truncated',
          message: `The simulation grid reached its size limit (${mx} × ${my} nodes) before it could reproduce the model exactly: simulated covariances may differ from the model by up to ${(100 * eps).toPrecision(2)} % of the sill; a larger cell or a smaller area avoids this.`,
        });
      }
      if (steps > 0) {
        warnings.push({
          code: 'embedding-padded',
          message: `The simulation grid was enlarged from ${first.mx} × ${first.my} to ${mx} × ${my} nodes so that the realisations reproduce the model's covariance: the range is long compared with the area, which makes the drawing slower.`,
        });
      }
      const scale = new Float64Array(M);
      for (let k = 0; k < M; k++) scale[k] = lambda[k] > 0 ? Math.sqrt(lambda[k] / M) : 0;
      return { nx, ny, spacing, mx, my, scale, minEigenRatio: min / max, negativeFraction: eps, paddingSteps: steps, warnings };
    }
    mx = nextX;
    my = nextY;
    steps++;
  }
}

/** Draws fields from an embedding, two per FFT. */
export interface FieldSampler {
  readonly embedding: CirculantEmbedding;
  /**
   * Writes two independent N(0, C) lattice fields (nx·ny values each, row-major from the north-west
   * node) into `first` and `second`.
   */
  pair(random: Random, first: Float64Array, second: Float64Array): void;
}

/** A sampler with its own FFT plan and work arrays (24·M bytes). */
export function createFieldSampler(embedding: CirculantEmbedding): FieldSampler {
  const { mx, my, nx, ny, scale } = embedding;
  const M = mx * my;
  const plan = createFft2Plan(mx, my);
  const re = new Float64Array(M);
  const im = new Float64Array(M);
  return {
    embedding,
    pair(random: Random, first: Float64Array, second: Float64Array): void {
      if (first.length < nx * ny || second.length < nx * ny) {
        throw new RangeError(`Expected output arrays of at least ${nx * ny} values, got ${first.length} and ${second.length}.`);
      }
      for (let k = 0; k < M; k++) {
        const s = scale[k];
        re[k] = s * random.normal();
        im[k] = s * random.normal();
      }
      plan.transform(re, im);
      for (let j = 0; j < ny; j++) {
        const o = j * mx;
        const p = j * nx;
        for (let i = 0; i < nx; i++) {
          first[p + i] = re[o + i];
          second[p + i] = im[o + i];
        }
      }
    },
  };
}
