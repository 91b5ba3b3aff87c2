/**
 * The comparison as a table: one row per tested cell in the result's order
 * (q-value, then p-value, then label), shared by the text, CSV and HTML outputs.
 */
import type { TemplateComparison } from './compare.js';

export interface ComparisonColumn {
  /** CSV header and JSON-like key. */
  readonly key: string;
  /** Short heading for the text and HTML tables. */
  readonly heading: string;
  readonly numeric: boolean;
  /** Decimals shown in text and HTML (CSV keeps full precision). */
  readonly digits?: number;
  /** What the column means, with units. */
  readonly description: string;
}

export type ComparisonValue = string | number | null;

/** Columns and rows of the per-cell table. */
export function comparisonTable(result: TemplateComparison): { columns: ComparisonColumn[]; rows: ComparisonValue[][] } {
  const axes = ['x', 'y', 'z'].slice(0, result.dim);
  const pct = Math.round(result.level * 100);
  const columns: ComparisonColumn[] = [
    { key: 'label', heading: 'cell', numeric: false, description: 'cell label' },
    { key: 'count_a', heading: 'n A', numeric: true, digits: 0, description: 'observations of the cell in template A' },
    { key: 'count_b', heading: 'n B', numeric: true, digits: 0, description: 'observations of the cell in template B' },
    ...axes.map((a) => ({
      key: `d${a}_um`,
      heading: `d${a}`,
      numeric: true,
      digits: 2,
      description: `displacement from A to B along ${a}, µm, in A's frame`,
    })),
    { key: 'length_um', heading: 'length', numeric: true, digits: 2, description: 'length of the displacement, µm' },
    {
      key: 'length_low_um',
      heading: `${pct}% low`,
      numeric: true,
      digits: 2,
      description: `lower end of the ${pct}% confidence interval of the length, µm (projection of Hotelling's confidence ellipsoid)`,
    },
    { key: 'length_high_um', heading: `${pct}% high`, numeric: true, digits: 2, description: `upper end of the ${pct}% confidence interval of the length, µm` },
    { key: 't_squared', heading: 'T²', numeric: true, digits: 2, description: "Hotelling's two-sample T² statistic" },
    { key: 'f', heading: 'F', numeric: true, digits: 2, description: 'F statistic from T²' },
    { key: 'df1', heading: 'df1', numeric: true, digits: 0, description: 'numerator degrees of freedom' },
    { key: 'df2', heading: 'df2', numeric: true, digits: 1, description: 'denominator degrees of freedom' },
    { key: 'p_value', heading: 'p', numeric: true, digits: 4, description: 'p-value from the F distribution' },
    { key: 'q_value', heading: 'q', numeric: true, digits: 4, description: 'Benjamini-Hochberg adjusted p-value across the tested cells' },
    {
      key: 'alignment_weight',
      heading: 'align w',
      numeric: true,
      digits: 2,
      description: 'weight of the cell in the robust alignment, 0 to 1 (0: treated as displaced and left out of the alignment)',
    },
  ];
  const rows = result.cells.map((c) => [
    c.label,
    c.countA,
    c.countB,
    ...c.displacement,
    c.length,
    c.lengthInterval[0],
    c.lengthInterval[1],
    c.tSquared,
    c.f,
    c.df1,
    c.df2,
    c.pValue,
    c.qValue,
    c.alignmentWeight,
  ]);
  return { columns, rows };
}
