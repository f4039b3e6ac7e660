/**
 * Two admins editing one page (issue 11, item 5). Without a precondition both edits apply — each
 * is planned from the page as it stands inside the transaction, after the other committed — so
 * an acknowledged edit is never lost (before: a levelValues edit beside an addLevels edit both got
 * 200 and the value was gone, or one got 500 INVALID_MODEL_STATE). With If-Match (RFC 9110
 * §13.1.1) the second of two edits of the same version gets 412 PAGE_CHANGED and changes nothing.
 */
import { beforeAll, expect, it } from "vitest";
import { forEachDatabase } from "../support/databases.ts";
import { ADMIN_TOKEN, useHarness, testPage } from "../integration/harness.ts";

forEachDatabase("concurrent page edits", (open) => {
  const h = useHarness(open);
  beforeAll(async () => {
    expect((await h.admin("POST", "/pages", testPage("shared"))).status).toBe(201);
  });

  const patch = (body: unknown, ifMatch?: string) =>
    h.call("PATCH", "/api/v1/pages/shared", { body, headers: { authorization: `Bearer ${ADMIN_TOKEN}`, ...(ifMatch ? { "if-match": ifMatch } : {}) } });

  it("keeps both of two concurrent edits made without If-Match", async () => {
    for (let round = 0; round < 4; round++) {
      const [values, levels] = await Promise.all([
        patch({ levelValues: [{ factor: "title", level: "short", value: `value ${round}` }] }),
        patch({ addLevels: [{ factor: "photo", name: `extra${round}`, value: `/x${round}.jpg` }] }),
      ]);
      expect([values.status, levels.status]).toEqual([200, 200]);
      const page = (await h.admin("GET", "/pages/shared")).body;
      const title = page.factors.find((f: { name: string }) => f.name === "title");
      const photo = page.factors.find((f: { name: string }) => f.name === "photo");
      expect(title.levels.find((l: { name: string }) => l.name === "short").value).toBe(`value ${round}`);
      expect(photo.levels.map((l: { name: string }) => l.name)).toContain(`extra${round}`);
    }
  });

  it("applies only the first of two edits of one version when both send If-Match", async () => {
    const read = await h.admin("GET", "/pages/shared");
    const etag = read.headers.get("etag")!;
    expect(etag).toMatch(/^"[A-Za-z0-9_-]+"$/);
    const [a, b] = await Promise.all([
      patch({ name: "Renamed by A" }, etag),
      patch({ levelValues: [{ factor: "title", level: "long", value: "written by B" }] }, etag),
    ]);
    const statuses = [a.status, b.status].sort();
    expect(statuses).toEqual([200, 412]);
    const loser = a.status === 412 ? a : b;
    expect(loser.body.error.code).toBe("PAGE_CHANGED");
    expect(loser.body.error.message).toMatch(/changed since you read it/);
    const winner = a.status === 200 ? a : b;
    expect(winner.headers.get("etag")).not.toBe(etag);
    const after = await h.admin("GET", "/pages/shared");
    expect(after.headers.get("etag")).toBe(winner.headers.get("etag"));
    const longValue = after.body.factors[0].levels.find((l: { name: string }) => l.name === "long").value;
    // exactly the winner's edit is there, the loser's is not
    if (winner === a) {
      expect(after.body.name).toBe("Renamed by A");
      expect(longValue).not.toBe("written by B");
    } else {
      expect(after.body.name).not.toBe("Renamed by A");
      expect(longValue).toBe("written by B");
    }
    // the current tag, and "*", are accepted; a fold does not change the version
    const id = (await h.db.pool.query("SELECT id FROM page WHERE key = 'shared'")).rows[0].id as number;
    await h.server.services.folds.foldPage(id, true);
    const current = (await h.admin("GET", "/pages/shared")).headers.get("etag")!;
    expect(current).toBe(after.headers.get("etag"));
    expect((await patch({ name: "Again" }, current)).status).toBe(200);
    expect((await patch({ name: "Any" }, "*")).status).toBe(200);
  });
});
