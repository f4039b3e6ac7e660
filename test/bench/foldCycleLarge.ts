/**
 * Wall time of one fold cycle (forgetting, fold, refit, allocations with summaries) on one of two
 * pages at the limits:
 *   --page largest (default): the largest page the defaults allow, 4×4×4×4×5 = 1,280 combinations
 *     with all pairs (d = 119) and maxSegments = 200 segments;
 *   --page dimension: the most features a page may have, 2×2×133 levels with all pairs (d = 400,
 *     design.ts MAX_DIMENSION) and one segment — the fold a page edit waits for at that size.
 * Each segment has 3,000 visitors folded before and 500 new ones per cycle. Prints figures;
 * asserts nothing.
 *
 *   npm run bench:fold [-- --cycles 3] [--page dimension]
 */
import { parseArgs } from "node:util";
import { buildDesign, combinationKey, createRng, foldCycle, initialState, parseSettings, type FoldRow } from "../../src/model/index.ts";

const { values } = parseArgs({ options: { cycles: { type: "string", default: "3" }, page: { type: "string", default: "largest" } } });
const cycles = Number(values.cycles);
const pages = { largest: { levels: [4, 4, 4, 4, 5], segments: 200 }, dimension: { levels: [2, 2, 133], segments: 1 } };
const chosen = pages[values.page as keyof typeof pages];
if (!chosen) throw new Error(`--page must be one of ${Object.keys(pages).join(", ")}`);
const design = buildDesign({ factors: chosen.levels.map((count, f) => ({ name: `f${f}`, levels: Array.from({ length: count }, (_, l) => ({ name: `l${l}` })) })) });
const settings = parseSettings({});
const rng = createRng(1);
const segments = Array.from({ length: chosen.segments }, (_, s) => `source-${s}`);
// Invented workload: baseline 3%, level shifts up to ±0.3 log-odds, segments shifted by ±0.2.
const shift = design.factors.map((f) => f.levels.map((_, l) => (l === 0 ? 0 : (rng.next() - 0.5) * 0.6)));
const segmentShift = segments.map(() => (rng.next() - 0.5) * 0.4);
function rows(perSegment: number): FoldRow[] {
  const out = new Map<string, FoldRow>();
  segments.forEach((segment, s) => {
    for (let i = 0; i < perSegment; i++) {
      const c = design.sizes.map((size) => rng.int(size));
      const eta = Math.log(0.03 / 0.97) + segmentShift[s] + c.reduce((acc, l, f) => acc + shift[f][l], 0);
      const key = `${segment}\t${combinationKey(design, c)}`;
      const row = out.get(key) ?? { segment, combination: combinationKey(design, c), n: 0, k: 0 };
      row.n++;
      if (rng.next() < 1 / (1 + Math.exp(-eta))) row.k++;
      out.set(key, row);
    }
  });
  return [...out.values()];
}
let state = initialState(design, settings);
let retired: ReturnType<typeof foldCycle>["retired"] = [];
const warm = foldCycle({ design, settings, state, rows: rows(3000), now: 0, segments, retired, seed: 1 });
state = warm.state;
retired = warm.retired;
const times: number[] = [];
for (let i = 1; i <= cycles; i++) {
  const batch = rows(500);
  const start = performance.now();
  const out = foldCycle({ design, settings, state, rows: batch, now: i * 3_600_000, segments, retired, seed: 1 + i });
  times.push((performance.now() - start) / 1000);
  state = out.state;
  retired = out.retired;
}
const combinations = chosen.levels.reduce((a, b) => a * b, 1).toLocaleString("en");
console.log(`fold cycle, ${combinations} combinations (d = ${design.dimension}), ${chosen.segments} segment${chosen.segments === 1 ? "" : "s"}: ${times.map((t) => t.toFixed(2)).join(", ")} s`);
