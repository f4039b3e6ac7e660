/**
 * Pages: create (validated by the engine's design builder, then an initial fold so the page can
 * serve at once), list, read, check a definition without saving, and edit — settings, levels and
 * factors (the learned state is remapped by the engine), pause, resume, freeze — saying what
 * happened to what was learned.
 */
import { EventEmitter } from "node:events";
import type { Pool } from "pg";
import { featureMapping, parseSettings, remapState, serializeState } from "../model/index.ts";
import type { Design } from "../model/index.ts";
import { fail } from "../errors.ts";
import { inTransaction } from "../store/repositories/sql.ts";
import {
  insertPage, listPages, loadPage, pageTotals, replaceDefinition, updateLevelValue, updatePageFields,
  type StoredFactor, type StoredPage,
} from "../store/repositories/pages.ts";
import { foldLock, insertSnapshot, loadSnapshot, foldPageRow, requireFold, setModelVersion, databaseNow } from "../store/repositories/folds.ts";
import { ignoreOpenPicks, openCombinations } from "../store/repositories/picks.ts";
import { baselineKey, designOf, pageView, servable, settingsFrom, settingsOf, type PageView } from "./definition.ts";
import { foldInTransaction, type FoldContext, type FoldResult } from "./folds.ts";
import { newPublicKey } from "./auth.ts";
import { asServiceError } from "./errors.ts";
import { loadState } from "./modelState.ts";
import { checkIfMatch, pageVersion } from "./pageVersion.ts";
import { withRetry } from "../store/retry.ts";

export interface LevelInput { name: string; value?: string }
export interface FactorInput { name: string; levels: LevelInput[] }
export interface PageInput {
  key: string; name: string; factors: FactorInput[]; exclude?: Record<string, string>[];
  segmentBy?: string[]; interactions?: [string, string][]; settings?: Record<string, unknown>;
}
/** A create body while it is being written: what POST /definitions/check accepts. */
export type PageDraft = Omit<PageInput, "key" | "name"> & Partial<Pick<PageInput, "key" | "name">>;
export interface DefinitionSummary {
  factors: { name: string; levels: string[] }[];
  combinations: { total: number; allowed: number; excluded: number };
  dimension: number;
}
export interface PagePatch {
  name?: string; settings?: Record<string, unknown>; status?: "active" | "paused" | "frozen";
  addFactors?: FactorInput[]; removeFactors?: string[];
  addLevels?: { factor: string; name: string; value?: string }[];
  removeLevels?: { factor: string; level: string }[];
  levelValues?: { factor: string; level: string; value: string }[];
}
export interface Learned {
  action: "unchanged" | "kept" | "remapped"; message: string;
  keptFeatures: number; droppedFeatures: string[]; addedFeatures: string[]; droppedOpenPicks: number;
  /** The fold the edit asked for was still running when the answer was sent (EDIT_FOLD_WAIT_MS). */
  foldPending: boolean;
}

/**
 * How long an edit's answer waits for the fold it asked for. Most pages fold in well under a
 * second; at the dimension limit with many segments a fold takes minutes, and the edit is already
 * committed, so the answer says the fold is still running instead of holding the request.
 */
export const EDIT_FOLD_WAIT_MS = 2000;

/** What page edits need from the fold loop: the context page creation folds with, and a refit. */
export interface EditFolds {
  context: FoldContext;
  refit(pageId: number): Promise<FoldResult>;
}

const SEGMENT_NAME = /^[A-Za-z0-9_.-]{1,64}$/;

function checkSegmentBy(segmentBy: string[]): void {
  segmentBy.forEach((name, i) => {
    if (!SEGMENT_NAME.test(name)) throw fail("INVALID_DEFINITION", { reason: `segmentBy entries are context key names (letters, digits, _ . -), got "${name}"` }, `segmentBy.${i}`);
    if (segmentBy.indexOf(name) !== i) throw fail("INVALID_DEFINITION", { reason: `context key "${name}" is listed twice` }, `segmentBy.${i}`);
  });
}

const storedFactors = (factors: FactorInput[]): StoredFactor[] =>
  factors.map((f) => ({ name: f.name, levels: f.levels.map((l) => ({ name: l.name, value: l.value ?? "" })) }));

