/**
 * A static k-d tree over points in any (small) dimension, for exact
 * nearest-neighbour, k-nearest and fixed-radius queries.
 *
 * Construction: recursive median split along the coordinate of largest
 * spread (Friedman, Bentley & Finkel 1977, ACM TOMS 3(3):209-226), leaves of
 * at most 8 points; O(n log n) build, O(n) memory. Queries descend to the
 * nearer side first and visit the farther side only when the squared distance
 * to the splitting plane does not exceed the current bound, so results are
 * exact (not approximate).
 *
 * Conventions:
 * - distances are Euclidean; `distanceSquared` is the SQUARED distance;
 * - `withinRadius` takes the radius itself (not squared) and is inclusive:
 *   |x - q| <= r;
 * - ties between equidistant points go to the lower input index, so results
 *   are deterministic and equal to a brute-force scan with that tie rule.
 *
 * Errors: UsageError for ragged or non-finite points, a query of the wrong
 * length or with non-finite entries, k < 0 or non-integer, r < 0 or not finite;
 * FitError for `nearest` on an index with no points.
 */

import { FitError, UsageError } from '../errors.js';
import type { Points } from '../types.js';

/** One neighbour: its row in the input points and its squared distance to the query. */
export interface Neighbour {
  readonly index: number;
  readonly distanceSquared: number;
}

const LEAF_SIZE = 8;

export class PointIndex {
  /** Number of indexed points. */
  readonly size: number;
  /** Coordinates per point (0 when the index is empty). */
  readonly dim: number;
  /** Coordinates in tree order, flattened (size * dim). */
  private readonly data: Float64Array;
  /** Input row of each point in tree order. */
  private readonly ids: Int32Array;
  // Node arrays. A node covers tree-order points [start, end); a leaf has left = -1.
  private readonly nodeStart: Int32Array;
  private readonly nodeEnd: Int32Array;
  private readonly nodeAxis: Int32Array;
  private readonly nodeSplit: Float64Array;
  private readonly nodeLeft: Int32Array;
  private readonly nodeRight: Int32Array;
  /** Work stack for `nearest` (node ids and the squared plane distance bounding each). */
  private readonly stack: Int32Array;
  private readonly stackBound: Float64Array;

  /**
   * @param points n x d coordinates (n >= 0, every row the same length d >= 1, all finite).
   *   The array is copied; later changes to it do not affect the index.
   * @throws UsageError for ragged rows or non-finite coordinates.
   */
  constructor(points: Points) {
    const n = points.length;
    const d = n > 0 ? points[0].length : 0;
    if (n > 0 && d < 1) throw new UsageError('PointIndex: points have no coordinates (row 0 has length 0)');
    for (let i = 0; i < n; i++) {
      const p = points[i];
      if (p.length !== d) throw new UsageError(`PointIndex: row ${i} has ${p.length} coordinates, expected ${d}`);
      for (let j = 0; j < d; j++) {
        if (!Number.isFinite(p[j])) throw new UsageError(`PointIndex: row ${i} coordinate ${j} is not finite (${p[j]})`);
      }
    }
    this.size = n;
    this.dim = d;

    const raw = new Float64Array(n * d);
    for (let i = 0; i < n; i++) for (let j = 0; j < d; j++) raw[i * d + j] = points[i][j];
    const perm = new Int32Array(n);
    for (let i = 0; i < n; i++) perm[i] = i;

    const starts: number[] = [];
    const ends: number[] = [];
    const axes: number[] = [];
    const splits: number[] = [];
    const lefts: number[] = [];
    const rights: number[] = [];

    const build = (start: number, end: number): number => {
      const id = starts.length;
      starts.push(start);
      ends.push(end);
      axes.push(0);
      splits.push(0);
      lefts.push(-1);
      rights.push(-1);
      if (end - start <= LEAF_SIZE) return id;
      // Axis of largest spread over this node's points.
      let axis = 0;
      let widest = -1;
      for (let j = 0; j < d; j++) {
        let lo = Infinity;
        let hi = -Infinity;
        for (let k = start; k < end; k++) {
          const v = raw[perm[k] * d + j];
          if (v < lo) lo = v;
          if (v > hi) hi = v;
        }
        if (hi - lo > widest) {
          widest = hi - lo;
          axis = j;
        }
      }
      if (widest <= 0) return id; // all points coincide: keep as one leaf
      const mid = (start + end) >> 1;
      select(perm, raw, d, axis, start, end - 1, mid);
      axes[id] = axis;
      splits[id] = raw[perm[mid] * d + axis];
      const left = build(start, mid);
      const right = build(mid, end);
      lefts[id] = left;
      rights[id] = right;
      return id;
    };
    if (n > 0) build(0, n);

    this.data = new Float64Array(n * d);
    this.ids = new Int32Array(n);
    for (let k = 0; k < n; k++) {
      this.ids[k] = perm[k];
      for (let j = 0; j < d; j++) this.data[k * d + j] = raw[perm[k] * d + j];
    }
    this.nodeStart = Int32Array.from(starts);
    this.nodeEnd = Int32Array.from(ends);
    this.nodeAxis = Int32Array.from(axes);
    this.nodeSplit = Float64Array.from(splits);
    this.nodeLeft = Int32Array.from(lefts);
    this.nodeRight = Int32Array.from(rights);
    // Depth-first search keeps at most (tree depth + 1) * 2 entries; the node count is a safe bound.
    this.stack = new Int32Array(starts.length + 1);
    this.stackBound = new Float64Array(starts.length + 1);
  }

