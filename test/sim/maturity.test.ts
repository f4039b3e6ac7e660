import { describe, expect, it } from "vitest";
import { MaturityQueue, type MaturityRule } from "../../src/sim/maturity.ts";

function trace(rule: MaturityRule) {
  const seen: string[] = [];
  const q = new MaturityQueue(10, rule, (s, c, converted) => seen.push(`${s}/${c}/${converted ? 1 : 0}`));
  const at = (t: number): string[] => {
    q.drain(t);
    return seen.splice(0);
  };
  q.add(0, 0, 1, false);
  q.add(3, 1, 2, true);
  const early = at(5);
  q.add(6, 0, 0, false);
  return { early, at9: at(9), at10: at(10), at16: at(16) };
}

// Expected behaviour: the fold rule of src/store/repositories/folds.ts (a trial at the first fold
// after the pick, its conversion at the first fold after it is reported — at once in the
// simulator) and, for "window", the attribution window of DESIGN.md's glossary (here 10 visitors).
describe("MaturityQueue", () => {
  it("server rule: every pick reaches the policy at once, with its own outcome", () => {
    expect(trace("server")).toEqual({ early: ["0/1/0", "1/2/1"], at9: ["0/0/0"], at10: [], at16: [] });
  });

  it("window rule: every pick waits for its window", () => {
    expect(trace("window")).toEqual({ early: [], at9: [], at10: ["0/1/0"], at16: ["1/2/1", "0/0/0"] });
  });

  it("keeps order when it grows past its first capacity", () => {
    const seen: number[] = [];
    const q = new MaturityQueue(5000, "window", (_s, c) => seen.push(c));
    for (let t = 0; t < 3000; t++) q.add(t, 0, t, false);
    q.drain(5000 + 1499);
    for (let t = 3000; t < 4000; t++) q.add(t, 0, t, false);
    q.drain(100_000);
    expect(seen).toEqual(Array.from({ length: 4000 }, (_, i) => i));
  });
});
