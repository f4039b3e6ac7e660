/**
 * The fold's input side: new trials and new conversions, as (segment, combination, n, k) rows,
 * validated, routed to the segment that learns from them and merged per combination. A pick counts
 * as a trial (n) in the first fold after it is served and its conversion (k) in the first fold after
 * it is reported, so k may exceed n within one row. The log-likelihood
 * k·log σ(η) + (n−k)·log(1−σ(η)) = k·η + n·log(1−σ(η)) is linear in (n, k), so adding a fold's rows
 * to the counts (counts.ts) gives exactly the full-data likelihood whatever the timing (Bishop,
 * Pattern Recognition and Machine Learning, 2006, §4.3.2), and its Hessian n·p(1−p)·xxᵀ does not
 * involve k, so the fit stays convex for any n ≥ 0, k ≥ 0.
 *
 * Segments beyond `maxSegments` (new ones, fewest visitors first) and rows of segment "*" share
 * one overflow segment: their data inform the pooled model, and they are served from it.
 */
import { fail } from "../errors.ts";
import { featuresOf } from "./counts.ts";
import type { Design } from "./design.ts";
import { OVERFLOW_SITE } from "./state.ts";

export interface FoldRow {
  segment: string;
  /** Canonical combination key. */
  combination: string;
  /** New trials: picks served since the last fold. */
  n: number;
  /** New conversions reported since the last fold (of picks folded now or earlier; may exceed n). */
  k: number;
}

export interface GroupedRows {
  /** Routed segment → combination key → [n, k], only keys of the design. */
  bySegment: Map<string, Map<string, [number, number]>>;
  /** Rows whose combination key does not belong to the design (e.g. a removed level). */
  skipped: { rows: number; visitors: number };
}

/** Validates rows, routes segments (overflow beyond maxSegments) and merges rows per combination. */
export function groupRows(design: Design, rows: FoldRow[], tracked: ReadonlyMap<string, unknown>, maxSegments: number): GroupedRows {
  const perSegment = new Map<string, Map<string, [number, number]>>();
  const skipped = { rows: 0, visitors: 0 };
  // Rows usually arrive grouped by segment: remember the last segment's map.
  let lastSegment: string | undefined;
  let combos: Map<string, [number, number]> | undefined;
  for (const row of rows) {
    const segment = row?.segment;
    if (typeof segment !== "string") throw fail("INVALID_FOLD_ROW", { segment: String(segment), reason: "segment must be a string" }, "segment");
    const { n, k } = row;
    if (typeof n !== "number" || typeof k !== "number" || !(n >= 0 && k >= 0 && n < Infinity && k < Infinity)) {
      throw fail("INVALID_FOLD_ROW", { segment, reason: `need finite counts n ≥ 0 and k ≥ 0, got n=${n}, k=${k}` }, "n");
    }
    if (n === 0 && k === 0) continue;
    if (segment !== lastSegment || combos === undefined) {
      combos = perSegment.get(segment);
      if (!combos) perSegment.set(segment, (combos = new Map()));
      lastSegment = segment;
    }
    const entry = combos.get(row.combination);
    if (entry) {
      entry[0] += n;
      entry[1] += k;
    } else combos.set(row.combination, [n, k]);
  }
  const visitorsBySegment = new Map<string, number>();
  for (const [segment, entries] of perSegment) {
    let total = 0;
    for (const [n] of entries.values()) total += n;
    visitorsBySegment.set(segment, total);
  }

  // Route segments: known sites keep theirs; new ones are admitted by volume until maxSegments.
  let trackedCount = 0;
  for (const key of tracked.keys()) if (key !== OVERFLOW_SITE) trackedCount++;
  const route = new Map<string, string>();
  const newcomers = [...perSegment.keys()]
    .filter((s) => s !== OVERFLOW_SITE && !tracked.has(s))
    .sort((a, b) => visitorsBySegment.get(b)! - visitorsBySegment.get(a)! || (a < b ? -1 : 1));
  for (const s of perSegment.keys()) if (s === OVERFLOW_SITE || tracked.has(s)) route.set(s, s);
  for (const s of newcomers) route.set(s, trackedCount < maxSegments ? (trackedCount++, s) : OVERFLOW_SITE);

  const merged = new Map<string, Map<string, [number, number]>>();
  for (const [segment, combos] of perSegment) {
    const target = route.get(segment)!;
    let into = merged.get(target);
    if (!into) merged.set(target, (into = new Map()));
    for (const [key, [n, k]] of combos) {
      if (featuresOf(design, key) === null) {
        skipped.rows++;
        skipped.visitors += n;
        continue;
      }
      const entry = into.get(key);
      if (entry) {
        entry[0] += n;
        entry[1] += k;
      } else into.set(key, [n, k]);
    }
  }

  for (const [segment, combos] of merged) if (combos.size === 0) merged.delete(segment);
  return { bySegment: merged, skipped };
}
