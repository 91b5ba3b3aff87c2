/**
 * cairn's library API: the same functions the CLI uses. One line per concept;
 * test/index.test.ts pins this list.
 */

// Shared shapes, errors, randomness
export type { Dim, Points, Matrix, Sample, Transform, Template, TemplateCell, TemplateMember, FlaggedLabel, TemplateSettings } from './types.js';
export { TEMPLATE_FORMAT, TEMPLATE_VERSION } from './types.js';
export { InputError, FitError, UsageError, isCairnError } from './errors.js';
export { createRng, type Rng } from './random.js';
export { VERSION } from './version.js';

// Geometry: fits, transforms, covariances
export { fitSimilarity, fitRigid, fitAffine, fitTransform, type FitOptions, type FitResult } from './geometry/procrustes.js';
export { applyTransform, applyToPoint, composeTransforms, invertTransform, identityTransform } from './geometry/transform.js';
export { cholesky, logDeterminant, precisionMatrix, mahalanobisSquared, mahalanobisDistance, sampleCovariance } from './geometry/covariance.js';

// Input and output
export { readSamples, parseSamplesCsv, parseSamplesJson, parseVoxelSize, readTemplate, parseTemplate, serializeTemplate, writeFileAtomic, formatCsv, formatMatchCsv } from './io/index.js';

// Template: build, extend, check hand labels
export { buildTemplate, addToTemplate, checkHandLabels, predictiveCovariance, sampleHash, DEFAULT_SETTINGS, type BuildOptions, type BuildResult, type AddResult } from './template/index.js';

// Matching
export { matchSample, type MatchOptions, type MatchResult, type Proposal } from './match/match-sample.js';
export { solveAssignment, assignWithAbstention } from './match/assignment.js';
export { alignIcp } from './match/icp.js';
export { alignCpd } from './match/cpd.js';

// Evaluation
export { crossValidate, type CrossValidationOptions, type CrossValidationResult } from './evaluate/cross-validate.js';
export { chooseHitRadius } from './evaluate/hit-radius.js';
export { accuracyReport, calibrationTable, expectedCalibrationError, type AccuracyReport, type ScoredPoint } from './evaluate/metrics.js';

// Comparing templates
export { compareTemplates, type TemplateComparison } from './compare/compare.js';

// Statistics
export { chiSquareCdf, chiSquareQuantile, fCdf, fSurvival, benjaminiHochberg } from './stats/index.js';

// Reports
export { describeCells, type CellSummary } from './report/cell-table.js';
export { templateFigureSvg } from './report/svg/template-figure.js';
export { spreadChartSvg } from './report/svg/spread-chart.js';
export { matchedSampleFigureSvg } from './report/svg/matched-figure.js';
export { renderHtmlReport, proposalCautions, type ReportPage } from './report/html.js';
