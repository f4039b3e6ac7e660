/**
 * `facetwise export <page>`: prints the chosen combination per segment, with each level's value,
 * as JSON or RFC 4180 CSV — the same export as GET /api/v1/pages/:key/export.
 */
import { parseArgs } from "node:util";
import { fail } from "../errors.ts";
import { DEFAULT_DATA_DIR, openDatabase } from "../store/database.ts";
import { PageService } from "../service/pages.ts";
import { FoldLoop } from "../service/folds.ts";
import { ReportService } from "../service/reports.ts";
import { ExportService } from "../service/exports.ts";

export const summary = "print a page's chosen combination per segment (JSON or CSV)";

export const help = `Usage: facetwise export <page> [--format json|csv] [--data DIR]

Prints, per segment and pooled, the chosen combination (the leader, or the baseline before the
first fold) with each level's value. The database is DATABASE_URL when set, otherwise the
embedded database in the data folder (stop a running server on that folder first).

Options:
  --format F   json (default) or csv (RFC 4180)
  --data DIR   data folder of the embedded database (default ${DEFAULT_DATA_DIR})
  --help       show this help`;

export async function run(argv: string[]): Promise<number> {
  let parsed: { values: { format?: string; data?: string }; positionals: string[] };
  try {
    parsed = parseArgs({ args: argv, strict: true, allowPositionals: true, options: { format: { type: "string" }, data: { type: "string" } } });
  } catch (error) {
    throw fail("INVALID_OPTION", { option: "for export", reason: `${(error as Error).message}; see facetwise export --help` });
  }
  const { values, positionals } = parsed;
  const format = values.format ?? "json";
  if (format !== "json" && format !== "csv") throw fail("INVALID_OPTION", { option: "--format", reason: `"${format}" is not json or csv` });
  if (positionals.length !== 1) throw fail("INVALID_OPTION", { option: "<page>", reason: "give exactly one page key; see facetwise export --help" });
  const db = await openDatabase({ url: process.env.DATABASE_URL || undefined, dataDir: values.data, migrate: false });
  try {
    // exporting never folds; the fold loop is only a constructor argument (never started, no thread)
    const pages = new PageService(db.pool, new FoldLoop(db.pool, false));
    const exports = new ExportService(pages, new ReportService(db.pool, pages));
    const key = positionals[0];
    process.stdout.write(format === "csv" ? await exports.csv(key) : JSON.stringify(await exports.json(key), null, 2) + "\n");
    return 0;
  } finally {
    await db.close();
  }
}
