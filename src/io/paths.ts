/** Path helpers shared by the readers and writers. */
import * as fs from 'node:fs';
import * as path from 'node:path';

/**
 * The canonical absolute path of `p`: fs.realpathSync when it exists,
 * otherwise the real path of its nearest existing parent joined with the rest.
 */
export function canonicalPath(p: string): string {
  const abs = path.resolve(p);
  const rest: string[] = [];
  let cur = abs;
  for (;;) {
    try {
      const real = fs.realpathSync(cur);
      return rest.length ? path.join(real, ...rest.reverse()) : real;
    } catch {
      const parent = path.dirname(cur);
      if (parent === cur) return abs;
      rest.push(path.basename(cur));
      cur = parent;
    }
  }
}
