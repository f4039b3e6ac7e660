/**
 * The migrated schema matches what the generated Prisma client expects: every model is written
 * with every field set and read back unchanged, on every database target, and the database holds
 * exactly the tables and columns the client maps to. (Prisma's own schema diff cannot check this
 * here: through the pg adapter its introspection fails on PostgreSQL's `name` type.)
 *
 * Boundary values are PostgreSQL's documented ranges (docs, "Numeric Types": integer is
 * -2147483648..+2147483647; double precision is IEEE 754 binary64), and timestamptz(3) keeps
 * milliseconds, the precision of a JS Date.
 */
import { randomUUID } from "node:crypto";
import { afterAll, beforeAll, expect, it } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { Prisma } from "../../src/store/generated/client.ts";
import type { Database } from "../../src/store/database.ts";
import { MIGRATION_TABLE } from "../../src/store/migrator.ts";

const INT4_MAX = 2147483647;
const INT4_MIN = -2147483648;
const when = (iso: string) => new Date(iso);

/** Fields the database fills (autoincrement ids, @updatedAt) may be left out of the inputs. */
const GENERATED = ["id", "updatedAt"];

type Row = Record<string, unknown>;
interface Fixture {
  /** every scalar field except generated ones, with a non-default value */
  input(ids: Record<string, Row>): Row;
  create(db: Database, data: Row): Promise<Row>;
  read(db: Database, row: Row): Promise<Row>;
}

const byId = (delegate: string): Pick<Fixture, "create" | "read"> => ({
  create: (db, data) => (db.prisma as any)[delegate].create({ data }),
  read: (db, row) => (db.prisma as any)[delegate].findUniqueOrThrow({ where: { id: row.id } }),
});

/** In dependency order; one entry per model of the generated client (checked below). */
const fixtures: Record<Prisma.ModelName, Fixture> = {
  Page: {
    ...byId("page"),
    input: () => ({
      key: "spring-sale",
      name: "Spring sale — “quotes”, apostrophe's and ünïcödé",
      publicKey: "pk_" + randomUUID(),
      status: "frozen",
      segmentBy: ["source", "campaign"],
      interactions: [["headline", "hero"]],
      settings: { attributionWindowHours: 48, halfLifeDays: null, nested: { list: [1, 2.5, "x"] } },
      baseline: "headline=plain|hero=photo",
      modelVersion: INT4_MAX,
      lastFoldAt: when("2026-03-01T12:34:56.789Z"),
      createdAt: when("2026-02-28T23:59:59.999Z"),
    }),
  },
  Factor: { ...byId("factor"), input: (ids) => ({ pageId: ids.Page.id, name: "headline", position: 3 }) },
  Level: { ...byId("level"), input: (ids) => ({ factorId: ids.Factor.id, name: "question", value: '{"text":"Why wait?"}', position: 1 }) },
  ExclusionRule: { ...byId("exclusionRule"), input: (ids) => ({ pageId: ids.Page.id, rule: { hero: "video", layout: "split" } }) },
  Segment: {
    ...byId("segment"),
    input: (ids) => ({ pageId: ids.Page.id, key: "source=search|campaign=spring", context: { source: "search", campaign: "spring" }, createdAt: when("2026-03-02T00:00:00.001Z") }),
  },
  Pick: {
    create: (db, data) => db.prisma.pick.create({ data: data as any }),
    read: (db, row) => db.prisma.pick.findUniqueOrThrow({ where: { id: row.id as string } }),
    input: (ids) => ({
      id: randomUUID(),
      pageId: ids.Page.id,
      visitor: "visitor-1",
      segmentId: ids.Segment.id,
      combination: "headline=question|hero=photo",
      propensity: 0.0625,
      modelVersion: INT4_MIN,
      createdAt: when("2026-03-03T10:00:00.000Z"),
      expiresAt: when("2026-04-02T10:00:00.000Z"),
      windowEndsAt: when("2026-03-04T10:00:00.000Z"),
      convertedAt: when("2026-03-03T11:22:33.444Z"),
      state: "folded",
      foldedVersion: 7,
      conversionFoldedVersion: INT4_MAX,
      predictedRate: 0.03125,
    }),
  },
  Assignment: {
    create: (db, data) => db.prisma.assignment.create({ data: data as any }),
    read: (db, row) =>
      db.prisma.assignment.findUniqueOrThrow({ where: { pageId_visitor: { pageId: row.pageId as number, visitor: row.visitor as string } } }),
    input: (ids) => ({ pageId: ids.Page.id, visitor: "visitor-1", pickId: ids.Pick.id, expiresAt: when("2026-04-02T10:00:00.000Z") }),
  },
  Outcome: {
    ...byId("outcome"),
    input: (ids) => ({ pageId: ids.Page.id, pickId: ids.Pick.id, event: "order-1001", value: 1234.5, createdAt: when("2026-03-03T11:22:33.444Z") }),
  },
  PosteriorSnapshot: {
    ...byId("posteriorSnapshot"),
    input: (ids) => ({
      pageId: ids.Page.id,
      version: 7,
      state: { segments: { "*": { mean: [-3, 0.25, -1e-6], precision: [[4, 0.5], [0.5, 16]] } } },
      summary: { "*": { status: "exploring", leader: { probabilityBest: 0.5 } } },
      createdAt: when("2026-03-03T12:00:00.000Z"),
    }),
  },
  AllocationRecord: {
    ...byId("allocationRecord"),
    input: (ids) => ({ pageId: ids.Page.id, version: 7, segment: "*", allocation: { weights: { "headline=question|hero=photo": 1 } }, createdAt: when("2026-03-03T12:00:00.000Z") }),
  },
  RetiredCombination: {
    ...byId("retiredCombination"),
    input: (ids) => ({
      pageId: ids.Page.id,
      segment: "source=search|campaign=spring",
      combination: "headline=plain|hero=photo",
      reason: "dominated",
      figures: { probabilityBest: 0.0004, upper: 0.021, leader: "headline=question|hero=photo", leaderLower: 0.03, folds: 3 },
      retiredAt: when("2026-03-05T00:00:00.000Z"),
      reinstatedAt: when("2026-03-09T00:00:00.000Z"),
    }),
  },
  ApiKey: {
    ...byId("apiKey"),
    input: (ids) => ({ pageId: ids.Page.id, scope: "page", hash: "ab".repeat(32), prefix: "fw_ab12", createdAt: when("2026-03-01T00:00:00.000Z") }),
  },
  FoldLog: {
    ...byId("foldLog"),
    input: (ids) => ({ pageId: ids.Page.id, version: 7, picks: 12345, millis: 12.375, createdAt: when("2026-03-03T12:00:00.000Z") }),
  },
};

