/**
 * Small dense linear algebra on row-major Float64Array with explicit dimensions (a[i*cols + j]).
 * Sizes up to a few hundred columns. Factorisations write into caller-provided arrays; failures are values.
 * This module only gathers the pieces kept in dense-*.ts and svd3.ts.
 */
export { identity, transpose, multiply, gram, mulVec, mulTransposeVec, norm2 } from './dense-ops.ts';
export { choleskyFactor, choleskySolve, choleskyInverse, luFactor, luSolve, luDeterminant } from './dense-factor.ts';
export type { FactorResult } from './dense-factor.ts';
export { leastSquares } from './dense-qr.ts';
export type { LeastSquaresResult } from './dense-qr.ts';
export { symmetricEigen } from './dense-eigen.ts';
export type { EigenResult } from './dense-eigen.ts';
export { svd } from './dense-svd.ts';
export type { SvdResult } from './dense-svd.ts';
export { svd3, nearestRotation } from './svd3.ts';
