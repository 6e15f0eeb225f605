/**
 * Exact-argument memoisation of expensive real functions of one variable, bounded in size.
 */

/** Bound on the number of cached values per memoised closure, so long sessions cannot grow memory without limit. */
export const MEMO_LIMIT = 20000;

/** Memoises a real function of one variable (exact-argument cache, cleared when full). */
export function memoise(f: (x: number) => number): (x: number) => number {
  let cache = new Map<number, number>();
  return (x: number) => {
    const hit = cache.get(x);
    if (hit !== undefined) return hit;
    const y = f(x);
    if (cache.size >= MEMO_LIMIT) cache = new Map();
    cache.set(x, y);
    return y;
  };
}
