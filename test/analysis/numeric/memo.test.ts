/**
 * `memoise`: an exact-argument cache (common practice) bounded by MEMO_LIMIT entries, cleared when full.
 */
import { describe, expect, it } from "vitest";
import { MEMO_LIMIT, memoise } from "../../../server/src/analysis/numeric/memo.js";

const counted = () => {
  const calls: number[] = [];
  const f = (x: number) => (calls.push(x), Math.sin(x) * 3);
  return { f, calls };
};

describe("memoise", () => {
  it.each([[0.25], [-7], [0], [1e-300], [NaN]])("returns f(%s) and evaluates f once for repeated arguments", (x) => {
    const { f, calls } = counted();
    const m = memoise(f);
    const first = m(x);
    expect(Object.is(first, Math.sin(x) * 3)).toBe(true);
    expect(Object.is(m(x), first)).toBe(true);
    expect(Object.is(m(x), first)).toBe(true);
    expect(calls.length).toBe(1);
  });

  it("distinguishes arguments one ulp apart (exact-argument keys)", () => {
    const { f, calls } = counted();
    const m = memoise(f);
    m(0.5);
    m(0.5 + 2 ** -53);
    expect(calls.length).toBe(2);
  });

  it("separate memoised closures do not share a cache", () => {
    const a = counted();
    const b = counted();
    memoise(a.f)(1);
    memoise(b.f)(1);
    expect(a.calls.length + b.calls.length).toBe(2);
  });

  it(`holds MEMO_LIMIT = ${MEMO_LIMIT} values, then clears: an early argument is evaluated again`, () => {
    const { f, calls } = counted();
    const m = memoise(f);
    for (let i = 0; i < MEMO_LIMIT; i++) m(i);
    for (let i = 0; i < MEMO_LIMIT; i += 997) m(i); // all still cached
    expect(calls.length).toBe(MEMO_LIMIT);
    m(MEMO_LIMIT); // full: the cache is cleared before storing this value
    expect(calls.length).toBe(MEMO_LIMIT + 1);
    m(0);
    expect(calls.length).toBe(MEMO_LIMIT + 2);
    m(MEMO_LIMIT); // kept after the clear
    expect(calls.length).toBe(MEMO_LIMIT + 2);
  });
});
