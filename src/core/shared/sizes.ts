/**
 * The one sample-count switch of the engine: the most samples it factorises whole (one n × n
 * Cholesky factor, n³/3 flops and 8·n² bytes) for work on the samples themselves — the exact REML/ML
 * likelihood, exact GLS coefficients, exact leave-one-out, the exact reference a local run is measured
 * against, and block kriging. From this many samples on, the automatic fit takes the nearest-neighbour
 * likelihood; above it, the nearest-neighbour and local-neighbourhood forms take over. Help texts quote
 * it from here. (Exact kriging at targets has its own, larger limit: EXACT_SAMPLE_LIMIT in
 * core/prediction/path-choice.ts.)
 */
export const MAX_EXACT_SAMPLES = 3000;
