/**
 * Timing utilities for the benchmarks (test/bench/run.ts). Not part of the
 * library: benchmarks may touch the file system and spawn processes.
 *
 * Conventions:
 * - Times are milliseconds of wall clock (performance.now(), a monotonic clock).
 * - A series of repeated runs is summarised by its median and its spread: the
 *   interquartile range (type-7 quantiles, linear interpolation, as R's default
 *   `quantile`) and the minimum and maximum.
 * - Peak memory of an in-process case is the child process's peak resident set
 *   size (`process.resourceUsage().maxRSS`, which is the kernel's ru_maxrss:
 *   the high-water mark, not a sample), read at the end of the case; every
 *   case runs in its own process, so it is that case's peak, including the
 *   Node/tsx baseline, which is reported beside it. Peak memory of a spawned
 *   process comes from GNU time (`/usr/bin/time -v`, "Maximum resident set
 *   size") when that program is present.
 */
import { spawnSync, type SpawnSyncOptions } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import os from 'node:os';

/** Summary of repeated measurements (milliseconds). */
export interface Stats {
  readonly runs: number;
  readonly median: number;
  readonly q1: number;
  readonly q3: number;
  readonly min: number;
  readonly max: number;
  /** Every measurement, in run order. */
  readonly values: readonly number[];
}

