/**
 * One segment's allocation round: M posterior samples (sampling.ts), each sample's best allowed
 * combination (bestCombination.ts), the retirement rule (retirement.ts), the report figures
 * (summary.ts) and the served mixture (allocation.ts) — all from the same draws.
 *
 * The report uses the draws as they are: the probability of being best is the share of draws of
 * N(μ, Σ) a combination wins. The allocation uses them tempered, μ + α(θ − μ) ~ N(μ, α²Σ) with
 * α = thompsonScale: with α = 1 this is plain Thompson sampling and the two shares coincide; α < 1
 * sends less traffic to combinations that are only plausibly best. Shrinking the posterior's
 * spread for the draws is the variant Chapelle & Li found to lower regret over plain Thompson
 * sampling ("An Empirical Evaluation of Thompson Sampling", NIPS 2011, §4; cited from memory);
 * facetwise's default comes from the simulator (settings.ts). A settled segment (summary.ts)
 * stops exploring: its Thompson part goes to the leader alone, leaving the exploration floor and
 * the baseline share (DESIGN.md "Settled").
 *
 * The reported probabilities of being best and the expected loss come from the same draws unless
 * the ranking is uncertain or a figure is near a settle bar; then from fresh draws
 * (leaderFigures.ts), so the leader's figure carries no winner's curse and the decision has more
 * draws. The ranking, the allocation and retirement always use the first draws. Every probability
 * carries its Monte-Carlo error (monteCarloError.ts); the settle rule has hysteresis (settleRule.ts).
 */
import { type Allocation, frozenAllocation, mixAllocation } from "./allocation.ts";
import { comboTable, scanByClimbing, scanEnumerated, scoresOf } from "./bestCombination.ts";
import { combinationKey } from "./combinationKey.ts";
import { type Combination, type Design, writeActiveFeatures } from "./design.ts";
import type { Gaussian } from "./hierarchy.ts";
import { linearPredictors } from "./linearPredictor.ts";
import { predictedRates } from "./predictedRate.ts";
import { updateRetirement, type RetiredEntry } from "./retirement.ts";
import type { Rng } from "./rng.ts";
import { drawSamples, temperDraws } from "./sampling.ts";
import type { PageSettings } from "./settings.ts";
import { averageEffects } from "./averageEffects.ts";
import { freshFigures, refinementDraws } from "./leaderFigures.ts";
import { monteCarloError } from "./monteCarloError.ts";
import { nearBar, settleBars, settledStatus } from "./settleRule.ts";
import { type CombinationSummary, expectedLoss, factorEffects, rateBounds, rateFromScores, type SegmentSummary } from "./summary.ts";

export interface SegmentRoundInput {
  design: Design;
  settings: PageSettings;
  segment: string;
  posterior: Gaussian;
  /** τ the posterior was computed with (reported in the summary). */
  segmentSpread: number;
  rng: Rng;
  now: number;
  frozen: boolean;
  /** Currently retired combinations of this segment, by key. */
  active: Map<string, RetiredEntry>;
  counters: Map<string, number>;
  /** The segment's status after the previous round: a settled segment is held to the laxer unsettle bars (settleRule.ts). */
  wasSettled?: boolean;
  /** false: the summary carries no factor effects (see FoldCycleInput.effects). */
  effects?: boolean;
}

export interface SegmentRound {
  allocation: Allocation;
  summary: SegmentSummary;
  counters: Map<string, number>;
  newlyRetired: RetiredEntry[];
  reinstated: Map<string, string>;
}

const TOP = 10;

/** Candidates of one round's report: every allowed combination when listed, else the samples' winners. */
interface Candidates {
  keys: string[];
  combos: Combination[];
  probabilityBest: Float64Array;
  /** Each sample's best linear predictor among all allowed combinations. */
  bestScore: Float64Array;
  /** Posterior-mean linear predictor, the tie-break of the ranking. */
  meanScore: Float64Array;
}

/** What the allocation serves: the Thompson share of each candidate over tempered draws, and which are eligible. */
interface Served {
  keys: string[];
  combos: Combination[];
  thompson: Float64Array;
  eligible: Uint8Array;
}

