/**
 * Reading a page's model state from its newest snapshot. Version-2 snapshots (counts) are read as
 * they are; a version-1 snapshot (accumulated sites, written before folds refitted from counts) is
 * rebuilt from the stored picks: every past fold's trials and conversions (by the version that
 * folded them) at the time of that fold (fold_log), so nothing learned is lost on upgrade
 * (src/model/upgradeState.ts). The rebuilt state is stored with the next fold.
 */
import { deserializeState, initialState, isLegacyState, upgradeState } from "../model/index.ts";
import type { Design, ModelState, PageSettings } from "../model/index.ts";
import { foldedRows, foldLogs, type Snapshot } from "../store/repositories/folds.ts";
import type { Queryable } from "../store/repositories/sql.ts";

export async function loadState(q: Queryable, pageId: number, snapshot: Snapshot | null, design: Design, settings: PageSettings): Promise<ModelState> {
  if (!snapshot) return initialState(design, settings);
  if (!isLegacyState(snapshot.state)) return deserializeState(snapshot.state, design);
  const rows = await foldedRows(q, pageId);
  const logs = await foldLogs(q, pageId);
  const byVersion = new Map(logs.map((log) => [log.version, { at: log.at.getTime(), rows: [] as typeof rows }]));
  for (const row of rows) byVersion.get(row.version)?.rows.push(row);
  return upgradeState(snapshot.state, design, settings, [...byVersion.values()]);
}
