/** The server's JSON shapes the console reads (see the "Report JSON shape" section of the HTTP API). */

export interface LevelSpec { name: string; value?: string }
export interface FactorSpec { name: string; levels: LevelSpec[] }
export type Exclusion = Record<string, string>;
export type Settings = Record<string, number | null>;
export type PageStatus = "active" | "paused" | "frozen";

export interface CombinationCounts { total: number; allowed: number; excluded: number }

export interface Page {
  key: string;
  name: string;
  publicKey: string;
  status: PageStatus;
  demo: boolean;
  factors: FactorSpec[];
  exclude: Exclusion[];
  segmentBy: string[];
  interactions: [string, string][] | null;
  settings: Settings;
  baseline: string;
  combinations: CombinationCounts;
  dimension: number;
  modelVersion: number;
  lastFoldAt: string | null;
  createdAt: string;
  updatedAt: string;
  /** settled: segments whose latest summary says settled */
  totals: { visitors: number; conversions: number; segments: number; settled: number };
}

export interface PageDefinitionBody {
  factors: FactorSpec[];
  exclude?: Exclusion[];
  segmentBy?: string[];
  interactions?: [string, string][] | null;
  settings?: Settings;
}

export interface DefinitionCheck { factors: { name: string; levels: string[] }[]; combinations: CombinationCounts; dimension: number }

/** A definition's factors, rules and pairs: POST /definitions/check takes these alone or within a whole create body. */
export interface DefinitionCore { factors: FactorSpec[]; exclude?: Exclusion[]; interactions?: [string, string][] }

export interface LearnedNote {
  action: "unchanged" | "kept" | "remapped";
  message: string;
  keptFeatures: number;
  droppedFeatures: string[];
  addedFeatures: string[];
  droppedOpenPicks: number;
  foldPending: boolean;
}

export interface RateInterval { mean: number; lower: number; upper: number }

export interface CombinationReport {
  combination: string;
  levels: Record<string, { level: string; value?: string | null }>;
  probabilityBest: number;
  /** Monte-Carlo error of probabilityBest: binomial standard error and 95 % Wilson bounds over `draws` posterior draws. */
  probabilityBestError: ProbabilityError;
  rate: RateInterval;
  visitors: number;
  conversions: number;
}

export interface ProbabilityError { draws: number; standardError: number; lower: number; upper: number }

export interface Estimate3 { mean: number; lower: number; upper: number }

export interface LevelEffect {
  level: string;
  /** Average change in conversion rate against the reference level (a difference of rates); null when never comparable. */
  difference: Estimate3 | null;
  relative: Estimate3 | null;
  contexts: number;
  oddsRatioAtFirstLevels: { estimate: number; lower: number; upper: number };
}

export interface FactorEffect {
  factor: string;
  reference: string;
  levels: LevelEffect[];
}

export interface RetiredReport {
  combination: string;
  reason: string;
  figures: { probabilityBest: number; upper: number; leader: string; leaderLower: number; folds: number };
  retiredAt: string;
  reinstatedAt: string | null;
  reinstateReason: string | null;
}

export interface Estimate { estimate: number; lower: number; upper: number; method?: string }

/** Prequential calibration (src/model/calibration.ts): picks scored once their window closed. */
export interface Calibration {
  picks: number;
  conversions: number;
  needs: { picks: number; conversions: number };
  /** false: too little data; bins is empty and the scores are null */
  enough: boolean;
  /** equal-count bins by predicted rate: range and mean prediction, observed rate with its 95% Wilson interval */
  bins: { picks: number; conversions: number; from: number; to: number; predicted: number; observed: number; lower: number; upper: number }[];
  observedRate: number | null;
  logLoss: number | null;
  logLossSkill: number | null;
  brier: number | null;
  brierSkill: number | null;
}

export interface CrossCheck {
  leader: { visitors: number; conversions: number };
  baseline: { visitors: number; conversions: number };
  zTest: { z: number; pValue: number };
  fisher: { less: number; greater: number; twoSided: number };
  lift: { absolute: Estimate; relative: Estimate };
  warning: string;
}

export interface SegmentReport {
  segment: string;
  context: Record<string, string>;
  visitors: number;
  conversions: number;
  folded: number;
  status: "waiting" | "exploring" | "settled";
  settledBy: "probability" | "loss" | null;
  leader: CombinationReport | null;
  baseline: CombinationReport | null;
  top: CombinationReport[];
  expectedLoss: number | null;
  expectedLossError: number | null;
  expectedLossFraction: number | null;
  effects: FactorEffect[];
  /** Learned sd of a segment's effects around the pooled ones (log-odds); null before the first fold. */
  segmentSpread: number | null;
  retired: RetiredReport[];
  crossCheck: CrossCheck | null;
  calibration: Calibration;
  allocation: Record<string, number>;
}

export interface AllocationPoint { version: number; at: string; shares: Record<string, number> }

export interface Report {
  page: string;
  status: PageStatus;
  modelVersion: number;
  lastFoldAt: string | null;
  generatedAt: string;
  settings: Settings;
  totals: { visitors: number; conversions: number; pending: number };
  segments: SegmentReport[];
  pooled: SegmentReport;
  allocationHistory: Record<string, AllocationPoint[]>;
}

export interface ExportJson {
  page: string;
  modelVersion: number;
  generatedAt: string;
  segments: {
    segment: string;
    context: Record<string, string>;
    status: string;
    combination: string;
    levels: Record<string, { level: string; value?: string | null }>;
    probabilityBest: number | null;
    probabilityBestError: ProbabilityError | null;
    rate: RateInterval | null;
  }[];
}

export interface SessionInfo { ok: boolean; scope: string; demoPage: string | null; defaultSettings: Settings }