  /**
   * The indexed point closest to q: argmin_i |x_i - q|^2, ties to the lower index.
   * @throws FitError when the index is empty; UsageError for a bad query.
   */
  nearest(q: readonly number[]): Neighbour {
    this.checkQuery('nearest', q);
    if (this.size === 0) throw new FitError('PointIndex.nearest: the index holds no points');
    // Specialised k = 1 search with an explicit stack (no allocation per visited node).
    const d = this.dim;
    const data = this.data;
    const ids = this.ids;
    const stack = this.stack;
    let top = 0;
    stack[top] = 0;
    this.stackBound[top++] = 0;
    let bestD = Infinity;
    let bestI = -1;
    while (top > 0) {
      --top;
      if (this.stackBound[top] > bestD) continue; // the splitting plane is already farther than the best
      const node = stack[top];
      const left = this.nodeLeft[node];
      if (left < 0) {
        const end = this.nodeEnd[node];
        for (let p = this.nodeStart[node]; p < end; p++) {
          const o = p * d;
          let s = 0;
          for (let j = 0; j < d; j++) {
            const a = data[o + j] - q[j];
            s += a * a;
          }
          if (s < bestD || (s === bestD && ids[p] < bestI)) {
            bestD = s;
            bestI = ids[p];
          }
        }
        continue;
      }
      const diff = q[this.nodeAxis[node]] - this.nodeSplit[node];
      const near = diff < 0 ? left : this.nodeRight[node];
      const far = diff < 0 ? this.nodeRight[node] : left;
      // Push the far side first (with its plane bound) so the near side is searched first.
      const bound = diff * diff;
      if (bound <= bestD) {
        stack[top] = far;
        this.stackBound[top++] = bound;
      }
      stack[top] = near;
      this.stackBound[top++] = 0;
    }
    return { index: bestI, distanceSquared: bestD };
  }