/** Everything create() checks before touching the database (settings, segment keys, design). */
function validatePage(input: PageDraft) {
  const settings = settingsFrom(input.settings ?? {});
  const segmentBy = input.segmentBy ?? [];
  checkSegmentBy(segmentBy);
  const factors = storedFactors(input.factors);
  const definition = { factors, exclude: input.exclude ?? [], interactions: input.interactions ?? null };
  return { settings, segmentBy, factors, definition, design: designOf(definition) };
}

export class PageService extends EventEmitter {
  constructor(private readonly pool: Pool, private readonly folds: EditFolds) {
    super();
  }

  /**
   * Validates a create body without saving it — the same checks, in the same order, as create()
   * (key and name may be left out while the user is still typing) — and says what it would build.
   */
  async checkDefinition(input: PageDraft): Promise<DefinitionSummary> {
    const { design } = validatePage(input);
    if (input.key !== undefined) {
      try {
        if (await loadPage(this.pool, input.key)) throw fail("PAGE_EXISTS", { page: input.key }, "key");
      } catch (error) {
        throw asServiceError(error);
      }
    }
    return {
      factors: design.factors.map((f) => ({ name: f.name, levels: f.levels.slice() })),
      combinations: { total: design.totalCount, allowed: design.allowedCount, excluded: design.excludedCount },
      dimension: design.dimension,
    };
  }

  async create(input: PageInput): Promise<PageView> {
    const { settings, segmentBy, factors, definition, design } = validatePage(input);
    try {
      await inTransaction(this.pool, async (client) => {
        if (await loadPage(client, input.key)) throw fail("PAGE_EXISTS", { page: input.key }, "key");
        const id = await insertPage(client, {
          key: input.key, name: input.name, publicKey: newPublicKey(), status: "active", segmentBy,
          interactions: definition.interactions, settings, baseline: baselineKey(design), factors, exclude: definition.exclude,
        });
        await foldInTransaction(client, id, this.folds.context);
      });
    } catch (error) {
      if ((error as { code?: string }).code === "23505") throw fail("PAGE_EXISTS", { page: input.key }, "key");
      throw asServiceError(error);
    }
    return this.get(input.key);
  }

  async list(): Promise<PageView[]> {
    try {
      const pages = await listPages(this.pool);
      const totals = await pageTotals(this.pool, pages.map((p) => p.id));
      return pages.map((p) => pageView(p, designOf(p), totals.get(p.id)));
    } catch (error) {
      throw asServiceError(error);
    }
  }

  async get(key: string): Promise<PageView> {
    return (await this.read(key)).page;
  }

  /** The page and its version (the ETag a PATCH may send back in If-Match). */
  async read(key: string): Promise<{ page: PageView; version: string }> {
    try {
      const page = await this.stored(key);
      const totals = await pageTotals(this.pool, [page.id]);
      return { page: pageView(page, designOf(page), totals.get(page.id)), version: pageVersion(page) };
    } catch (error) {
      throw asServiceError(error);
    }
  }

  async stored(key: string): Promise<StoredPage> {
    const page = await loadPage(this.pool, key);
    if (!page) throw fail("UNKNOWN_PAGE", { page: key }, "page");
    return page;
  }

