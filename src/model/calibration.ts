/**
 * Prequential calibration: how well the rates the model predicted when it served each pick
 * (predictedRate.ts, stored with the pick) foretold what those visitors then did. Only picks
 * whose attribution window has closed are scored, each once, with the forecast made before its
 * outcome was known — Dawid's prequential principle ("Statistical theory: the prequential
 * approach", JRSS A 147, 1984, 278–292). Comparing the current posterior with the data it was
 * fitted on is not calibration and is not reported.
 *
 * From per-bin totals (the report forms them in SQL) it computes:
 * - bins of equal pick counts by predicted rate, up to ties: of the n most recent scored picks
 *   (at most LATEST_PICKS), all picks with one predicted value go to bin ⌊s·B/n⌋, s the number of
 *   picks predicted lower, B = max(1, min(MAX_BINS, ⌊n/PICKS_PER_BIN⌋)) — without ties every bin
 *   holds ⌊n/B⌋ or ⌈n/B⌉ picks; a tie is never split, so the bins do not depend on row order
 *   (repositories/reports.ts `calibrationBins` forms them);
 *   per bin the mean prediction, the observed rate and its 95% Wilson score interval
 *   (E. B. Wilson, "Probable inference, the law of succession, and statistical inference",
 *   JASA 22, 1927, 209–212), which keeps sensible bounds at 0 or few conversions;
 * - the log loss −(1/n)Σ[yᵢ ln pᵢ + (1−yᵢ) ln(1−pᵢ)] (the logarithmic scoring rule of
 *   I. J. Good, "Rational decisions", JRSS B 14, 1952, 107–114) and its skill against the constant
 *   forecast ȳ, the observed rate of the same picks: 1 − LL/LL(ȳ), LL(ȳ) = −[ȳ ln ȳ + (1−ȳ) ln(1−ȳ)];
 * - the Brier score (1/n)Σ(pᵢ − yᵢ)² (G. W. Brier, Monthly Weather Review 78, 1950, 1–3) and the
 *   Brier skill score 1 − BS/(ȳ(1−ȳ)) against the same constant (D. S. Wilks, "Statistical Methods
 *   in the Atmospheric Sciences", 3rd ed., 2011, §8.4). The constant is known only in hindsight,
 *   so it is a demanding reference: a skill above 0 means the model's rates told visitors apart
 *   better than one overall rate would have; 0 or below, that they did not (yet).
 *
 * Below MIN_PICKS scored picks or MIN_CONVERSIONS conversions nothing but the counts is reported
 * (a rule of thumb: common practice, no source; with fewer, every bin's interval spans most of
 * the range and the skill is noise).
 */
import { normalQuantile } from "./normalQuantile.ts";

export const MIN_PICKS = 200;
export const MIN_CONVERSIONS = 10;
export const MAX_BINS = 10;
export const PICKS_PER_BIN = 100;
/** Only the most recent scored picks are binned: the model changes, and the report's cost stays bounded. */
export const LATEST_PICKS = 100_000;

const Z975 = normalQuantile(0.975);

/** Totals of one bin of scored picks. */
export interface BinTotals {
  picks: number;
  conversions: number;
  /** Σ pᵢ, min pᵢ and max pᵢ over the bin's picks. */
  sumPredicted: number;
  minPredicted: number;
  maxPredicted: number;
  /** Σ −[yᵢ ln pᵢ + (1−yᵢ) ln(1−pᵢ)] */
  logLoss: number;
  /** Σ (pᵢ − yᵢ)² */
  squaredError: number;
}

export interface CalibrationBin {
  picks: number;
  conversions: number;
  /** Range and mean of the predicted rates in the bin. */
  from: number;
  to: number;
  predicted: number;
  /** Observed conversion rate and its 95% Wilson score interval. */
  observed: number;
  lower: number;
  upper: number;
}

export interface Calibration {
  /** Scored picks (window closed, prediction stored) and their conversions. */
  picks: number;
  conversions: number;
  /** What `enough` asks for: MIN_PICKS and MIN_CONVERSIONS. */
  needs: { picks: number; conversions: number };
  /** False below MIN_PICKS picks or MIN_CONVERSIONS conversions: then bins is empty and the scores are null. */
  enough: boolean;
  bins: CalibrationBin[];
  /** Observed rate of the scored picks: the constant forecast the skill scores compare with. */
  observedRate: number | null;
  logLoss: number | null;
  logLossSkill: number | null;
  brier: number | null;
  brierSkill: number | null;
}

/** The 95% Wilson score interval of `successes` in `trials` (trials ≥ 1). */
export function wilsonInterval(successes: number, trials: number, z = Z975): { lower: number; upper: number } {
  const p = successes / trials;
  const z2 = z * z;
  const denominator = 1 + z2 / trials;
  const centre = (p + z2 / (2 * trials)) / denominator;
  const half = (z / denominator) * Math.sqrt((p * (1 - p)) / trials + z2 / (4 * trials * trials));
  // Clamp the rounding at the ends (the exact bounds are 0 at 0 successes and 1 at all).
  return { lower: successes === 0 ? 0 : Math.max(0, centre - half), upper: successes === trials ? 1 : Math.min(1, centre + half) };
}

/** The calibration report from the bins' totals, in bin order. */
export function calibration(bins: BinTotals[]): Calibration {
  let picks = 0;
  let conversions = 0;
  let logLoss = 0;
  let squaredError = 0;
  for (const b of bins) {
    picks += b.picks;
    conversions += b.conversions;
    logLoss += b.logLoss;
    squaredError += b.squaredError;
  }
  const enough = picks >= MIN_PICKS && conversions >= MIN_CONVERSIONS;
  const needs = { picks: MIN_PICKS, conversions: MIN_CONVERSIONS };
  if (!enough) return { picks, conversions, needs, enough, bins: [], observedRate: null, logLoss: null, logLossSkill: null, brier: null, brierSkill: null };
  const rate = conversions / picks;
  const referenceLogLoss = -(xLogX(rate) + xLogX(1 - rate));
  const referenceBrier = rate * (1 - rate);
  return {
    picks,
    conversions,
    needs,
    enough,
    bins: bins.map((b) => ({
      picks: b.picks,
      conversions: b.conversions,
      from: b.minPredicted,
      to: b.maxPredicted,
      predicted: b.sumPredicted / b.picks,
      observed: b.conversions / b.picks,
      ...wilsonInterval(b.conversions, b.picks),
    })),
    observedRate: rate,
    logLoss: logLoss / picks,
    logLossSkill: referenceLogLoss > 0 ? 1 - logLoss / picks / referenceLogLoss : null,
    brier: squaredError / picks,
    brierSkill: referenceBrier > 0 ? 1 - squaredError / picks / referenceBrier : null,
  };
}

const xLogX = (x: number) => (x === 0 ? 0 : x * Math.log(x));