  /**
   * The min(k, size) indexed points closest to q, ascending by squared distance
   * (ties by lower index). k = 0 gives an empty array.
   * @throws UsageError for a bad query or k that is not a non-negative integer.
   */
  kNearest(q: readonly number[], k: number): Neighbour[] {
    this.checkQuery('kNearest', q);
    if (!Number.isInteger(k) || k < 0) throw new UsageError(`PointIndex.kNearest: k must be a non-negative integer, got ${k}`);
    const kk = Math.min(k, this.size);
    if (kk === 0) return [];
    const d = this.dim;
    // Bounded sorted list (ascending) of the best kk so far.
    const bestD = new Float64Array(kk).fill(Infinity);
    const bestI = new Int32Array(kk).fill(-1);
    let count = 0;
    const data = this.data;
    const ids = this.ids;
    const q0 = q[0];
    const q1 = d > 1 ? q[1] : 0;
    const q2 = d > 2 ? q[2] : 0;

    const visit = (node: number): void => {
      const left = this.nodeLeft[node];
      if (left < 0) {
        const end = this.nodeEnd[node];
        for (let p = this.nodeStart[node]; p < end; p++) {
          const o = p * d;
          let s: number;
          if (d === 3) {
            const a = data[o] - q0, b = data[o + 1] - q1, c = data[o + 2] - q2;
            s = a * a + b * b + c * c;
          } else if (d === 2) {
            const a = data[o] - q0, b = data[o + 1] - q1;
            s = a * a + b * b;
          } else {
            s = 0;
            for (let j = 0; j < d; j++) {
              const a = data[o + j] - q[j];
              s += a * a;
            }
          }
          const id = ids[p];
          if (count === kk) {
            const wd = bestD[kk - 1];
            if (s > wd || (s === wd && id > bestI[kk - 1])) continue;
          }
          // Insert (s, id) into the sorted list.
          let pos = count < kk ? count : kk - 1;
          while (pos > 0 && (bestD[pos - 1] > s || (bestD[pos - 1] === s && bestI[pos - 1] > id))) {
            bestD[pos] = bestD[pos - 1];
            bestI[pos] = bestI[pos - 1];
            pos--;
          }
          bestD[pos] = s;
          bestI[pos] = id;
          if (count < kk) count++;
        }
        return;
      }
      const axis = this.nodeAxis[node];
      const diff = q[axis] - this.nodeSplit[node];
      const near = diff < 0 ? left : this.nodeRight[node];
      const far = diff < 0 ? this.nodeRight[node] : left;
      visit(near);
      if (count < kk || diff * diff <= bestD[kk - 1]) visit(far);
    };
    visit(0);
    const out: Neighbour[] = [];
    for (let i = 0; i < count; i++) out.push({ index: bestI[i], distanceSquared: bestD[i] });
    return out;
  }

  /**
   * Input indices of all points with |x_i - q| <= r (inclusive), in ascending index order.
   * @param r radius (not squared), finite and >= 0.
   * @throws UsageError for a bad query or radius.
   */
  withinRadius(q: readonly number[], r: number): number[] {
    this.checkQuery('withinRadius', q);
    if (!(r >= 0) || !Number.isFinite(r)) throw new UsageError(`PointIndex.withinRadius: radius must be finite and >= 0, got ${r}`);
    const out: number[] = [];
    if (this.size === 0) return out;
    const d = this.dim;
    const r2 = r * r;
    const data = this.data;
    const ids = this.ids;
    const visit = (node: number): void => {
      const left = this.nodeLeft[node];
      if (left < 0) {
        const end = this.nodeEnd[node];
        for (let p = this.nodeStart[node]; p < end; p++) {
          let s = 0;
          for (let j = 0; j < d; j++) {
            const a = data[p * d + j] - q[j];
            s += a * a;
          }
          if (s <= r2) out.push(ids[p]);
        }
        return;
      }
      const diff = q[this.nodeAxis[node]] - this.nodeSplit[node];
      // Left points have coordinate <= split, right points >= split.
      if (diff <= 0 || diff * diff <= r2) visit(left);
      if (diff >= 0 || diff * diff <= r2) visit(this.nodeRight[node]);
    };
    visit(0);
    out.sort((a, b) => a - b);
    return out;
  }

  private checkQuery(name: string, q: readonly number[]): void {
    if (this.size > 0 && q.length !== this.dim) {
      throw new UsageError(`PointIndex.${name}: query has ${q.length} coordinates, the index has ${this.dim}`);
    }
    for (let j = 0; j < q.length; j++) {
      if (!Number.isFinite(q[j])) throw new UsageError(`PointIndex.${name}: query coordinate ${j} is not finite (${q[j]})`);
    }
  }
}

/**
 * Partial sort (Hoare's quickselect, 1961) of perm[lo..hi] by coordinate `axis`
 * so that perm[k] holds the k-th smallest, smaller-or-equal values before it and
 * greater-or-equal after it. Median-of-three pivots; deterministic.
 */
function select(perm: Int32Array, raw: Float64Array, d: number, axis: number, lo: number, hi: number, k: number): void {
  const key = (i: number): number => raw[perm[i] * d + axis];
  const swap = (a: number, b: number): void => {
    const t = perm[a];
    perm[a] = perm[b];
    perm[b] = t;
  };
  while (hi > lo) {
    const mid = (lo + hi) >> 1;
    // Median of three to position lo..hi.
    if (key(mid) < key(lo)) swap(mid, lo);
    if (key(hi) < key(lo)) swap(hi, lo);
    if (key(hi) < key(mid)) swap(hi, mid);
    const pivot = key(mid);
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (key(i) < pivot) i++;
      while (key(j) > pivot) j--;
      if (i <= j) {
        swap(i, j);
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return;
  }
}