/** Prisma field name → column name, by the schema's convention (@map to snake_case). */
const column = (field: string) => field.replace(/[A-Z]/g, (c) => "_" + c.toLowerCase());

forEachDatabase("schema", (open) => {
  let db: Database;
  const written: Record<string, Row> = {};
  const readBack: Record<string, Row> = {};

  beforeAll(async () => {
    db = await open();
  });
  afterAll(async () => {
    await db?.close();
  });

  it("has a write-and-read fixture for every model of the generated client", () => {
    expect(Object.keys(fixtures).sort()).toEqual(Object.values(Prisma.ModelName).sort());
  });

  it("writes every model with every field set and reads each back unchanged", async () => {
    for (const [model, fixture] of Object.entries(fixtures)) {
      const input = fixture.input(written);
      const created = await fixture.create(db, input);
      const row = await fixture.read(db, created);
      // the fixture sets every scalar field the client knows, except the generated ones
      const expectedFields = Object.keys(row).filter((f) => !GENERATED.includes(f) || f in input);
      expect(expectedFields.sort(), model).toEqual(Object.keys(input).sort());
      expect(row, model).toEqual({ ...created, ...input });
      written[model] = created;
      readBack[model] = row;
    }
    expect(readBack.Page.modelVersion).toBe(INT4_MAX);
    expect(readBack.Pick.modelVersion).toBe(INT4_MIN);
  });

  it("keeps Float and Json numbers to 15 significant digits through Prisma, and exactly through pg", async () => {
    // Prisma 6.19 over the pg adapter rounds the last digit of a binary64 it WRITES, in Float and
    // in Json fields alike (known: prisma/orm#22249, #11096); what it reads is exact. Writers that
    // need every bit (model state that is folded again) write with pg: JSON.stringify is exact.
    const values = [0.1 + 0.2, 1 / 3, Math.PI / 1e6, 1 / 97];
    const relative = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);
    const page = await db.prisma.page.create({ data: { key: "floats", name: "Floats", publicKey: "pk_floats", settings: { values }, baseline: "a=b" } });
    const settings = (await db.prisma.page.findUniqueOrThrow({ where: { id: page.id } })).settings as { values: number[] };
    values.forEach((v, i) => expect(relative(settings.values[i], v)).toBeLessThan(1e-15));
    await db.pool.query("UPDATE page SET settings = $1 WHERE id = $2", [JSON.stringify({ values }), page.id]);
    expect((await db.prisma.page.findUniqueOrThrow({ where: { id: page.id } })).settings).toEqual({ values });
    for (const [version, millis] of values.entries()) {
      const viaPrisma = await db.prisma.foldLog.create({ data: { pageId: page.id, version, picks: 0, millis } });
      const stored = await db.prisma.foldLog.findUniqueOrThrow({ where: { id: viaPrisma.id } });
      expect(relative(stored.millis, millis)).toBeLessThan(1e-15);
      const viaPg = await db.pool.query<{ id: number }>(
        "INSERT INTO fold_log (page_id, version, picks, millis) VALUES ($1, $2, 0, $3) RETURNING id",
        [page.id, version + 100, millis],
      );
      expect((await db.prisma.foldLog.findUniqueOrThrow({ where: { id: viaPg.rows[0].id } })).millis).toBe(millis);
    }
  });

  it("fills the database defaults when optional fields are left out", async () => {
    const before = (await db.pool.query<{ now: Date }>("SELECT now() AS now")).rows[0].now;
    const page = await db.prisma.page.create({ data: { key: "minimal", name: "Minimal", publicKey: "pk_minimal", settings: {}, baseline: "a=b" } });
    expect(page).toMatchObject({ status: "active", modelVersion: 0, lastFoldAt: null, interactions: null, segmentBy: [] });
    expect(page.createdAt.getTime()).toBeGreaterThanOrEqual(before.getTime() - 1);
    const factor = await db.prisma.factor.create({ data: { pageId: page.id, name: "hero", position: 0 } });
    const level = await db.prisma.level.create({ data: { factorId: factor.id, name: "photo", position: 0 } });
    expect(level.value).toBe("");
    const pick = await db.prisma.pick.create({
      data: { id: randomUUID(), pageId: page.id, visitor: "v", combination: "a=b", propensity: 1, modelVersion: 0, expiresAt: new Date(), windowEndsAt: new Date() },
    });
    expect(pick).toMatchObject({ segmentId: null, convertedAt: null, state: "open", foldedVersion: null });
    const outcome = await db.prisma.outcome.create({ data: { pageId: page.id, pickId: pick.id, event: "e" } });
    expect(outcome.value).toBeNull();
    const admin = await db.prisma.apiKey.create({ data: { scope: "admin", hash: "cd".repeat(32), prefix: "fw_cd" } });
    expect(admin.pageId).toBeNull();
    // a raw insert (as the server's batched writers do) gets updated_at from the database default
    await db.pool.query("INSERT INTO page (key, name, public_key, settings, baseline) VALUES ('raw', 'Raw', 'pk_raw', '{}', 'a=b')");
    const raw = await db.prisma.page.findUniqueOrThrow({ where: { key: "raw" } });
    expect(raw.updatedAt).toBeInstanceOf(Date);
  });

  it("holds exactly the tables and columns the client maps to", async () => {
    const tables = await db.pool.query<{ table_name: string; column_name: string }>(
      "SELECT table_name, column_name FROM information_schema.columns WHERE table_schema = current_schema() ORDER BY table_name, column_name",
    );
    const actual: Record<string, string[]> = {};
    for (const { table_name, column_name } of tables.rows) (actual[table_name] ??= []).push(column_name);
    delete actual[MIGRATION_TABLE];
    const expected: Record<string, string[]> = {};
    for (const [model, row] of Object.entries(readBack)) expected[column(model).slice(1)] = Object.keys(row).map(column).sort();
    expect(actual).toEqual(expected);
  });

  it("enforces the uniqueness rules the server relies on", async () => {
    const { Page, Pick } = written;
    const duplicate = { code: "P2002" };
    await expect(db.prisma.outcome.create({ data: { pageId: Page.id as number, pickId: Pick.id as string, event: "order-1001" } })).rejects.toMatchObject(duplicate);
    await expect(db.prisma.assignment.create({ data: { pageId: Page.id as number, visitor: "visitor-1", pickId: randomUUID(), expiresAt: new Date() } })).rejects.toMatchObject(duplicate);
    await expect(db.prisma.page.create({ data: { key: "spring-sale", name: "again", publicKey: "pk_other", settings: {}, baseline: "a=b" } })).rejects.toMatchObject(duplicate);
    await expect(db.prisma.posteriorSnapshot.create({ data: { pageId: Page.id as number, version: 7, state: {}, summary: {} } })).rejects.toMatchObject(duplicate);
  });

  it("deleting a page removes everything that belongs to it", async () => {
    await db.prisma.page.delete({ where: { id: written.Page.id as number } });
    const pageId = written.Page.id as number;
    const left = await Promise.all([
      db.prisma.factor.count({ where: { pageId } }),
      db.prisma.level.count({ where: { factorId: written.Factor.id as number } }),
      db.prisma.exclusionRule.count({ where: { pageId } }),
      db.prisma.segment.count({ where: { pageId } }),
      db.prisma.pick.count({ where: { pageId } }),
      db.prisma.assignment.count({ where: { pageId } }),
      db.prisma.outcome.count({ where: { pageId } }),
      db.prisma.posteriorSnapshot.count({ where: { pageId } }),
      db.prisma.allocationRecord.count({ where: { pageId } }),
      db.prisma.retiredCombination.count({ where: { pageId } }),
      db.prisma.apiKey.count({ where: { pageId } }),
      db.prisma.foldLog.count({ where: { pageId } }),
    ]);
    expect(left).toEqual(new Array(12).fill(0));
  });
});
