/**
 * `facetwise migrate`: applies pending migrations to DATABASE_URL, or to the embedded database in
 * the data folder when DATABASE_URL is unset, and prints what it did. `--status` only reports.
 */
import { parseArgs } from "node:util";
import { fail } from "../errors.ts";
import { DEFAULT_DATA_DIR, openDatabase } from "../store/database.ts";
import { migrate, migrationStatus } from "../store/migrator.ts";

export const summary = "apply pending database migrations (also done automatically on start)";

export const help = `Usage: facetwise migrate [--data DIR] [--status]

Applies the SQL migrations in prisma/migrations that the database does not have yet, in one
transaction under an advisory lock, and refuses to run if an applied migration was edited.

The database is DATABASE_URL when set, otherwise the embedded database in the data folder.

Options:
  --data DIR   data folder of the embedded database (default ${DEFAULT_DATA_DIR})
  --status     list applied and pending migrations without changing anything
  --help       show this help`;

export async function run(argv: string[]): Promise<number> {
  let values: { data?: string; status?: boolean };
  try {
    ({ values } = parseArgs({ args: argv, options: { data: { type: "string" }, status: { type: "boolean" } }, strict: true }));
  } catch (error) {
    throw fail("INVALID_OPTION", { option: "for migrate", reason: `${(error as Error).message}; see facetwise migrate --help` });
  }
  const db = await openDatabase({ url: process.env.DATABASE_URL || undefined, dataDir: values.data, migrate: false });
  try {
    const where = db.kind === "embedded" ? `embedded database in ${values.data ?? DEFAULT_DATA_DIR}` : "DATABASE_URL";
    if (values.status) {
      const status = await migrationStatus(db.pool);
      for (const row of status.applied) console.log(`applied  ${row.name}  ${row.appliedAt.toISOString()}`);
      for (const name of status.pending) console.log(`pending  ${name}`);
      for (const problem of status.problems) console.log(`problem  ${problem.message}`);
      return status.problems.length > 0 ? 1 : 0;
    }
    const applied = await migrate(db.pool);
    console.log(
      applied.length === 0
        ? `${where}: up to date, nothing to apply`
        : `${where}: applied ${applied.length} migration${applied.length === 1 ? "" : "s"}: ${applied.join(", ")}`,
    );
    return 0;
  } finally {
    await db.close();
  }
}