  /**
   * Applies an edit. The page is read inside the transaction, after the page's lock is taken, so
   * an edit committed meanwhile by someone else is built upon, never overwritten; `ifMatch` (the
   * If-Match header) refuses the edit with PAGE_CHANGED when the page is no longer the one the
   * client read.
   */
  async patch(key: string, patch: PagePatch, ifMatch?: string): Promise<{ page: PageView; learned: Learned; version: string }> {
    try {
      const { learned, pageId, refold, redesigned } = await withRetry(() => inTransaction(this.pool, async (client) => {
        const found = await loadPage(client, key);
        if (!found) throw fail("UNKNOWN_PAGE", { page: key }, "page");
        await foldLock(client, found.id);
        // read again under the lock: this statement's snapshot sees every edit committed before it
        const page = (await loadPage(client, key))!;
        checkIfMatch(page, ifMatch);
        const plan = planEdit(page, patch);
        const fields: Parameters<typeof updatePageFields>[2] = {};
        if (patch.name !== undefined) fields.name = patch.name;
        if (patch.status !== undefined) fields.status = patch.status;
        if (plan.settingsChanged) fields.settings = plan.settings;
        if (plan.newDesign) {
          fields.baseline = baselineKey(plan.newDesign);
          fields.interactions = plan.interactions;
        }
        if (Object.keys(fields).length > 0 || plan.newDesign || patch.levelValues?.length) await updatePageFields(client, page.id, fields);
        let result: Learned = plan.learned;
        if (plan.newDesign) {
          await replaceDefinition(client, page.id, plan.factors, plan.exclude);
          const row = (await foldPageRow(client, page.id, true))!;
          const snapshot = row.modelVersion > 0 ? await loadSnapshot(client, page.id, row.modelVersion) : null;
          const oldDesign = designOf(page);
          const state = await loadState(client, page.id, snapshot, oldDesign, plan.settings);
          const remapped = remapState(state, oldDesign, plan.newDesign, plan.settings);
          await insertSnapshot(client, page.id, row.modelVersion + 1, serializeState(remapped), {}, await databaseNow(client));
          // No allocations at this version until the fold below: serving shows the baseline meanwhile.
          await setModelVersion(client, page.id, row.modelVersion + 1, null);
          const stale = (await openCombinations(client, page.id)).filter((c) => !servable(plan.newDesign!, c));
          result = { ...result, droppedOpenPicks: await ignoreOpenPicks(client, page.id, stale) };
          result.message += result.droppedOpenPicks > 0
            ? ` ${result.droppedOpenPicks} open picks showed combinations that no longer exist; they will not be folded.`
            : "";
        } else {
          for (const v of patch.levelValues ?? []) await updateLevelValue(client, page.id, v.factor, v.level, v.value);
        }
        // Allocations are rebuilt now (not at the next scheduled fold), after this commit.
        const refold = plan.newDesign !== null || plan.settingsChanged || patch.status !== undefined;
        if (refold) await requireFold(client, page.id);
        return { learned: result, pageId: page.id, refold, redesigned: plan.newDesign !== null };
      }));
      this.emit("changed", key);
      if (refold && !(await this.foldAfterEdit(pageId))) {
        learned.foldPending = true;
        learned.message += ` The model is still being refitted to this edit in the background; until it is, visitors see ${redesigned ? "the baseline" : "the previous allocations"}.`;
      }
      const { page, version } = await this.read(key);
      return { page, learned, version };
    } catch (error) {
      throw asServiceError(error);
    }
  }

  /**
   * Folds the page after an edit and waits up to EDIT_FOLD_WAIT_MS for it; true when it is done.
   * A fold still running goes on in the background; one that fails or finds the page locked is
   * left to the fold loop, which folds a page an edit left unfolded at its next pass.
   */
  private async foldAfterEdit(pageId: number): Promise<boolean> {
    let timer: NodeJS.Timeout | undefined;
    const waited = new Promise<boolean>((resolve) => { timer = setTimeout(() => resolve(false), EDIT_FOLD_WAIT_MS); });
    const folded = this.folds.refit(pageId).then((r) => r.folded, () => false);
    try {
      return await Promise.race([folded, waited]);
    } finally {
      clearTimeout(timer);
    }
  }
}

interface EditPlan {
  factors: StoredFactor[]; exclude: Record<string, string>[]; interactions: [string, string][] | null;
  settings: ReturnType<typeof parseSettings>; settingsChanged: boolean; newDesign: Design | null; learned: Learned;
}

