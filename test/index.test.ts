import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

describe('the public API (src/index.ts)', () => {
  it('exports exactly the pinned list of runtime names', async () => {
    const api = await import('../src/index.js');
    expect(Object.keys(api).sort()).toEqual(
      [
        'TEMPLATE_FORMAT', 'TEMPLATE_VERSION', 'InputError', 'FitError', 'UsageError', 'isCairnError', 'createRng', 'VERSION',
        'fitSimilarity', 'fitRigid', 'fitAffine', 'fitTransform',
        'applyTransform', 'applyToPoint', 'composeTransforms', 'invertTransform', 'identityTransform',
        'cholesky', 'logDeterminant', 'precisionMatrix', 'mahalanobisSquared', 'mahalanobisDistance', 'sampleCovariance',
        'readSamples', 'parseSamplesCsv', 'parseSamplesJson', 'parseVoxelSize', 'readTemplate', 'parseTemplate', 'serializeTemplate',
        'writeFileAtomic', 'formatCsv', 'formatMatchCsv',
        'buildTemplate', 'addToTemplate', 'checkHandLabels', 'predictiveCovariance', 'sampleHash', 'DEFAULT_SETTINGS',
        'matchSample', 'solveAssignment', 'assignWithAbstention', 'alignIcp', 'alignCpd',
        'crossValidate', 'chooseHitRadius', 'accuracyReport', 'calibrationTable', 'expectedCalibrationError',
        'compareTemplates',
        'chiSquareCdf', 'chiSquareQuantile', 'fCdf', 'fSurvival', 'benjaminiHochberg',
        'describeCells', 'templateFigureSvg', 'spreadChartSvg', 'matchedSampleFigureSvg', 'renderHtmlReport', 'proposalCautions',
      ].sort(),
    );
  });

  it('has no side effects on import: a process that only imports the built library prints nothing and exits 0', () => {
    // Uses the build from `npm test` (npm run build runs first).
    const r = spawnSync(process.execPath, ['--input-type=module', '-e', "await import('./dist/index.js')"], {
      cwd: fileURLToPath(new URL('..', import.meta.url)),
      encoding: 'utf8',
    });
    expect({ status: r.status, stdout: r.stdout, stderr: r.stderr }).toEqual({ status: 0, stdout: '', stderr: '' });
  });

  it('reports the same version as package.json', async () => {
    const { VERSION } = await import('../src/index.js');
    const pkg = JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8')) as { version: string };
    expect(VERSION).toBe(pkg.version);
  });
});
