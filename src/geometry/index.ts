export * from './linear-algebra.js';
export * from './transform.js';
export * from './procrustes.js';
export * from './covariance.js';
