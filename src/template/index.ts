/** Templates: co-registration, cell statistics, extension, hand-label checks. */
export { buildTemplate, type BuildResult } from './build.js';
export { addToTemplate, type AddOptions, type AddResult } from './extend.js';
export { checkHandLabels } from './hand-labels.js';
export { predictiveCovariance, predictiveCutoff, type FlagReference } from './cell-statistics.js';
export { sampleHash } from './sample-hash.js';
export { DEFAULT_SETTINGS, type BuildOptions, type RobustMethod } from './settings.js';
export type { IterationDiagnostics, SkippedSample } from './co-register.js';
