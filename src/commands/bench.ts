/**
 * `facetwise bench`: speed of the engine's hot paths, measured on this machine and printed as
 * figures (speed targets live here, never in timed tests). Each figure is the median and the
 * 99th percentile (nearest rank) over repeated runs:
 *   pickDrawMicros        one pick from a 72-combination allocation (batches of 10,000 draws)
 *   allocation72Millis    one allocation rebuild (M = 1,000 samples) for 72 allowed combinations
 *   allocation1024Millis  the same for 1,024 allowed combinations
 *   fold10kD40Millis      one fold of 10,000 matured picks into a segment, d = 42
 *   fold10kD120Millis     the same at d = 119
 *   posteriors200Millis   all posteriors of a 72-combination page with 200 segments (d = 27), the
 *                         segment spread learned from them (the part of a fold that grows with segments)
 * The traffic is generated from an invented truth: it sets the workload, it checks nothing.
 */
import { parseArgs } from "node:util";
import {
  buildDesign,
  combinationKey,
  createRng,
  foldCycle,
  foldState,
  initialState,
  parseSettings,
  pickFrom,
  quantileInPlace,
  sitesOf,
  type Allocation,
  type Design,
  type FoldRow,
  type ModelState,
  type PageSettings,
  type Rng,
} from "../model/index.ts";
import { computePosteriors } from "../model/hierarchy.ts";
import { numberFlag, parseFlags } from "../sim/cliOptions.ts";

export const summary = "measure the engine's speed: pick draw, allocation rebuild, fold";

export const help = `Usage: facetwise bench [--json] [--runs N] [--seed S]

Measures, on this machine, the median and 99th percentile of:
  one pick draw (µs), one allocation rebuild with M = 1,000 samples for 72 and 1,024 allowed
  combinations (ms), one fold of 10,000 matured picks at d = 42 and d = 119 (ms).
Targets: pick ≤ 2 µs, 72-combination rebuild ≤ 30 ms, 10,000-pick fold at d ≈ 40 ≤ 10 ms.

Options:
  --json     print exactly one JSON object {pickDrawMicros, allocation72Millis, allocation1024Millis,
             fold10kD40Millis, fold10kD120Millis}, each {median, p99}
  --runs N   repetitions per timed figure (default 60; pick draws use N × 4 batches)
  --seed S   seed of the generated workload (default 1)`;

interface Figure {
  median: number;
  p99: number;
}

export interface BenchResult {
  pickDrawMicros: Figure;
  allocation72Millis: Figure;
  allocation1024Millis: Figure;
  fold10kD40Millis: Figure;
  fold10kD120Millis: Figure;
  posteriors200Millis: Figure;
}

function figure(values: number[]): Figure {
  const copy = Float64Array.from(values);
  return { median: quantileInPlace(copy, 0.5), p99: quantileInPlace(copy, 0.99) };
}

function time(runs: number, warmup: number, work: (run: number) => void): number[] {
  for (let i = 0; i < warmup; i++) work(-1 - i);
  const out: number[] = [];
  for (let i = 0; i < runs; i++) {
    const start = performance.now();
    work(i);
    out.push(performance.now() - start);
  }
  return out;
}

/** A page with the given level counts, all interaction pairs, no exclusions. */
function page(levels: number[]): Design {
  return buildDesign({
    factors: levels.map((count, f) => ({
      name: `f${f}`,
      levels: Array.from({ length: count }, (_, l) => ({ name: `l${l}` })),
    })),
  });
}

/** Invented truth for the workload: baseline 3%, level shifts up to ±0.3 log-odds. */
function truth(design: Design, rng: Rng): (key: string) => number {
  const shift = design.factors.map((f) => f.levels.map((_, l) => (l === 0 ? 0 : (rng.next() - 0.5) * 0.6)));
  const cache = new Map<string, number>();
  return (key) => {
    let p = cache.get(key);
    if (p === undefined) {
      const levels = key.split("|").map((part, f) => design.factors[f].levels.indexOf(part.split("=")[1]));
      const eta = Math.log(0.03 / 0.97) + levels.reduce((acc, l, f) => acc + shift[f][l], 0);
      p = 1 / (1 + Math.exp(-eta));
      cache.set(key, p);
    }
    return p;
  };
}

/** `picks` single-visitor rows served uniformly at random, outcomes from the truth. */
function uniformPicks(design: Design, rate: (key: string) => number, rng: Rng, picks: number, segment: string): FoldRow[] {
  const rows: FoldRow[] = [];
  const c = new Array<number>(design.factors.length);
  for (let i = 0; i < picks; i++) {
    for (let f = 0; f < c.length; f++) c[f] = rng.int(design.sizes[f]);
    const key = combinationKey(design, c);
    rows.push({ segment, combination: key, n: 1, k: rng.next() < rate(key) ? 1 : 0 });
  }
  return rows;
}

