/**
 * The public surface of the statistical engine. Everything outside src/model imports from here.
 * See the doc comment of each file for the maths and its sources; foldCycle.ts is the entry
 * point of the fold loop.
 */
export {
  buildDesign,
  featureVector,
  MAX_DIMENSION,
  type Combination,
  type Design,
  type DesignFactor,
  type Exclusion,
  type FactorSpec,
  type LevelSpec,
  type PageDefinition,
} from "./design.ts";
export { combinationKey, parseCombinationKey } from "./combinationKey.ts";
export { allowedCombinations, ENUMERATION_LIMIT, isAllowed } from "./allowed.ts";
export { defaultSettings, parseSettings, settingsSchema, type PageSettings } from "./settings.ts";
export { createRng, type Rng } from "./rng.ts";
export { deserializeState, initialState, isLegacyState, serializeState, sitesOf, type ModelState } from "./state.ts";
export { upgradeState, type PastFold } from "./upgradeState.ts";
export { featureMapping, remapState } from "./remap.ts";
export type { FoldRow } from "./fold.ts";
export { foldCycle, foldState, POOLED, type FoldCycleInput, type FoldCycleOutput } from "./foldCycle.ts";
export { pickFrom, predictedOf, propensityOf, type Allocation } from "./allocation.ts";
export { combinationRates } from "./combinationRates.ts";
export { quantileInPlace } from "./quantile.ts";
export type { RetiredEntry } from "./retirement.ts";
export type { CombinationSummary, FactorEffect, LevelEffect, RateInterval, SegmentSummary } from "./summary.ts";
export { monteCarloError, type MonteCarloError } from "./monteCarloError.ts";
export { sigmoid } from "./logistic.ts";

// Statistics primitives (stats helper's files).
export { normalCdf } from "./normalCdf.ts";
export { normalQuantile } from "./normalQuantile.ts";
export { fisherExact, type FisherExactResult } from "./fisherExact.ts";
export { twoProportionZTest, type ZTestResult } from "./twoProportionZTest.ts";
export { liftInterval, type LiftEstimate, type LiftInterval } from "./liftInterval.ts";
export { crossCheck, ADAPTIVE_ALLOCATION_WARNING, type Arm, type CrossCheck } from "./crossCheck.ts";
export { sampleSizeTwoProportions, type SampleSizeInput } from "./sampleSizeTwoProportions.ts";
export { calibration, LATEST_PICKS, MAX_BINS, PICKS_PER_BIN, wilsonInterval, type BinTotals, type Calibration, type CalibrationBin } from "./calibration.ts";
