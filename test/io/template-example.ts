/**
 * Hand-made templates for the template-file tests: small, invented cells
 * (VLa1, VLa2, DRb1), numbers chosen to exercise the serializer (negative
 * values, fractions that are not exact in binary, very small and large
 * magnitudes). Not the output of any fit.
 */
import type { Template } from '../../src/types.js';

export function exampleTemplate2d(): Template {
  return {
    format: 'cairn-template',
    version: 1,
    dim: 2,
    units: 'um',
    cells: [
      {
        label: 'VLa1',
        mean: [-3.25, 0.1],
        covariance: [
          [2.5, 0.3],
          [0.3, 1.2],
        ],
        count: 4,
        sum: [-13, 0.4],
        sumOfSquares: [
          [52.1, -1.3],
          [-1.3, 4.84],
        ],
        sparse: false,
      },
      {
        label: 'DRb1, left',
        mean: [7.000000000000001, 1e-7],
        covariance: [
          [1.5e-3, 0],
          [0, 123456.789],
        ],
        count: 1,
        sum: [7.000000000000001, 1e-7],
        sumOfSquares: [
          [49, 0],
          [0, 1e-14],
        ],
        sparse: true,
      },
    ],
    members: [
      {
        id: 'animal-a',
        hash: '0'.repeat(63) + 'f',
        transform: {
          kind: 'similarity',
          linear: [
            [0.8, -0.6],
            [0.6, 0.8],
          ],
          translation: [1.5, -2],
        },
        residual: 0.25,
        labelled: 2,
        positions: [
          { label: 'VLa1', coords: [-3, 0] },
          { label: 'DRb1, left', coords: [7, 0.5] },
        ],
      },
    ],
    pooledCovariance: [
      [2, 0.1],
      [0.1, 1],
    ],
    settings: {
      tolerance: 1e-6,
      maxIterations: 100,
      alignment: 'similarity',
      minCount: 3,
      priorStrength: 4,
      flagProbability: 0.001,
      robust: 'tukey-biweight',
    },
    flagged: [{ sample: 'animal-a', row: 7, label: 'VLa1', distance: 4.5, likelierLabel: null, likelierDistance: null }],
    tool: { name: 'cairn', version: '0.1.0' },
    created: '2026-12-01T23:30:00.000Z',
  };
}

export function exampleTemplate3d(): Template {
  return {
    format: 'cairn-template',
    version: 1,
    dim: 3,
    units: 'um',
    cells: [
      {
        label: 'MPc1',
        mean: [1, 2, 3],
        covariance: [
          [4, 1, 0.5],
          [1, 3, 0.25],
          [0.5, 0.25, 2],
        ],
        count: 12,
        sum: [12, 24, 36],
        sumOfSquares: [
          [60, 30, 40],
          [30, 84, 72],
          [40, 72, 132],
        ],
        sparse: false,
      },
    ],
    members: [],
    pooledCovariance: [
      [1, 0, 0],
      [0, 1, 0],
      [0, 0, 1],
    ],
    settings: {
      tolerance: 0.01,
      maxIterations: 50,
      alignment: 'affine',
      minCount: 0,
      priorStrength: 0,
      flagProbability: 0.05,
      robust: 'trim',
    },
    flagged: [{ sample: 'animal-b', row: 3, label: 'MPc1', distance: 5.25, likelierLabel: 'VLa2', likelierDistance: 1.5 }],
    tool: { name: 'cairn', version: '0.1.0' },
  };
}
