/**
 * Page settings: the knobs of one page's engine (attribution, fold period, exploration, settle
 * and retire thresholds, forgetting, priors, sample count). The scenario file's `engine` block
 * uses the same names. Every field is optional and takes the default below; unknown names are
 * rejected so a typo never silently falls back to a default.
 *
 * Prior scales are "common practice, no source" (DESIGN.md "Priors matter more than anything"):
 * one page element rarely moves conversion by more than ±0.5 log-odds, interactions are smaller,
 * and segments differ by less again (segmentSpread; 0.1 rather than the contract's first 0.25
 * because the simulator preferred it on every scenario tried — lower regret and more correct final
 * leaders on the reference, many-segments, three-factor and near-tie scenarios); the intercept prior N(−3, 2²) covers baseline
 * rates from about 0.1% to 50% within ±2 sd. Traffic sources differ most in their overall level,
 * so a segment's intercept may deviate more (segmentInterceptSpread, sd 1 ≈ a factor 2.7 in odds).
 *
 * The fixed costs and prior scales were set from simulator runs (`facetwise simulate`, reference
 * scenario, 2 runs × 200,000 visitors, fold rule "trial at once, conversion when reported"):
 * baselineShare 0.05 → 0.01 and explorationFloor 0.02 → 0.005 (together they cost ≈ 390 lost
 * conversions there), priorMainScale 0.5 → 0.25 and priorInteractionScale 0.25 → 0.1 (0.15/0.05
 * was worse): regret 1,491 → 1,292, every final leader still correct. Folding hourly instead of
 * every 15 minutes (foldIntervalSeconds 900 → 3600) gave the same regret within run-to-run noise
 * at a quarter of the folds — and with tempered draws (below) 15-minute folds were worse (reference,
 * 10 runs: 899 against 793). 1% of traffic still gives the baseline about 2,000 visitors per
 * 200,000 for the naive cross-check.
 *
 * thompsonScale (tempered Thompson draws, allocateSegment.ts) and explorationFloor were then set
 * together on all five 72-combination scenarios of test/scenarios (10 runs × 200,000 visitors
 * each; mean regret, share of final leaders within mde):
 *   α = 1,   floor 0.005 (4 runs): reference 1,238; many-segments 1,365; near-tie 878;
 *                                  three-factor 876; trend-shift 1,112
 *   α = 0.5, floor 0.005: 793 (0.97); 661 (0.94); 715 (0.85); 523 (1.00); 849 (0.75)
 *   α = 0.6, floor 0.005: 869 (1.00); 821 (0.95); 547 (1.00); 631 (1.00); 903 (0.95)
 *   α = 0.6, floor 0.01:  806 (1.00); 785 (0.98); 522 (1.00); 620 (1.00); 919 (0.80)
 *   α = 0.7, floor 0.005: 876 (0.97); 936 (0.94); 515 (1.00); 618 (1.00); 945 (0.90)
 * Lower α cuts regret but leaves more runs stuck on a leader that only the segment's own data can
 * overturn (run-to-run sd 100–500); 0.6 with a 1% floor kept the final leaders right on every
 * scenario but the trend shift. With forgetting on, tempered draws slow the rediscovery of a
 * level that became best (trend-shift with τ fixed: 0.80 of final leaders right, 0.90 at α = 1).
 *
 * segmentSpread is the centre of a learned spread (spreadSearch.ts): each fold picks τ from a
 * quarter to four times the setting by the sites' marginal likelihood. A fixed τ had to trade
 * scenarios (10 runs each, reference 60 runs with --seed 2; mean regret):
 *                 reference  many-segments  three-factor  near-tie  trend-shift
 *   τ = 0.1 fixed      805        785            606         522        919 (0.80)
 *   τ = 0.07 fixed     778        677          1,017         419        884 (0.90)
 *   τ = 0.05 fixed     750        592            736         534        841 (0.75)
 *   τ learned          731        550            499         459        835 (0.95)
 * Smaller fixed spreads pool faster but leave runs stuck where one segment truly differs
 * (three-factor's social segment: runs of 2,678 and 2,376); the learned spread pools where the
 * segments agree and lets go where they do not, and was best or near best on every scenario.
 *
 * unsettleProbability 0.9 and unsettleLossFraction 0.015 are the lower bars a settled segment must
 * cross to explore again (settleRule.ts). 0.9 is about 7 Monte-Carlo standard errors below 0.95 at
 * M = 1,000 (√(0.95·0.05/1000) = 0.0069), so draw noise alone never unsettles, while a leader that
 * truly lost ground (a one-in-ten chance that another combination is best) does; 1.5% is half the
 * settle bar again above it, the margin issue 10 suggested. Both are common practice for a
 * hysteresis band, no source.
 */
import { z } from "zod";
import { fail } from "../errors.ts";

const probability = z.number().min(0).max(1);

export const settingsSchema = z.strictObject({
  attributionWindowHours: z.number().positive().default(24),
  assignmentHours: z.number().positive().default(720),
  foldIntervalSeconds: z.number().positive().default(3600),
  explorationFloor: probability.lt(1).default(0.01),
  baselineShare: probability.lt(1).default(0.01),
  settleProbability: z.number().gt(0).max(1).default(0.95),
  settleLossFraction: z.number().min(0).default(0.01),
  unsettleProbability: z.number().gt(0).max(1).default(0.9),
  unsettleLossFraction: z.number().min(0).default(0.015),
  retireProbability: probability.lt(1).default(0.001),
  retireAfterFolds: z.number().int().min(1).default(3),
  halfLifeDays: z.number().positive().nullable().default(null),
  segmentSpread: z.number().min(0).max(10).default(0.1),
  segmentInterceptSpread: z.number().min(0).max(10).default(1),
  priorInterceptMean: z.number().min(-30).max(30).default(-3),
  priorInterceptScale: z.number().positive().max(100).default(2),
  priorMainScale: z.number().positive().max(100).default(0.25),
  priorInteractionScale: z.number().positive().max(100).default(0.1),
  thompsonScale: z.number().gt(0).max(1).default(0.6),
  samples: z.number().int().min(100).max(100_000).default(1000),
  maxSegments: z.number().int().min(1).max(100_000).default(200),
  // public-route rate limits (token buckets, src/http/rateLimit.ts): not statistics, but per page
  addressRequestsPerMinute: z.number().int().min(1).max(1_000_000).default(120),
  pageRequestsPerMinute: z.number().int().min(1).max(100_000_000).default(60_000),
});

export type PageSettings = z.output<typeof settingsSchema>;

export const defaultSettings: PageSettings = Object.freeze(settingsSchema.parse({}));

/**
 * Validates page settings (partial input is completed with defaults).
 * Throws INVALID_SETTING naming the first offending field.
 */
export function parseSettings(input: unknown): PageSettings {
  const result = settingsSchema.safeParse(input ?? {});
  if (result.success) return result.data;
  const issue = result.error.issues[0];
  if (issue.code === "unrecognized_keys") {
    const name = issue.keys[0];
    throw fail("INVALID_SETTING", { setting: name, reason: "no such setting; see the settings table" }, name);
  }
  const name = issue.path.length > 0 ? issue.path.map(String).join(".") : "settings";
  throw fail("INVALID_SETTING", { setting: name, reason: issue.message }, name);
}