export function allocateSegment(input: SegmentRoundInput): SegmentRound {
  const { design, settings, segment, posterior, rng } = input;
  const d = design.dimension;
  const M = settings.samples;
  const samples = drawSamples(posterior, d, M, rng);
  const meanTheta = new Float64Array(d + 1);
  meanTheta.set(posterior.mean);
  const activeIdx = new Int32Array(design.activeCount);
  const predictorFor = linearPredictors(posterior, d);
  const predictorOf = (c: Combination) => {
    writeActiveFeatures(design, c, activeIdx, 0);
    return predictorFor(activeIdx);
  };
  const scoresFor = (c: Combination, draws = samples, count = M): Float64Array => {
    writeActiveFeatures(design, c, activeIdx, 0);
    const out = new Float64Array(count);
    scoresOf(activeIdx, 0, activeIdx.length, draws, count, out);
    return out;
  };
  const meanScoreOf = (c: Combination): number => {
    writeActiveFeatures(design, c, activeIdx, 0);
    let acc = 0;
    for (let a = 0; a < activeIdx.length; a++) acc += meanTheta[activeIdx[a]];
    return acc;
  };
  const rank = (cand: Candidates): number[] =>
    cand.keys.map((_, i) => i).sort((a, b) => cand.probabilityBest[b] - cand.probabilityBest[a] || cand.meanScore[b] - cand.meanScore[a]);

  let cand: Candidates;
  let order: number[];
  let served: Served;
  let counters = new Map<string, number>();
  let newlyRetired: RetiredEntry[] = [];
  let reinstated = new Map<string, string>();
  if (design.enumerable) {
    const table = comboTable(design);
    const eligible = Uint8Array.from(table.keys, (k) => (input.active.has(k) ? 0 : 1));
    const meanScore = Float64Array.from(table.combos, meanScoreOf);
    const tempering = { scale: settings.thompsonScale, meanScore };
    let scan = scanEnumerated(table, samples, M, eligible, tempering);
    const probabilityBest = scan.countAll.map((x) => x / M);
    cand = { keys: table.keys, combos: table.combos, probabilityBest, bestScore: scan.bestScore, meanScore };
    order = rank(cand);
    // Retirement needs the upper bound only of combinations that could be (or are) retired.
    const upper = new Float64Array(table.keys.length).fill(Infinity);
    table.keys.forEach((key, i) => {
      if (probabilityBest[i] < settings.retireProbability || input.active.has(key)) upper[i] = rateBounds(predictorOf(table.combos[i])).upper;
    });
    const update = updateRetirement({
      segment,
      keys: table.keys,
      probabilityBest,
      upper,
      leader: order[0],
      leaderLower: rateBounds(predictorOf(table.combos[order[0]])).lower,
      counters: input.counters,
      active: input.active,
      settings,
      now: input.now,
    });
    ({ counters, reinstated } = update);
    newlyRetired = update.retired;
    if (newlyRetired.length > 0 || reinstated.size > 0) {
      // The eligible set changed: recount the Thompson shares over the new one.
      for (const r of newlyRetired) eligible[table.indexOfKey.get(r.combination)!] = 0;
      for (const key of reinstated.keys()) eligible[table.indexOfKey.get(key)!] = 1;
      scan = scanEnumerated(table, samples, M, eligible, tempering);
    }
    served = { keys: table.keys, combos: table.combos, thompson: scan.countEligible.map((x) => x / M), eligible };
  } else {
    // Retirement needs every combination's bounds, so it applies to listed spaces only.
    const scan = scanByClimbing(design, samples, M, meanTheta, rng);
    const probabilityBest = Float64Array.from(scan.winners, (w) => w.count / M);
    cand = {
      keys: scan.winners.map((w) => w.key),
      combos: scan.winners.map((w) => w.combination),
      probabilityBest,
      bestScore: scan.bestScore,
      meanScore: Float64Array.from(scan.winners, (w) => meanScoreOf(w.combination)),
    };
    order = rank(cand);
    // Tempered draws need their own climb: the best combination of μ + α(θ − μ) is not θ's.
    const alpha = settings.thompsonScale;
    const tempered = alpha === 1 ? scan : scanByClimbing(design, temperDraws(samples, meanTheta, d, M, alpha), M, meanTheta, rng);
    served = {
      keys: tempered.winners.map((w) => w.key),
      combos: tempered.winners.map((w) => w.combination),
      thompson: Float64Array.from(tempered.winners, (w) => w.count / M),
      eligible: new Uint8Array(tempered.winners.length).fill(1),
    };
  }

  // Report figures: from the allocation's draws, or from fresh ones where the ranking is uncertain
  // or a settle figure is near its bar (leaderFigures.ts, settleRule.ts).
  const leaderCombo = cand.combos[order[0]];
  const leaderRate = rateFromScores(scoresFor(leaderCombo), predictorOf(leaderCombo));
  const bars = settleBars(settings, input.wasSettled === true);
  let probabilityBest = cand.probabilityBest;
  const drawsOf = new Float64Array(cand.keys.length).fill(M);
  let loss = expectedLoss(cand.bestScore, scoresFor(leaderCombo));
  const lossFractionOf = (value: number) => (leaderRate.mean > 0 ? value / leaderRate.mean : Infinity);
  const refine = refinementDraws({
    samples: M,
    leaderProbability: cand.probabilityBest[order[0]],
    runnerUpProbability: order.length > 1 ? cand.probabilityBest[order[1]] : 0,
    nearBar: nearBar({
      leaderProbability: cand.probabilityBest[order[0]],
      leaderProbabilityError: monteCarloError(bars.probability, M).standardError,
      lossFraction: lossFractionOf(loss.value),
      lossFractionError: lossFractionOf(loss.standardError),
    }, bars),
  });
  if (refine.draws > 0) {
    const R = refine.draws;
    const fresh = freshFigures(design, posterior, cand.keys, R, meanTheta, rng);
    loss = expectedLoss(fresh.bestScore, scoresFor(leaderCombo, fresh.samples, R));
    if (refine.scope === "all") {
      probabilityBest = fresh.probabilityBest;
      drawsOf.fill(R);
    } else {
      probabilityBest = cand.probabilityBest.slice();
      probabilityBest[order[0]] = fresh.probabilityBest[order[0]];
      drawsOf[order[0]] = R;
    }
  }

  const summarize = (c: Combination, key: string, p: number, draws: number): CombinationSummary => ({
    combination: key,
    probabilityBest: p,
    probabilityBestError: monteCarloError(p, draws),
    rate: rateFromScores(scoresFor(c), predictorOf(c)),
  });
  const top = order.slice(0, TOP).map((i) => summarize(cand.combos[i], cand.keys[i], probabilityBest[i], drawsOf[i]));
  const leader = top[0];
  const baselineKey = combinationKey(design, design.baseline);
  const baselineAt = cand.keys.indexOf(baselineKey);
  const baseline = baselineAt >= 0
    ? summarize(design.baseline, baselineKey, probabilityBest[baselineAt], drawsOf[baselineAt])
    : summarize(design.baseline, baselineKey, 0, M);
  const lossFraction = lossFractionOf(loss.value);
  const summary: SegmentSummary = {
    segment,
    ...settledStatus(leader.probabilityBest, lossFraction, bars),
    leader,
    top,
    expectedLoss: loss.value,
    expectedLossError: loss.standardError,
    expectedLossFraction: lossFraction,
    baseline,
    effects: input.effects === false ? [] : factorEffects(design, posterior, averageEffects(design, samples, M, rng)),
    segmentSpread: input.segmentSpread,
  };

  if (summary.status === "settled") served = onLeader(served, leader.combination, leaderCombo);
  // Each pick stores the predicted rate of what it served (prequential calibration, calibration.ts).
  const predictedOf = (c: Combination) => predictedRates(design, posterior, [c])[0];
  const allocation = input.frozen
    ? frozenAllocation(segment, leader.combination, predictedOf(leaderCombo))
    : mixAllocation({
        segment,
        keys: served.keys,
        predicted: predictedRates(design, posterior, served.combos),
        thompson: served.thompson,
        eligible: served.eligible,
        baselineKey,
        baselinePredicted: predictedOf(design.baseline),
        baselineShare: settings.baselineShare,
        explorationFloor: settings.explorationFloor,
        space: design.enumerable
          ? undefined
          : { eligibleCount: design.allowedCount, factors: design.factors.map((f) => ({ name: f.name, levels: f.levels })), exclusions: design.exclusions, retired: [] },
      });
  return { allocation, summary, counters, newlyRetired, reinstated };
}

/** The Thompson part moved onto the leader alone (a settled segment keeps only the floor and the baseline share besides). */
function onLeader(served: Served, leader: string, leaderCombo: Combination): Served {
  const at = served.keys.indexOf(leader);
  if (at >= 0) return { ...served, thompson: Float64Array.from(served.keys, (_, i) => (i === at ? 1 : 0)) };
  return {
    keys: [...served.keys, leader],
    combos: [...served.combos, leaderCombo],
    thompson: Float64Array.from({ length: served.keys.length + 1 }, (_, i) => (i === served.keys.length ? 1 : 0)),
    eligible: Uint8Array.from([...served.eligible, 1]),
  };
}
