/**
 * All services of one server process over one database, wired together: the write batcher, the
 * serving cache (kept current by fold and edit events, polling, and LISTEN on PostgreSQL), the
 * fold loop, and the page, pick, outcome, report, export, auth and demo services.
 */
import { defaultSettings, type PageSettings } from "../model/index.ts";
import type { Database } from "../store/database.ts";
import { readiness } from "../store/migrator.ts";
import { WriteBatcher } from "./writeBatcher.ts";
import { ServingCache } from "./serving.ts";
import { FoldLoop } from "./folds.ts";
import { PageService } from "./pages.ts";
import { PickService } from "./picks.ts";
import { OutcomeService } from "./outcomes.ts";
import { ReportService } from "./reports.ts";
import { ExportService } from "./exports.ts";
import { AuthService } from "./auth.ts";
import { DemoTraffic, seedDemo } from "./demo.ts";
import { DEMO_PAGE_KEY } from "./definition.ts";

export interface ServiceOptions {
  /** accepted as an admin token besides the stored one (FACETWISE_ADMIN_TOKEN) */
  adminToken?: string;
  /** run the fold loop in this process (default true) */
  foldLoop?: boolean;
  /** how often the fold loop looks for due pages, ms (default 1000) */
  foldTickMs?: number;
  /** how often serving polls model versions, ms (default 1000) */
  pollMs?: number;
}

export interface Services {
  db: Database;
  batcher: WriteBatcher;
  serving: ServingCache;
  folds: FoldLoop;
  pages: PageService;
  picks: PickService;
  outcomes: OutcomeService;
  reports: ReportService;
  exports: ExportService;
  auth: AuthService;
  demo: DemoTraffic;
  demoPageKey: string;
  /** The engine's default page settings, for clients that show them (the console's placeholders). */
  defaultSettings: PageSettings;
  seedDemo(): Promise<boolean>;
  ready(): Promise<{ ready: boolean; detail: string }>;
  close(): Promise<void>;
}

export async function createServices(db: Database, options: ServiceOptions = {}): Promise<Services> {
  const notify = db.kind === "postgres";
  const batcher = new WriteBatcher(db.pool);
  const serving = new ServingCache(db.pool);
  const folds = new FoldLoop(db.pool, notify);
  const pages = new PageService(db.pool, folds);
  const picks = new PickService(db.pool, serving, batcher);
  const outcomes = new OutcomeService(serving, batcher);
  const reports = new ReportService(db.pool, pages);
  const exports = new ExportService(pages, reports);
  const auth = new AuthService(db.pool, options.adminToken);
  const demo = new DemoTraffic(picks, outcomes, pages);
  folds.on("model", (key: string) => serving.invalidate(key));
  pages.on("changed", (key: string) => serving.invalidate(key));
  serving.startPolling(options.pollMs ?? 1000);
  if (notify) await serving.listen(db.url).catch((error: unknown) => console.warn(`facetwise: LISTEN unavailable, polling only: ${(error as Error).message}`));
  if (options.foldLoop !== false) folds.start(options.foldTickMs ?? 1000);

  return {
    db, batcher, serving, folds, pages, picks, outcomes, reports, exports, auth, demo, demoPageKey: DEMO_PAGE_KEY, defaultSettings,
    seedDemo: () => seedDemo(db.pool, pages),
    ready: () => readiness(db.pool),
    async close() {
      await demo.stop();
      await folds.stop();
      await batcher.close();
      await serving.stop();
    },
  };
}
