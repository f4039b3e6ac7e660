/**
 * `facetwise migrate`: applies pending migrations to DATABASE_URL or to the embedded database in
 * --data, reports what it did, and `--status` lists without changing anything.
 */
import { afterEach, beforeEach, expect, it, vi } from "vitest";
import { forEachDatabase, type DatabaseTarget } from "../support/databases.ts";
import { run } from "../../src/commands/migrate.ts";
import { loadMigrations } from "../../src/store/migrator.ts";

const names = loadMigrations().map((m) => m.name);
let printed: string[] = [];
const saved = process.env.DATABASE_URL;

beforeEach(() => {
  printed = [];
  vi.spyOn(console, "log").mockImplementation((line: unknown) => void printed.push(String(line)));
  delete process.env.DATABASE_URL;
});
afterEach(() => {
  vi.restoreAllMocks();
  if (saved === undefined) delete process.env.DATABASE_URL;
  else process.env.DATABASE_URL = saved;
});

/** The command's arguments and environment for a storage of this target. */
function pointAt(target: DatabaseTarget, location: string): string[] {
  if (target.kind === "postgres") {
    process.env.DATABASE_URL = location;
    return [];
  }
  return ["--data", location];
}

forEachDatabase("facetwise migrate", (_open, target) => {
  it("lists pending migrations, applies them, then reports nothing to do", async () => {
    const storage = await target.storage();
    try {
      const args = pointAt(target, storage.location);
      expect(await run([...args, "--status"])).toBe(0);
      expect(printed).toEqual(names.map((name) => `pending  ${name}`));

      printed = [];
      expect(await run(args)).toBe(0);
      expect(printed).toHaveLength(1);
      expect(printed[0]).toMatch(new RegExp(`applied ${names.length} migrations?: ${names.join(", ")}$`));

      printed = [];
      expect(await run(args)).toBe(0);
      expect(printed[0]).toMatch(/up to date, nothing to apply$/);

      printed = [];
      expect(await run([...args, "--status"])).toBe(0);
      expect(printed.map((line) => line.split(/\s+/).slice(0, 2).join(" "))).toEqual(names.map((name) => `applied ${name}`));
    } finally {
      await storage.remove();
    }
  });
});

it("rejects an unknown option with a pointer to --help", async () => {
  await expect(run(["--frobnicate"])).rejects.toThrow(/Unknown option '--frobnicate'.*facetwise migrate --help/);
});
