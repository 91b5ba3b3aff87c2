/**
 * Finding the peer programs. Peers are Debian packages (scripts/install-bench-peers.sh):
 * R with r-cran-shapes (/usr/bin/Rscript) and python3-scipy for Debian's own
 * /usr/bin/python3 (not a python3 that happens to be first on PATH).
 */
import { programWorks } from '../harness.js';

export const RSCRIPT = '/usr/bin/Rscript';
export const PYTHON = '/usr/bin/python3';

/** CAIRN_BENCH_SKIP_PEERS=1 runs ours only (and shows the skip messages). */
const skipAll = process.env.CAIRN_BENCH_SKIP_PEERS === '1';

/** Why a peer is missing, for the skip message. */
export function missingReason(what: string): string {
  return skipAll ? 'CAIRN_BENCH_SKIP_PEERS=1 is set' : `${what} not available; ${INSTALL_HINT}`;
}

let rShapes: boolean | undefined;
let scipy: boolean | undefined;

/** Rscript present and `library(shapes)` loads. */
export function hasRShapes(): boolean {
  rShapes ??= !skipAll && programWorks(RSCRIPT, ['-e', 'suppressPackageStartupMessages(library(shapes))']);
  return rShapes;
}

/** /usr/bin/python3 present and `import scipy.optimize` works. */
export function hasScipy(): boolean {
  scipy ??= !skipAll && programWorks(PYTHON, ['-c', 'import scipy.optimize']);
  return scipy;
}

export const INSTALL_HINT = 'install the peers with `npm run bench:peers` (scripts/install-bench-peers.sh: apt-get install r-base-core r-cran-shapes python3-scipy)';