/** A state with `picks` visitors folded in for one segment (so posteriors are not just the prior). */
function warmState(design: Design, settings: PageSettings, rng: Rng, picks: number): { state: ModelState; rate: (key: string) => number } {
  const rate = truth(design, rng);
  const state = foldState({ design, settings, state: initialState(design, settings), rows: uniformPicks(design, rate, rng, picks, "search"), now: 0 }).state;
  return { state, rate };
}

export function runBench(runs: number, seed: number): BenchResult {
  const settings = parseSettings({ samples: 1000 });
  const rng = createRng(seed);

  const d72 = page([3, 3, 2, 2, 2]);
  const warm72 = warmState(d72, settings, rng, 20_000);
  let allocation: Allocation | undefined;
  const allocation72 = time(runs, 5, (i) => {
    allocation = foldCycle({ design: d72, settings, state: warm72.state, rows: [], now: 0, segments: [], retired: [], seed: seed + i }).allocations["*"];
  });

  const batch = 10_000;
  const pickRng = createRng(seed + 1);
  const picks = time(runs * 4, 20, () => {
    for (let i = 0; i < batch; i++) pickFrom(allocation!, pickRng);
  }).map((ms) => (ms * 1000) / batch);

  const d1024 = page([4, 4, 4, 4, 4]);
  const warm1024 = warmState(d1024, settings, rng, 50_000);
  const allocation1024 = time(Math.max(10, Math.round(runs / 2)), 2, (i) => {
    foldCycle({ design: d1024, settings, state: warm1024.state, rows: [], now: 0, segments: [], retired: [], seed: seed + i });
  });

  const foldBench = (levels: number[], reps: number): number[] => {
    const design = page(levels);
    const warm = warmState(design, settings, rng, 50_000);
    const batches = Array.from({ length: 4 }, () => uniformPicks(design, warm.rate, rng, 10_000, "search"));
    return time(reps, 3, (i) => {
      foldState({ design, settings, state: warm.state, rows: batches[(i + 4) % 4], now: 0 });
    });
  };
  const fold40 = foldBench([3, 3, 3, 3, 2], runs);
  const fold120 = foldBench([4, 4, 4, 4, 5], Math.max(10, Math.round(runs / 2)));

  // 200 segments (the default maxSegments), 1,000 picks each.
  const segmentRows = Array.from({ length: 200 }, (_, s) => uniformPicks(d72, warm72.rate, rng, 1_000, `source-${s}`)).flat();
  const manySites = sitesOf(foldState({ design: d72, settings, state: initialState(d72, settings), rows: segmentRows, now: 0 }).state);
  const posteriors200 = time(Math.max(10, Math.round(runs / 2)), 2, () => {
    computePosteriors(d72, settings, manySites);
  });

  return {
    pickDrawMicros: figure(picks),
    allocation72Millis: figure(allocation72),
    allocation1024Millis: figure(allocation1024),
    fold10kD40Millis: figure(fold40),
    fold10kD120Millis: figure(fold120),
    posteriors200Millis: figure(posteriors200),
  };
}

export async function run(argv: string[]): Promise<number> {
  const { values } = parseFlags(() =>
    parseArgs({ args: argv, strict: true, options: { json: { type: "boolean" }, runs: { type: "string" }, seed: { type: "string" } } }),
  );
  const runs = numberFlag("runs", values.runs, 60, { min: 5, max: 10_000, integer: true });
  const seed = numberFlag("seed", values.seed, 1, { min: 0, max: 2 ** 32 - 1, integer: true });
  const result = runBench(runs, seed);
  if (values.json) {
    console.log(JSON.stringify(result));
    return 0;
  }
  const rows: [string, Figure, string, number | null][] = [
    ["pick draw (72 combinations)", result.pickDrawMicros, "µs", 2],
    ["allocation rebuild, 72 combinations, M=1000", result.allocation72Millis, "ms", 30],
    ["allocation rebuild, 1,024 combinations, M=1000", result.allocation1024Millis, "ms", null],
    ["fold of 10,000 picks, d=42", result.fold10kD40Millis, "ms", 10],
    ["fold of 10,000 picks, d=119", result.fold10kD120Millis, "ms", null],
    ["posteriors, 200 segments, d=27, spread learned", result.posteriors200Millis, "ms", null],
  ];
  const fmt = (x: number) => (x < 10 ? x.toFixed(3) : x.toFixed(1));
  console.log(`${"measure".padEnd(48)} ${"median".padStart(10)} ${"p99".padStart(10)}  unit  target`);
  for (const [name, f, unit, target] of rows) {
    const verdict = target === null ? "-" : `≤ ${target} ${f.median <= target ? "(met)" : "(missed)"}`;
    console.log(`${name.padEnd(48)} ${fmt(f.median).padStart(10)} ${fmt(f.p99).padStart(10)}  ${unit.padEnd(4)}  ${verdict}`);
  }
  console.log(`(${runs} runs per figure on ${process.arch}, Node ${process.version})`);
  return 0;
}
