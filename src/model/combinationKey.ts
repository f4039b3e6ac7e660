/**
 * Canonical combination keys: `factor=level` pairs joined by `|` in factor order
 * ("headline=question|hero=farm|…"). Names cannot contain `|` or `=`, so keys parse unambiguously.
 */
import { fail } from "../errors.ts";
import type { Combination, Design } from "./design.ts";

export function combinationKey(design: Design, c: ArrayLike<number>): string {
  let key = "";
  for (let f = 0; f < design.factors.length; f++) {
    const factor = design.factors[f];
    key += (f === 0 ? "" : "|") + factor.name + "=" + factor.levels[c[f]];
  }
  return key;
}

/** Parses a key into a combination; throws INVALID_COMBINATION_KEY saying what is wrong. */
export function parseCombinationKey(design: Design, key: string): Combination {
  const bad = (reason: string) => fail("INVALID_COMBINATION_KEY", { key: String(key), reason }, "combination");
  if (typeof key !== "string" || key.length === 0) throw bad("expected factor=level pairs joined by |");
  const parts = key.split("|");
  if (parts.length !== design.factors.length) {
    throw bad(`expected ${design.factors.length} factor=level pairs in factor order (${design.factors.map((f) => f.name).join(", ")})`);
  }
  return parts.map((part, f) => {
    const factor = design.factors[f];
    const eq = part.indexOf("=");
    const name = eq < 0 ? part : part.slice(0, eq);
    if (eq < 0 || name !== factor.name) throw bad(`pair ${f + 1} must be ${factor.name}=<level>`);
    const l = factor.levels.indexOf(part.slice(eq + 1));
    if (l < 0) throw bad(`factor "${factor.name}" has no level "${part.slice(eq + 1)}" (it has ${factor.levels.join(", ")})`);
    return l;
  });
}