/** Type-7 quantile (R's default; numpy's 'linear') of sorted values, p in [0, 1]. */
export function quantileSorted(sorted: readonly number[], p: number): number {
  if (sorted.length === 0) return Number.NaN;
  const h = (sorted.length - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(lo + 1, sorted.length - 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/** Median, quartiles and range of a series of measurements. */
export function summarize(values: readonly number[]): Stats {
  const s = values.slice().sort((a, b) => a - b);
  return {
    runs: s.length,
    median: quantileSorted(s, 0.5),
    q1: quantileSorted(s, 0.25),
    q3: quantileSorted(s, 0.75),
    min: s[0] ?? Number.NaN,
    max: s[s.length - 1] ?? Number.NaN,
    values: values.slice(),
  };
}

/**
 * Run `fn` `warmup` times untimed (JIT warm-up), then `repeats` times timed.
 * `setup` runs before each call, outside the timing (fresh inputs when `fn`
 * would otherwise see cached work). Returns the summary and the last result.
 */
export function timeRepeated<S, T>(
  fn: (input: S) => T,
  options: { repeats: number; warmup?: number; setup: (run: number) => S },
): { stats: Stats; last: T } {
  const warmup = options.warmup ?? 1;
  for (let i = 0; i < warmup; i++) fn(options.setup(-1 - i));
  const times: number[] = [];
  let last: T | undefined;
  for (let i = 0; i < options.repeats; i++) {
    const input = options.setup(i);
    const t0 = performance.now();
    last = fn(input);
    times.push(performance.now() - t0);
  }
  return { stats: summarize(times), last: last as T };
}

/** Peak resident set size of this process so far, MiB (ru_maxrss). */
export function peakRssMiB(): number {
  return process.resourceUsage().maxRSS / 1024;
}

/** Current resident set size of this process, MiB. */
export function currentRssMiB(): number {
  return process.memoryUsage().rss / 1048576;
}

export interface SpawnMeasure {
  readonly status: number | null;
  readonly stdout: string;
  readonly stderr: string;
  /** Wall time of the whole process, from spawn to exit, ms. */
  readonly wallMs: number;
  /** Peak RSS of the process (MiB) from GNU time, or null when /usr/bin/time is absent. */
  readonly peakRssMiB: number | null;
}

const GNU_TIME = '/usr/bin/time';

/**
 * Spawn a program and measure its wall time and, through `/usr/bin/time -v`
 * when present, its peak resident set size. GNU time's report goes to a
 * separate file so the program's own stderr stays clean.
 */
export function spawnMeasured(command: string, args: readonly string[], options: SpawnSyncOptions & { timeFile: string }): SpawnMeasure {
  const useTime = existsSync(GNU_TIME);
  const { timeFile, ...spawnOptions } = options;
  const argv = useTime ? ['-v', '-o', timeFile, command, ...args] : args.slice();
  const program = useTime ? GNU_TIME : command;
  const t0 = performance.now();
  const r = spawnSync(program, argv, { encoding: 'utf8', maxBuffer: 256 * 1024 * 1024, ...spawnOptions });
  const wallMs = performance.now() - t0;
  let peak: number | null = null;
  if (useTime && existsSync(timeFile)) {
    const m = /Maximum resident set size \(kbytes\): (\d+)/.exec(readFileSync(timeFile, 'utf8'));
    if (m) peak = Number(m[1]) / 1024;
  }
  return { status: r.status, stdout: String(r.stdout ?? ''), stderr: String(r.stderr ?? ''), wallMs, peakRssMiB: peak };
}

/** Whether a program runs at all (exit status 0) with the given arguments. */
export function programWorks(command: string, args: readonly string[]): boolean {
  if (!existsSync(command)) return false;
  const r = spawnSync(command, args, { encoding: 'utf8', timeout: 60_000 });
  return r.status === 0;
}

export interface MachineInfo {
  readonly cpu: string;
  readonly nproc: number;
  readonly memoryGiB: number;
  readonly node: string;
  readonly platform: string;
  readonly loadAverage: readonly number[];
  readonly date: string;
  /**
   * A fixed reference workload for comparing machines: milliseconds to sort
   * 1,000,000 seeded doubles in a Float64Array (the engine's own sort), best
   * of five. Readers can scale the absolute times of another machine by the
   * ratio of this figure.
   */
  readonly referenceSortMs: number;
}

/** The value after `--name` on the command line of a benchmark script, or `fallback`. */
export function argValue(name: string, fallback: string): string {
  const i = process.argv.indexOf(`--${name}`);
  return i >= 0 && i + 1 < process.argv.length ? process.argv[i + 1] : fallback;
}

/** The reference workload of MachineInfo.referenceSortMs. */
export function referenceSortMs(): number {
  const values = new Float64Array(1_000_000);
  let best = Infinity;
  for (let run = 0; run < 5; run++) {
    let x = 2463534242;
    for (let i = 0; i < values.length; i++) {
      // xorshift32 (Marsaglia 2003): the same numbers on every machine.
      x ^= x << 13;
      x >>>= 0;
      x ^= x >>> 17;
      x ^= x << 5;
      x >>>= 0;
      values[i] = x / 4294967296;
    }
    const t0 = performance.now();
    values.sort();
    best = Math.min(best, performance.now() - t0);
  }
  return best;
}

/** Machine facts for the report: CPU model from /proc/cpuinfo, logical CPUs, memory, load. */
export function machineInfo(): MachineInfo {
  let cpu = os.cpus()[0]?.model ?? 'unknown';
  try {
    const m = /^model name\s*:\s*(.+)$/m.exec(readFileSync('/proc/cpuinfo', 'utf8'));
    if (m) cpu = m[1].trim();
  } catch {
    // not Linux: keep os.cpus()
  }
  return {
    cpu,
    nproc: os.availableParallelism ? os.availableParallelism() : os.cpus().length,
    memoryGiB: os.totalmem() / 1024 ** 3,
    node: process.version,
    platform: `${os.type()} ${os.release()} ${os.arch()}`,
    loadAverage: os.loadavg(),
    date: new Date().toISOString(),
    referenceSortMs: referenceSortMs(),
  };
}

/** Milliseconds for tables: 3 significant digits, unit chosen by size. */
export function formatMs(ms: number): string {
  if (!Number.isFinite(ms)) return '-';
  if (ms >= 1000) return `${(ms / 1000).toPrecision(3)} s`;
  if (ms >= 1) return `${ms.toPrecision(3)} ms`;
  return `${(ms * 1000).toPrecision(3)} us`;
}

/** "median [q1-q3] (min-max)" for a series. */
export function formatStats(s: Stats): string {
  if (s.runs === 1) return `${formatMs(s.median)} (1 run)`;
  return `${formatMs(s.median)}  IQR ${formatMs(s.q1)}-${formatMs(s.q3)}  range ${formatMs(s.min)}-${formatMs(s.max)}  (${s.runs} runs)`;
}

/** Ratio a / b printed to 3 significant digits with an "x". */
export function formatRatio(r: number): string {
  if (!Number.isFinite(r)) return '-';
  return `${r >= 100 ? r.toFixed(0) : r.toPrecision(3)}x`;
}

/** Plain-text table with left-aligned columns. */
export function textTable(header: readonly string[], rows: readonly (readonly string[])[]): string {
  const widths = header.map((h, j) => Math.max(h.length, ...rows.map((r) => (r[j] ?? '').length)));
  const line = (r: readonly string[]) => r.map((c, j) => (c ?? '').padEnd(widths[j])).join('  ').trimEnd();
  return [line(header), line(widths.map((w) => '-'.repeat(w))), ...rows.map(line)].join('\n');
}

/** Markdown table. */
export function markdownTable(header: readonly string[], rows: readonly (readonly string[])[]): string {
  const esc = (c: string) => c.replace(/\|/g, '\\|');
  return [`| ${header.map(esc).join(' | ')} |`, `|${header.map(() => '---').join('|')}|`, ...rows.map((r) => `| ${r.map(esc).join(' | ')} |`)].join('\n');
}

/** Shares of sampled CPU time per function in a V8 .cpuprofile (`node --cpu-prof`). */
export interface ProfileShares {
  /** Total sampled time, ms. */
  readonly totalMs: number;
  /** [function "name file:line", share of the total] by time spent in the function itself. */
  readonly self: readonly [string, number][];
  /** The same, counting time in everything the function called (each function once per stack). */
  readonly inclusive: readonly [string, number][];
}

interface CpuProfileNode {
  id: number;
  callFrame: { functionName: string; url: string; lineNumber: number };
  children?: number[];
}

/** Self and inclusive shares of the `top` heaviest functions of one .cpuprofile file. */
export function cpuProfileShares(file: string, top = 25): ProfileShares {
  const p = JSON.parse(readFileSync(file, 'utf8')) as { nodes: CpuProfileNode[]; samples: number[]; timeDeltas: number[] };
  const byId = new Map(p.nodes.map((n) => [n.id, n]));
  const parent = new Map<number, number>();
  for (const n of p.nodes) for (const c of n.children ?? []) parent.set(c, n.id);
  const key = (n: CpuProfileNode) => `${n.callFrame.functionName || '(anonymous)'} ${n.callFrame.url.split('/').slice(-2).join('/')}:${n.callFrame.lineNumber + 1}`;
  const perNode = new Map<number, number>();
  p.samples.forEach((id, i) => perNode.set(id, (perNode.get(id) ?? 0) + (p.timeDeltas[i] ?? 0)));
  const self = new Map<string, number>(), inclusive = new Map<string, number>();
  let total = 0;
  for (const [id, t] of perNode) {
    total += t;
    const k = key(byId.get(id) as CpuProfileNode);
    self.set(k, (self.get(k) ?? 0) + t);
    const seen = new Set<string>();
    for (let cur: number | undefined = id; cur !== undefined; cur = parent.get(cur)) {
      const kk = key(byId.get(cur) as CpuProfileNode);
      if (seen.has(kk)) continue;
      seen.add(kk);
      inclusive.set(kk, (inclusive.get(kk) ?? 0) + t);
    }
  }
  const rank = (m: Map<string, number>) => [...m].sort((a, b) => b[1] - a[1]).slice(0, top).map(([k, t]) => [k, total ? t / total : 0] as [string, number]);
  return { totalMs: total / 1000, self: rank(self), inclusive: rank(inclusive) };
}