/** Validates a page edit completely before anything is written. */
function planEdit(page: StoredPage, patch: PagePatch): EditPlan {
  const factors: StoredFactor[] = page.factors.map((f) => ({ name: f.name, levels: f.levels.map((l) => ({ ...l })) }));
  let exclude = page.exclude.map((r) => ({ ...r }));
  let interactions = page.interactions;
  const known = () => factors.map((f) => f.name).join(", ");
  const factorNamed = (name: string, field: string) => {
    const factor = factors.find((f) => f.name === name);
    if (!factor) throw fail("UNKNOWN_FACTOR", { factor: name, known: known() }, field);
    return factor;
  };
  const levelNamed = (factor: StoredFactor, level: string, field: string) => {
    const found = factor.levels.find((l) => l.name === level);
    if (!found) throw fail("UNKNOWN_LEVEL", { level, factor: factor.name, known: factor.levels.map((l) => l.name).join(", ") }, field);
    return found;
  };
  patch.removeFactors?.forEach((name, i) => {
    factorNamed(name, `removeFactors.${i}`);
    factors.splice(factors.findIndex((f) => f.name === name), 1);
    // a rule or pair naming the factor can no longer mean what it meant: drop it
    exclude = exclude.filter((rule) => !(name in rule));
    if (interactions) interactions = interactions.filter(([a, b]) => a !== name && b !== name);
  });
  patch.addFactors?.forEach((f, i) => {
    if (factors.some((x) => x.name === f.name)) throw fail("INVALID_DEFINITION", { reason: `factor "${f.name}" already exists` }, `addFactors.${i}.name`);
    factors.push(...storedFactors([f]));
  });
  patch.removeLevels?.forEach((r, i) => {
    const factor = factorNamed(r.factor, `removeLevels.${i}.factor`);
    levelNamed(factor, r.level, `removeLevels.${i}.level`);
    factor.levels = factor.levels.filter((l) => l.name !== r.level);
    exclude = exclude.filter((rule) => rule[r.factor] !== r.level);
  });
  patch.addLevels?.forEach((l, i) => {
    const factor = factorNamed(l.factor, `addLevels.${i}.factor`);
    if (factor.levels.some((x) => x.name === l.name)) throw fail("INVALID_DEFINITION", { reason: `level "${l.name}" of "${l.factor}" already exists` }, `addLevels.${i}.name`);
    factor.levels.push({ name: l.name, value: l.value ?? "" });
  });
  patch.levelValues?.forEach((v, i) => {
    levelNamed(factorNamed(v.factor, `levelValues.${i}.factor`), v.level, `levelValues.${i}.level`).value = v.value;
  });
  const structural = Boolean(patch.removeFactors?.length || patch.addFactors?.length || patch.removeLevels?.length || patch.addLevels?.length);
  const oldSettings = settingsOf(page);
  const settings = patch.settings ? settingsFrom({ ...oldSettings, ...patch.settings }) : oldSettings;
  const settingsChanged = JSON.stringify(settings) !== JSON.stringify(oldSettings);
  const newDesign = structural ? designOf({ factors, exclude, interactions }) : null;
  return { factors, exclude, interactions, settings, settingsChanged, newDesign, learned: explainEdit(page, patch, settingsChanged, newDesign) };
}

/** What an edit does to what was learned, in words for the PATCH response. */
function explainEdit(page: StoredPage, patch: PagePatch, settingsChanged: boolean, newDesign: Design | null): Learned {
  const none: Learned = { action: "unchanged", message: "Nothing that affects learning changed.", keptFeatures: 0, droppedFeatures: [], addedFeatures: [], droppedOpenPicks: 0, foldPending: false };
  const oldDesign = designOf(page);
  const oldNames = oldDesign.featureNames;
  if (newDesign) {
    // The model's own mapping decides what survives (a changed first level re-bases that factor's
    // features, so equal names are not enough).
    const mapping = featureMapping(oldDesign, newDesign);
    const kept = oldNames.filter((_, i) => mapping[i] >= 0);
    const dropped = oldNames.filter((_, i) => mapping[i] < 0);
    const reached = new Set(Array.from(mapping).filter((j) => j >= 0));
    const added = newDesign.featureNames.filter((_, j) => !reached.has(j));
    return {
      action: "remapped", keptFeatures: kept.length, droppedFeatures: dropped, addedFeatures: added, droppedOpenPicks: 0, foldPending: false,
      // The model refits from its visitor counts (re-keyed by the engine's remapState).
      message: `The model refits on the new design from the visitors seen so far: ${kept.length} coefficients carry over` +
        (dropped.length ? `, ${dropped.length} are re-estimated or gone (${dropped.join(", ")}); visitors who saw a removed level no longer count` : "") +
        (added.length ? `, ${added.length} new ones start from the prior (${added.join(", ")}); visitors from before a new factor count as its first level` : "") + ".",
    };
  }
  const parts: string[] = [];
  if (patch.status === "paused" && page.status !== "paused") parts.push("Paused: visitors now get the baseline and nothing is learned until you resume; everything learned so far is kept.");
  if (patch.status === "frozen" && page.status !== "frozen") parts.push("Frozen: each segment's visitors now get its leader with no exploration; outcomes are still folded and everything learned is kept.");
  if (patch.status === "active" && page.status !== "active") parts.push("Resumed: serving from the learned allocations again; nothing learned was lost.");
  if (settingsChanged) parts.push("Settings changed: everything learned is kept and the allocations are rebuilt with the new settings.");
  return parts.length === 0 ? { ...none, keptFeatures: oldNames.length } : { ...none, action: "kept", keptFeatures: oldNames.length, message: parts.join(" ") };
}

