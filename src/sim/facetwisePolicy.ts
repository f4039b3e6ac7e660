/**
 * The facetwise policy: the real engine, driven the way the server's fold loop drives it. Matured
 * picks are aggregated into (segment, combination, n, k) rows; every fold interval `foldCycle`
 * (src/model — the same entry point the server's fold service calls) turns them into a new
 * posterior, allocations and summaries; each visitor is then served by `pickFrom` on its
 * segment's allocation. Nothing of the model is re-implemented here.
 *
 * A segment counts as settled the first time its summary says "settled"; the leader at that fold
 * is recorded so the harness can judge whether stopping there would have been right. Asked at the
 * end of a run, `intervals` gives every segment's and combination's rate interval exactly as the
 * server's report computes it (`combinationRates`).
 */
import {
  combinationRates,
  foldCycle,
  initialState,
  pickFrom,
  type Allocation,
  type Design,
  type FoldRow,
  type ModelState,
  type PageSettings,
  type RetiredEntry,
  type Rng,
} from "../model/index.ts";
import type { Policy, SettleRecord } from "./policy.ts";

export interface FacetwiseOptions {
  design: Design;
  settings: PageSettings;
  segmentNames: string[];
  /** Canonical key of each allowed combination, by index. */
  keys: string[];
  msPerVisitor: number;
  rng: Rng;
}

export interface FacetwisePolicy extends Policy {
  /** The engine state after the last fold (for the cross-check against the server's fold). */
  state(): ModelState;
}

export function facetwisePolicy(options: FacetwiseOptions): FacetwisePolicy {
  const { design, settings, segmentNames, keys, msPerVisitor, rng } = options;
  const S = segmentNames.length;
  const C = keys.length;
  const keyIndex = new Map(keys.map((k, i) => [k, i]));
  const pendingN = new Float64Array(S * C);
  const pendingK = new Float64Array(S * C);
  const touched: number[] = [];
  let state = initialState(design, settings);
  let retired: RetiredEntry[] = [];
  let allocations: Allocation[] = [];
  let leaderIndex = new Int32Array(S);
  const settled: (SettleRecord | null)[] = new Array(S).fill(null);

  const fold = (now: number): void => {
    const rows: FoldRow[] = touched.map((i) => ({
      segment: segmentNames[Math.floor(i / C)]!,
      combination: keys[i % C]!,
      n: pendingN[i]!,
      k: pendingK[i]!,
    }));
    for (const i of touched) pendingN[i] = pendingK[i] = 0;
    touched.length = 0;
    const out = foldCycle({
      design,
      settings,
      state,
      rows,
      now: now * msPerVisitor,
      segments: segmentNames,
      retired,
      seed: rng.int(2 ** 31),
      pooled: false,
      effects: false,
    });
    state = out.state;
    retired = out.retired;
    allocations = segmentNames.map((name) => out.allocations[name] ?? out.allocations["*"]!);
    leaderIndex = Int32Array.from(segmentNames, (name) => {
      const summary = out.summaries[name] ?? out.summaries["*"]!;
      return keyIndex.get(summary.leader.combination)!;
    });
    segmentNames.forEach((name, s) => {
      if (settled[s] === null && (out.summaries[name] ?? out.summaries["*"]!).status === "settled") {
        settled[s] = { visitor: now, leader: leaderIndex[s]! };
      }
    });
  };

  fold(0);
  return {
    serve(segment) {
      return keyIndex.get(pickFrom(allocations[segment]!, rng).combination)!;
    },
    observe(segment, combination, converted) {
      const i = segment * C + combination;
      if (pendingN[i] === 0) touched.push(i);
      pendingN[i]++;
      if (converted) pendingK[i]++;
    },
    fold,
    leaders: () => leaderIndex,
    settled: () => settled,
    state: () => state,
    intervals: () =>
      segmentNames.map((segment) => {
        const rates = combinationRates({ design, settings, state, segment, combinations: keys, seed: rng.int(2 ** 31) });
        return keys.map((key) => rates[key]!);
      }),
  };
}
