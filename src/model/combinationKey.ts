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

/**
 * A key written under an earlier definition of the page, read under this one by factor and level
 * names: a factor the key does not name takes its first level (the reference level — what the page
 * showed before that factor existed), factors the page no longer has are ignored, and the result is
 * null when a level the key names no longer exists. Keys of the current definition come back as
 * they are. Page edits re-key their counts with it (remap.ts).
 */
export function rekey(design: Design, key: string): string | null {
  const named = new Map<string, string>();
  for (const part of key.split("|")) {
    const eq = part.indexOf("=");
    if (eq > 0) named.set(part.slice(0, eq), part.slice(eq + 1));
  }
  const c: number[] = [];
  for (const factor of design.factors) {
    const level = named.get(factor.name);
    const l = level === undefined ? 0 : factor.levels.indexOf(level);
    if (l < 0) return null;
    c.push(l);
  }
  return combinationKey(design, c);
}
