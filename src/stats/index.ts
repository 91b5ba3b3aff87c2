export * from './gamma.js';
export * from './beta.js';
export * from './distributions.js';
export * from './multiple-testing.js';
