/** The raw → normalised record shown in the report (src/service/contextLog.ts): common practice, no source. */
import { describe, expect, it } from "vitest";
import { ContextLog } from "../../src/service/contextLog.ts";

describe("ContextLog", () => {
  it("keeps recent distinct raw values per key, most recent first, with counts and what they became", () => {
    const log = new ContextLog();
    log.record("p", ["campaign"], { campaign: "Spring Sale" });
    log.record("p", ["campaign"], { campaign: "spring-sale " });
    log.record("p", ["campaign"], { campaign: "Spring Sale" });
    log.record("p", ["campaign"], {});
    expect(log.recent("p")).toEqual({
      campaign: [
        { raw: "", normalized: "(none)", seen: 1 },
        { raw: "Spring Sale", normalized: "spring-sale", seen: 2 },
        { raw: "spring-sale ", normalized: "spring-sale", seen: 1 },
      ],
    });
    expect(log.recent("other")).toEqual({});
  });

  it("holds at most ten raw values per key, forgetting the least recent", () => {
    const log = new ContextLog();
    for (let i = 0; i < 15; i++) log.record("p", ["source"], { source: `s${i}` });
    const kept = log.recent("p").source.map((v) => v.raw);
    expect(kept).toHaveLength(10);
    expect(kept[0]).toBe("s14");
    expect(kept).not.toContain("s4");
  });
});
