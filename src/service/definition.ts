/**
 * Between the stored page and the engine: the page definition and design of a stored page, the
 * segment a visitor's context falls in, a combination's levels with their values, and the page
 * object the API returns (shape in the contract, "Report JSON shape").
 */
import { buildDesign, combinationKey, parseCombinationKey, isAllowed, parseSettings, settingsSchema } from "../model/index.ts";
import type { Design, PageDefinition, PageSettings } from "../model/index.ts";
import type { StoredPage, PageTotals } from "../store/repositories/pages.ts";
import { fail } from "../errors.ts";
import { firstIssue, reasonOf } from "../issues.ts";

/** The demo page's key; only it accepts POST /demo-traffic. */
export const DEMO_PAGE_KEY = "bike-repair-demo";

export function definitionOf(page: Pick<StoredPage, "factors" | "exclude" | "interactions">): PageDefinition {
  return {
    factors: page.factors.map((f) => ({ name: f.name, levels: f.levels.map((l) => ({ name: l.name, value: l.value })) })),
    exclude: page.exclude,
    ...(page.interactions === null ? {} : { interactions: page.interactions }),
  };
}

export function designOf(page: Pick<StoredPage, "factors" | "exclude" | "interactions">): Design {
  return buildDesign(definitionOf(page));
}

/**
 * A stored page's settings, resolved. Names this version no longer knows are dropped (a setting
 * renamed or removed in an upgrade must not make existing pages unreadable); new ones take their
 * defaults.
 */
export function settingsOf(page: Pick<StoredPage, "settings">): PageSettings {
  const known = Object.entries(page.settings).filter(([name]) => name in settingsSchema.shape);
  return parseSettings(Object.fromEntries(known));
}

/**
 * Settings a user sent, checked by the engine's own schema; its complaint is worded like every
 * other bad input (INVALID_SETTING naming the setting, e.g. "the value must be less than 1").
 */
export function settingsFrom(input: Record<string, unknown>): PageSettings {
  const result = settingsSchema.safeParse(input, { reportInput: true });
  if (result.success) return result.data;
  const issue = firstIssue(result.error.issues);
  // an unknown name: the engine's own answer points at the settings table
  if (issue.code === "unrecognized_keys" || issue.path.length === 0) return parseSettings(input);
  const name = issue.path.map(String).join(".");
  throw fail("INVALID_SETTING", { setting: name, reason: reasonOf(issue, "the value") }, name);
}

export interface SegmentOf { key: string; context: Record<string, string> }

/** The segment of a visitor: the page's segmentBy context values, "key=value" joined by "|"; "all" without segmentBy. */
export function segmentOf(segmentBy: string[], context: Record<string, string | number | boolean> | undefined): SegmentOf {
  if (segmentBy.length === 0) return { key: "all", context: {} };
  const picked: Record<string, string> = {};
  for (const name of segmentBy) picked[name] = context?.[name] === undefined ? "" : String(context[name]);
  return { key: segmentBy.map((name) => `${name}=${picked[name]}`).join("|"), context: picked };
}

/** A combination key's levels as the landing page renders them: {factor: {level, value}}. */
export function levelsOf(page: Pick<StoredPage, "factors">, key: string): Record<string, { level: string; value: string }> {
  const out: Record<string, { level: string; value: string }> = {};
  for (const part of key.split("|")) {
    const at = part.indexOf("=");
    const factor = part.slice(0, at);
    const level = part.slice(at + 1);
    const value = page.factors.find((f) => f.name === factor)?.levels.find((l) => l.name === level)?.value ?? "";
    out[factor] = { level, value };
  }
  return out;
}

/** True when the key names an allowed combination of this design (a page edit can invalidate old keys). */
export function servable(design: Design, key: string): boolean {
  try {
    return isAllowed(design, parseCombinationKey(design, key));
  } catch {
    return false;
  }
}

export function baselineKey(design: Design): string {
  return combinationKey(design, design.baseline);
}

export interface PageView {
  key: string; name: string; publicKey: string; status: StoredPage["status"]; demo: boolean;
  factors: { name: string; levels: { name: string; value: string }[] }[];
  exclude: Record<string, string>[]; segmentBy: string[]; interactions: [string, string][] | null;
  settings: PageSettings; baseline: string;
  combinations: { total: number; allowed: number; excluded: number }; dimension: number;
  modelVersion: number; lastFoldAt: string | null; createdAt: string; updatedAt: string;
  totals: PageTotals;
}

export function pageView(page: StoredPage, design: Design, totals: PageTotals | undefined): PageView {
  return {
    key: page.key, name: page.name, publicKey: page.publicKey, status: page.status, demo: page.key === DEMO_PAGE_KEY,
    factors: page.factors, exclude: page.exclude, segmentBy: page.segmentBy, interactions: page.interactions,
    settings: settingsOf(page), baseline: page.baseline,
    combinations: { total: design.totalCount, allowed: design.allowedCount, excluded: design.excludedCount },
    dimension: design.dimension, modelVersion: page.modelVersion,
    lastFoldAt: page.lastFoldAt ? page.lastFoldAt.toISOString() : null,
    createdAt: page.createdAt.toISOString(), updatedAt: page.updatedAt.toISOString(),
    totals: totals ?? { visitors: 0, conversions: 0, segments: 0, settled: 0 },
  };
}
