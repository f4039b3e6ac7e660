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
 * was worse): regret 1,491 → 1,292 (savingVsSplit 0.64 → 0.69, regretVsIndependent 0.53 → 0.46),
 * every final leader still correct. Folding hourly instead of every 15 minutes (foldIntervalSeconds
 * 900 → 3600) gave the same regret within run-to-run noise (1,230) at a quarter of the folds. 1% of traffic still gives the baseline about 2,000 visitors
 * per 200,000 for the naive cross-check.
 */
import { z } from "zod";
import { fail } from "../errors.ts";

const probability = z.number().min(0).max(1);

export const settingsSchema = z.strictObject({
  attributionWindowHours: z.number().positive().default(24),
  assignmentHours: z.number().positive().default(720),
  foldIntervalSeconds: z.number().positive().default(3600),
  explorationFloor: probability.lt(1).default(0.005),
  baselineShare: probability.lt(1).default(0.01),
  settleProbability: z.number().gt(0).max(1).default(0.95),
  settleLossFraction: z.number().min(0).default(0.01),
  retireProbability: probability.lt(1).default(0.001),
  retireAfterFolds: z.number().int().min(1).default(3),
  halfLifeDays: z.number().positive().nullable().default(null),
  segmentSpread: z.number().min(0).max(10).default(0.1),
  segmentInterceptSpread: z.number().min(0).max(10).default(1),
  priorInterceptMean: z.number().min(-30).max(30).default(-3),
  priorInterceptScale: z.number().positive().max(100).default(2),
  priorMainScale: z.number().positive().max(100).default(0.25),
  priorInteractionScale: z.number().positive().max(100).default(0.1),
  samples: z.number().int().min(100).max(100_000).default(1000),
  maxSegments: z.number().int().min(1).max(100_000).default(200),
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
